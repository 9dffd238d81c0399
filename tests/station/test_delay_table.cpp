// Delay tables: homogeneous-medium delays against distance × n / c (definition), time
// derivatives against finite differences of the times themselves (Fermat's principle: the
// gradient of T with respect to the source is minus the slowness vector at the source), a
// batch that survives a bad row, and a source at one receiver that fails that channel alone.
#include <catch2/catch.hpp>

#include <cmath>
#include <sstream>

#include "core/constants.hpp"
#include "model/model_file.hpp"
#include "solver/closed_form_solver.hpp"
#include "station/delay_table.hpp"
#include "support/run_cli.hpp"
#include "support/straight_line_solver.hpp"

using namespace firnray;

namespace {
std::vector<Receiver> two_receivers() {
    std::vector<Receiver> receivers(2);
    receivers[0].name = "A";
    receivers[0].x_m = 0.0;
    receivers[0].z_m = -40.0;
    receivers[1].name = "B";
    receivers[1].x_m = 30.0;
    receivers[1].y_m = 20.0;
    receivers[1].z_m = -90.0;
    return receivers;
}
}  // namespace

TEST_CASE("delays in a homogeneous medium equal distance × n / c (definition)", "[station][delays]") {
    const double n = 1.78;
    ClosedFormSolver solver(test::homogeneous_model(n));
    const auto receivers = two_receivers();
    std::vector<DelaySource> sources(2);
    sources[0].position = {200.0, -50.0, -70.0};
    sources[1].position = {-80.0, 10.0, -300.0};
    const auto delays = compute_delays(solver, receivers, sources, DelayOptions{});
    for (std::size_t i = 0; i < sources.size(); ++i) {
        REQUIRE(delays[i].error.empty());
        for (std::size_t k = 0; k < receivers.size(); ++k) {
            const auto& s = sources[i].position;
            const auto& r = receivers[k];
            const double d = std::sqrt((s.x - r.x_m) * (s.x - r.x_m) + (s.y - r.y_m) * (s.y - r.y_m) + (s.z - r.z_m) * (s.z - r.z_m));
            const auto& paths = delays[i].receivers[k].paths;
            REQUIRE_FALSE(paths.empty());
            CHECK(paths.front().kind == PathKind::direct);
            CHECK(paths.front().time_s == Approx(n * d / speed_of_light).epsilon(1e-12));
        }
    }
}

TEST_CASE("time derivatives with respect to the source equal finite differences of the times (Fermat's principle)",
          "[station][delays]") {
    ClosedFormSolver solver(std::make_shared<const FirnModel>(default_model()));
    const auto receivers = two_receivers();
    const Point base{150.0, 40.0, -120.0};
    const double h = 1e-3;
    std::vector<DelaySource> sources(7);
    sources[0].position = base;
    for (int axis = 0; axis < 3; ++axis)
        for (int sign : {-1, 1}) {
            Point p = base;
            (axis == 0 ? p.x : axis == 1 ? p.y : p.z) += sign * h;
            sources[1 + 2 * axis + (sign > 0)].position = p;
        }
    const auto delays = compute_delays(solver, receivers, sources, DelayOptions{});
    for (std::size_t k = 0; k < receivers.size(); ++k) {
        const auto& at = delays[0].receivers[k];
        REQUIRE_FALSE(at.paths.empty());
        for (std::size_t p = 0; p < at.paths.size(); ++p) {
            const double fd[3] = {
                (delays[2].receivers[k].paths[p].time_s - delays[1].receivers[k].paths[p].time_s) / (2 * h),
                (delays[4].receivers[k].paths[p].time_s - delays[3].receivers[k].paths[p].time_s) / (2 * h),
                (delays[6].receivers[k].paths[p].time_s - delays[5].receivers[k].paths[p].time_s) / (2 * h)};
            INFO("receiver " << k << " path " << p << " kind " << to_string(at.paths[p].kind));
            CHECK(at.gradients[p].dx == Approx(fd[0]).margin(1e-14));
            CHECK(at.gradients[p].dy == Approx(fd[1]).margin(1e-14));
            CHECK(at.gradients[p].dz == Approx(fd[2]).margin(1e-14));
        }
    }
}

TEST_CASE("firnray delays: a bad source row gets an error row, the rest runs, exit code 7", "[cli][delays]") {
    const std::string dir = test::temp_folder("delays");
    const std::string sources = test::write_file(dir + "/sources.csv", "name,x_m,y_m,z_m\nnear,100,0,-50\nbroken,abc,0,-50\nfar,300,10,-150\n");
    const auto r = test::run_firnray({"delays", "--station", test::source_path("demo/station.toml"), "--sources", sources,
                                      "--reference", "B2", "--derivatives", "--quiet", "-o", dir + "/delays.csv"});
    CHECK(r.exit_code == 7);
    CHECK(r.err.find("1 of 3 sources failed") != std::string::npos);
    const std::string text = test::read_file(dir + "/delays.csv");
    CHECK(text.find("broken,3,") != std::string::npos);
    CHECK(text.find("sources.csv:3: key 'x_m'") != std::string::npos);
    CHECK(text.find("near,2,A1,1,") != std::string::npos);
    CHECK(text.find("far,4,C4,") != std::string::npos);
    // The reference channel differs from itself by zero.
    const auto at = text.find("near,2,B2,1,direct,");
    REQUIRE(at != std::string::npos);
    const std::string row = text.substr(at, text.find('\n', at) - at);
    std::vector<std::string> fields;
    std::stringstream in(row);
    for (std::string f; std::getline(in, f, ',');) fields.push_back(f);
    REQUIRE(fields.size() >= 8);
    CHECK(std::stod(fields[6]) == 0.0);  // minus_reference_same_kind_ns
    CHECK(std::stod(fields[7]) == 0.0);  // first_minus_reference_first_ns

    const auto unknown = test::run_firnray({"delays", "--station", test::source_path("demo/station.toml"), "--sources",
                                            sources, "--reference", "Z9"});
    CHECK(unknown.exit_code == 2);  // a wrong option value (issue 8)
    CHECK(unknown.err.find("no receiver named 'Z9'") != std::string::npos);
    const auto neither = test::run_firnray({"delays", "--station", test::source_path("demo/station.toml")});
    CHECK(neither.exit_code == 2);
}

TEST_CASE("delays: a source exactly at one receiver fails only that channel, the others are computed "
          "(homogeneous medium, distance × n / c by definition)",
          "[station][delays]") {
    const double n = 1.78;
    ClosedFormSolver solver(test::homogeneous_model(n));
    const auto receivers = two_receivers();
    std::vector<DelaySource> sources(1);
    sources[0].position = {receivers[0].x_m, receivers[0].y_m, receivers[0].z_m};  // at receiver A
    const auto delays = compute_delays(solver, receivers, sources, DelayOptions{});
    REQUIRE(delays.size() == 1);
    CHECK(delays[0].error.empty());
    REQUIRE(delays[0].receivers.size() == 2);
    CHECK(delays[0].failed_channels() == 1);
    const ReceiverArrivals& at_a = delays[0].receivers[0];
    CHECK(at_a.paths.empty());
    CHECK(at_a.error.find("receiver 'A'") != std::string::npos);
    const ReceiverArrivals& at_b = delays[0].receivers[1];
    CHECK(at_b.error.empty());
    REQUIRE_FALSE(at_b.paths.empty());
    const double d = std::sqrt(30.0 * 30.0 + 20.0 * 20.0 + 50.0 * 50.0);
    CHECK(at_b.paths.front().time_s == Approx(n * d / speed_of_light).epsilon(1e-12));
}

TEST_CASE("firnray delays: a source at one receiver's position fails that channel alone, exit code 7 with a count",
          "[cli][delays]") {
    const std::string dir = test::temp_folder("delays-channel");
    // A1 of the demo station is at x 0, y 0, 40 m deep.
    const std::string sources =
        test::write_file(dir + "/sources.csv", "name,x_m,y_m,z_m\nat-A1,0,0,-40\nnear,100,0,-50\n");
    const auto r = test::run_firnray({"delays", "--station", test::source_path("demo/station.toml"), "--sources", sources,
                                      "--quiet", "-o", dir + "/delays.csv"});
    CHECK(r.exit_code == 7);
    CHECK(r.err.find("1 of 40 channels failed") != std::string::npos);
    CHECK(r.err.find("sources failed") == std::string::npos);  // no source failed as a whole
    const std::string text = test::read_file(dir + "/delays.csv");
    CHECK(text.find("at-A1,2,A1,,,,,,,,,,receiver 'A1': ") != std::string::npos);  // path .. arrival, events empty
    CHECK(text.find("at-A1,2,A2,1,") != std::string::npos);  // the other channels are computed
    CHECK(text.find("near,3,A1,1,") != std::string::npos);
    // JSON: the same count and exit code, the failed channel with its error.
    const auto json = test::run_firnray({"delays", "--station", test::source_path("demo/station.toml"), "--sources",
                                         sources, "--format", "json", "--quiet"});
    CHECK(json.exit_code == 7);
    CHECK(json.err.find("1 of 40 channels failed") != std::string::npos);
    CHECK(json.out.find("\"error\": \"receiver 'A1': ") != std::string::npos);
}

TEST_CASE("delay sources are read a block at a time with the same result as the whole file", "[station][delays]") {
    const std::string dir = test::temp_folder("delay-sources");
    std::string text = "# sources\nname,x_m,z_m,y_m\n";
    for (int i = 0; i < 10; ++i) text += "s" + std::to_string(i) + "," + std::to_string(10 * i) + ",-50,0\n";
    text += "bad,abc,-50,0\n";
    const std::string path = test::write_file(dir + "/sources.csv", text);
    const auto whole = read_delay_sources(path);
    REQUIRE(whole.size() == 11);
    CHECK(whole[0].input_line == 3);
    CHECK(whole[10].error.find("sources.csv:13") != std::string::npos);
    DelaySourceReader reader(path);
    std::vector<DelaySource> block, joined;
    std::size_t blocks = 0;
    while (reader.read_block(block, 3)) {
        CHECK(block.size() <= 3);
        ++blocks;
        joined.insert(joined.end(), block.begin(), block.end());
    }
    CHECK(blocks == 4);
    REQUIRE(joined.size() == whole.size());
    for (std::size_t i = 0; i < whole.size(); ++i) {
        CHECK(joined[i].name == whole[i].name);
        CHECK(joined[i].input_line == whole[i].input_line);
        CHECK(joined[i].position.x == whole[i].position.x);
        CHECK(joined[i].error == whole[i].error);
    }
    // A header without sources is refused on the first read; a missing column at once.
    DelaySourceReader empty(test::write_file(dir + "/empty.csv", "x_m,z_m\n"));
    CHECK_THROWS_WITH(empty.read_block(block, 3), Catch::Contains("header but no sources"));
    CHECK_THROWS_WITH(DelaySourceReader(test::write_file(dir + "/nox.csv", "z_m\n-5\n")), Catch::Contains("x_m"));
}

TEST_CASE("firnray delays: the output is the same for 1 and 3 threads and across blocks of sources", "[cli][delays]") {
    const std::string dir = test::temp_folder("delays-threads");
    const std::string station = test::write_file(dir + "/station.toml", R"(name = "two"
[[string]]
name = "S"
x_m = 0.0
y_m = 0.0
[[string.receiver]]
name = "R1"
depth_m = 60.0
[[string.receiver]]
name = "R2"
depth_m = 120.0
)");
    // 1100 sources: more than one block (1024), with a bad row and one at R1 in the second block.
    std::string text = "name,x_m,z_m\n";
    for (int i = 0; i < 1100; ++i) {
        if (i == 1050) text += "bad,x,-10\n";
        else if (i == 1060) text += "at-R1,0,-60\n";
        else text += "s" + std::to_string(i) + "," + std::to_string(5 + (i % 97) * 7) + ",-" + std::to_string(10 + (i % 31) * 9) + "\n";
    }
    const std::string sources = test::write_file(dir + "/sources.csv", text);
    const auto run = [&](const std::string& file, const std::string& threads, const std::string& format) {
        return test::run_firnray({"delays", "--station", station, "--sources", file, "--threads", threads, "--format",
                                  format, "--quiet"});
    };
    const auto one = run(sources, "1", "csv"), three = run(sources, "3", "csv");
    CHECK(one.exit_code == 7);
    CHECK(one.err.find("1 of 1100 sources failed, 1 of 2198 channels failed") != std::string::npos);
    CHECK(three.exit_code == 7);
    CHECK(one.out == three.out);
    CHECK(one.out.find("\nat-R1,1062,R1,,") != std::string::npos);
    CHECK(run(sources, "1", "json").out == run(sources, "3", "json").out);
    // The first ten sources alone give the first rows of the whole run: blocks do not change rows.
    std::string first_ten = "name,x_m,z_m\n";
    std::size_t at = text.find('\n') + 1;
    for (int i = 0; i < 10; ++i) at = text.find('\n', at) + 1;
    first_ten += text.substr(text.find('\n') + 1, at - text.find('\n') - 1);
    const auto small = run(test::write_file(dir + "/ten.csv", first_ten), "2", "csv");
    CHECK(small.exit_code == 0);
    REQUIRE(small.out.size() < one.out.size());
    CHECK(one.out.compare(0, small.out.size(), small.out) == 0);
}
