// Batches of source-receiver pairs (paths/pair_batch.hpp) and, through find_paths on the numeric
// solver, the linear-velocity-gradient closed form of seismology (Shearer, Introduction to
// Seismology; Červený 2001). The edge cases of single pairs are in test_find_paths.cpp.
#include <catch2/catch.hpp>

#include <algorithm>
#include <atomic>
#include <cmath>
#include <memory>
#include <mutex>
#include <string>
#include <tuple>
#include <vector>

#include "core/constants.hpp"
#include "core/errors.hpp"
#include "model/table_profile.hpp"
#include "output/path_output.hpp"
#include "paths/pair_batch.hpp"
#include "solver/closed_form_solver.hpp"
#include "solver/numeric_solver.hpp"
#include "support/test_profiles.hpp"

using namespace firnray;

TEST_CASE("paths in a linear velocity gradient: the one direct or refracted path is the circular arc centred on "
          "v = 0, with T = arccosh(1 + g²d²/(2 v1 v2))/|g| within 1 ps (Shearer, Introduction to Seismology, "
          "Červený 2001)",
          "[paths][numeric]") {
    const double c = speed_of_light;
    const double v_surface = c / 1.35, g = (c / 1.35 - c / 1.78) / 2000.0;  // (m/s)/m: slower with depth
    auto profile = std::make_shared<test::LinearVelocityProfile>(v_surface, g);
    const NumericSolver solver(test::model_with(profile));
    const double z_centre = -v_surface / g;  // the line v = 0, where every ray's circle is centred
    int refracted = 0, direct = 0;
    for (const double z1 : {-40.0, -150.0, -600.0, -1200.0})
        for (const double z2 : {-20.0, -300.0, -900.0})
            for (const double d : {50.0, 400.0, 1500.0, 3000.0}) {
                // The circle through both points with its centre on z = z_centre.
                const double x_c = (d * d + (z2 - z_centre) * (z2 - z_centre) - (z1 - z_centre) * (z1 - z_centre)) / (2 * d);
                const double radius = std::hypot(x_c, z1 - z_centre), top = z_centre + radius;
                // The arc passes through the top of its circle when the centre lies between the
                // ends; that ray exists only if it turns below the surface.
                const bool through_top = x_c > 0.0 && x_c < d;
                const auto paths = find_paths(solver, {0, 0, z1}, {d, 0, z2});
                INFO("z1 " << z1 << ", z2 " << z2 << ", d " << d << ": arc top at z = " << top);
                int arcs = 0;
                for (const ConnectedPath& p : paths) {
                    if (p.kind != PathKind::direct && p.kind != PathKind::refracted) continue;
                    ++arcs;
                    CHECK(p.kind == (through_top ? PathKind::refracted : PathKind::direct));
                    if (through_top) {
                        ++refracted;
                        REQUIRE(p.turning_z_m);
                        CHECK(*p.turning_z_m == Approx(top).margin(1e-6));
                    } else {
                        ++direct;
                    }
                    const double v1 = profile->velocity(z1), v2 = profile->velocity(z2);
                    const double chord = std::hypot(d, z2 - z1);
                    const double expected = std::acosh(1.0 + g * g * chord * chord / (2.0 * v1 * v2)) / g;
                    CHECK(std::abs(p.time_s - expected) < 1e-12);
                    // The ray leaves at right angles to the radius: tan(zenith) = |z − z_c| / |x − x_c|.
                    const double launch = std::atan2(z1 - z_centre, x_c);
                    CHECK(p.launch_zenith_rad == Approx(launch).margin(1e-9));
                }
                CHECK(arcs == (!through_top || top < 0.0 ? 1 : 0));
            }
    CHECK(refracted >= 2);
    CHECK(direct >= 6);
}

TEST_CASE("pairs files: named columns, optional y and id, a bad row carries its error and line", "[paths]") {
    const CsvTable table = parse_csv("# comment\n"
                                     "receiver_z_m,receiver_x_m,source_z_m,source_x_m,source_y_m,id\n"
                                     "-30,120,-150,0,5,first\n"
                                     "\n"
                                     "-30,x,-150,0,5,second\n"
                                     "-30,120,-150\n"
                                     "-30,120,-150,0,,empty y\n",
                                     "pairs.csv");
    const auto pairs = read_path_pairs(table);
    REQUIRE(pairs.size() == 4u);
    CHECK(pairs[0].input_line == 3);
    CHECK(pairs[0].name == "first");
    CHECK(pairs[0].error.empty());
    CHECK(pairs[0].source.x == 0.0);
    CHECK(pairs[0].source.y == 5.0);
    CHECK(pairs[0].source.z == -150.0);
    CHECK(pairs[0].receiver.x == 120.0);
    CHECK(pairs[0].receiver.y == 0.0);  // no receiver_y_m column
    CHECK(pairs[0].receiver.z == -30.0);
    CHECK(pairs[1].input_line == 5);
    CHECK(pairs[1].error.find("pairs.csv:5") != std::string::npos);
    CHECK(pairs[1].error.find("receiver_x_m") != std::string::npos);
    CHECK(pairs[2].error.find("fields") != std::string::npos);
    CHECK(pairs[3].error.find("source_y_m") != std::string::npos);

    CHECK_THROWS_AS(read_path_pairs(parse_csv("source_x_m,source_z_m,receiver_x_m\n1,2,3\n", "p")), DataInputError);
    CHECK_THROWS_AS(read_path_pairs(parse_csv("source_x_m,source_z_m,receiver_x_m,receiver_z_m\n", "p")),
                    DataInputError);
    CHECK_THROWS_AS(read_path_pairs_file("no/such/pairs.csv"), DataInputError);
}

TEST_CASE("connect_batch: the same text whatever the thread count, errors per pair, counts, and cancellation",
          "[paths]") {
    auto model = std::make_shared<FirnModel>(*test::model_with(std::make_shared<ExponentialProfile>(1.78, 1.35, 40.0)));
    model->bottom = Bottom{-800.0, 0.5};
    const ClosedFormSolver solver(model);
    std::vector<PathPair> pairs;
    for (int i = 0; i < 500; ++i) {
        PathPair p;
        p.input_line = i + 2;
        p.name = "p" + std::to_string(i);
        p.source = {0.0, 0.0, -1.0 - (i * 37) % 400};
        p.receiver = {5.0 + (i * 53) % 1500, (i % 3) * 10.0, -1.0 - (i * 91) % 300};
        if (i % 97 == 5) p.receiver.z = -900.0;  // below the bottom: a computed error
        if (i % 101 == 7) p.error = "bad row";    // a row that could not be read
        pairs.push_back(p);
    }
    for (const PathFormat format : {PathFormat::csv, PathFormat::json, PathFormat::text}) {
        const BatchFormatter formatter(format, {std::make_shared<FirnModel>(solver.model()), solver.name()}, pairs);
        const BatchRun one = connect_batch(solver, pairs, {}, formatter, 1);
        for (const int threads : {2, 3, 8}) {
            const BatchRun many = connect_batch(solver, pairs, {}, formatter, threads);
            CHECK(many.text == one.text);
        }
        CHECK(one.pairs == 500u);
        CHECK(one.failed == 11u);  // 6 below the bottom (i = 5, 102, ..., 490) and 5 bad rows
        CHECK(one.paths > one.pairs);
        // One row per path, or one for a pair without any.
        std::size_t expected_rows = 0, expected_paths = 0, expected_shadowed = 0;
        for (const PathPair& p : pairs) {
            const PairPaths r = connect_pair(solver, p, {});
            expected_rows += std::max<std::size_t>(1, r.paths.size());
            expected_paths += r.paths.size();
            expected_shadowed += r.error.empty() && r.paths.empty();
        }
        CHECK(one.paths == expected_paths);
        CHECK(one.shadowed == expected_shadowed);
        if (format == PathFormat::csv) {
            const CsvTable table = parse_csv(one.text, "batch");
            CHECK(table.rows.size() == expected_rows);
        }
    }
    // Progress is counted in pairs and ends at the number of pairs.
    std::mutex progress_mutex;
    std::size_t last_done = 0, last_total = 0;
    RunControl watched;
    watched.progress = [&](std::size_t done, std::size_t total) {  // called from the workers
        std::lock_guard lock(progress_mutex);
        last_done = std::max(last_done, done);
        last_total = total;
    };
    connect_batch(solver, pairs, {}, BatchFormatter(PathFormat::csv, {std::make_shared<FirnModel>(solver.model()), solver.name()}, pairs), 2, watched);
    CHECK(last_done == pairs.size());
    CHECK(last_total == pairs.size());

    std::atomic<bool> stop{true};
    RunControl control;
    control.cancel = &stop;
    const BatchFormatter formatter(PathFormat::csv, {std::make_shared<FirnModel>(solver.model()), solver.name()}, pairs);
    CHECK_THROWS_AS(connect_batch(solver, pairs, {}, formatter, 2, control), Cancelled);
}

TEST_CASE("paths with both ends below the deepest point of a table, where n is constant: the direct path is the "
          "straight line with T = n·d/c and L_eff = d (definition), and swapping the ends gives the same times "
          "(reciprocity theorem)",
          "[paths][numeric]") {
    std::vector<double> depth, n;
    for (double d = 0.0; d <= 150.0; d += d < 40.0 ? 4.0 : 10.0) {
        depth.push_back(d);
        n.push_back(1.78 - 0.43 * std::exp(-d / 37.0));
    }
    auto profile = std::make_shared<TableProfile>(depth, n);
    const double n_deep = profile->index(-150.0);
    const NumericSolver solver(test::model_with(profile));
    for (const auto& [z1, z2, r] : {std::tuple{-186.8, -173.2, 613.0}, std::tuple{-160.0, -170.0, 100.0},
                                    std::tuple{-150.5, -400.0, 50.0}, std::tuple{-200.0, -200.0, 30.0},
                                    std::tuple{-300.0, -60.0, 250.0}}) {
        INFO(z1 << " -> " << z2 << " at " << r << " m");
        const auto forward = find_paths(solver, {0, 0, z1}, {r, 0, z2});
        const auto backward = find_paths(solver, {r, 0, z2}, {0, 0, z1});
        REQUIRE_FALSE(forward.empty());
        REQUIRE(forward.size() == backward.size());
        for (std::size_t i = 0; i < forward.size(); ++i) {
            CHECK(forward[i].kind == backward[i].kind);
            CHECK(forward[i].time_s == Approx(backward[i].time_s).epsilon(1e-10));
        }
        if (z1 < -150.0 && z2 < -150.0) {
            const double d = std::hypot(r, z2 - z1);
            const auto direct = std::find_if(forward.begin(), forward.end(), [&](const ConnectedPath& p) {
                return p.kind == PathKind::direct || (z1 == z2 && p.ray_parameter == Approx(n_deep));
            });
            REQUIRE(direct != forward.end());
            CHECK(direct->time_s == Approx(n_deep * d / speed_of_light).epsilon(1e-12));
            CHECK(direct->length_m == Approx(d).epsilon(1e-10));
            CHECK(direct->amplitude.spreading_distance_m == Approx(d).epsilon(1e-6));
        }
    }
}

#include <sstream>

#include "support/run_cli.hpp"

TEST_CASE("connect_batch_stream: a file streamed in blocks gives the text of the whole batch, whatever the thread count",
          "[paths][stream]") {
    auto model = std::make_shared<FirnModel>(*test::model_with(std::make_shared<ExponentialProfile>(1.78, 1.35, 40.0)));
    const ClosedFormSolver solver(model);
    const std::string dir = test::temp_folder("pairs-stream");
    std::string text = "source_x_m,source_z_m,receiver_x_m,receiver_z_m,name\n";
    for (int i = 0; i < 5000; ++i) {  // more than one read block (4096 pairs)
        if (i % 997 == 3) text += "1,oops,2,-3,bad" + std::to_string(i) + "\n";
        else
            text += "0," + std::to_string(-1 - (i * 37) % 400) + "," + std::to_string(5 + (i * 53) % 1500) + "," +
                    std::to_string(-1 - (i * 91) % 300) + ",pair-" + std::to_string(i) + "\n";
    }
    const std::string path = test::write_file(dir + "/pairs.csv", text);
    const auto pairs = read_path_pairs_file(path);
    for (const PathFormat format : {PathFormat::csv, PathFormat::json, PathFormat::text}) {
        const BatchFormatter whole_formatter(format, {std::make_shared<FirnModel>(solver.model()), solver.name()}, pairs);
        const BatchRun whole = connect_batch(solver, pairs, {}, whole_formatter, 2);
        std::vector<PathPair> width(1);
        width[0].name.assign(longest_pair_name(path), ' ');
        const BatchFormatter formatter(format, {std::make_shared<FirnModel>(solver.model()), solver.name()}, width);
        for (const int threads : {1, 3}) {
            PathPairReader reader(path);
            std::ostringstream out;
            const BatchTotals totals = connect_batch_stream(solver, reader, {}, formatter, out, threads);
            CHECK(out.str() == whole.text);
            CHECK(totals.pairs == 5000u);
            CHECK(totals.failed == whole.failed);
            CHECK(totals.paths == whole.paths);
        }
    }
    CHECK_FALSE(PathPairReader(path).uses_old_id_column());
}

TEST_CASE("connect_batch_stream: an empty batch is refused before anything is written", "[paths][stream]") {
    auto model = std::make_shared<FirnModel>(*test::model_with(std::make_shared<ExponentialProfile>(1.78, 1.35, 40.0)));
    const ClosedFormSolver solver(model);
    const std::string dir = test::temp_folder("pairs-stream-empty");
    const std::string path = test::write_file(dir + "/pairs.csv", "source_x_m,source_z_m,receiver_x_m,receiver_z_m\n");
    PathPairReader reader(path);
    std::ostringstream out;
    const BatchFormatter formatter(PathFormat::json, {std::make_shared<FirnModel>(solver.model()), solver.name()}, {});
    CHECK_THROWS_AS(connect_batch_stream(solver, reader, {}, formatter, out, 1), DataInputError);
    CHECK(out.str().empty());
    CHECK_THROWS_AS(PathPairReader(test::write_file(dir + "/cols.csv", "source_x_m\n1\n")), DataInputError);
}

TEST_CASE("connect_batch: a pair whose output the writer refuses (a field not finite) becomes an error row, and the "
          "batch goes on",
          "[paths]") {
    auto model = std::make_shared<FirnModel>(*test::model_with(std::make_shared<ExponentialProfile>(1.78, 1.35, 40.0)));
    const ClosedFormSolver solver(model);
    std::vector<PathPair> pairs(3);
    for (std::size_t i = 0; i < pairs.size(); ++i) {
        pairs[i].input_line = static_cast<int>(i) + 2;
        pairs[i].name = "p" + std::to_string(i);
        pairs[i].source = {0.0, 0.0, -50.0};
        pairs[i].receiver = {100.0 + 50.0 * static_cast<double>(i), 0.0, -20.0};
    }
    const BatchFormatter csv(PathFormat::csv, {std::make_shared<FirnModel>(solver.model()), solver.name()}, pairs);
    // The CSV formatter, except that a pair at index 1 with paths is refused as the writer
    // refuses a non-finite value (io/csv_writer.cpp).
    struct Refusing : PairFormatter {
        const BatchFormatter& inner;
        explicit Refusing(const BatchFormatter& f) : inner(f) {}
        std::string begin() const override { return inner.begin(); }
        void append_pair(std::string& out, std::size_t index, const PathPair& pair, const PairPaths& result) const override {
            inner.append_pair(out, index, pair, result);
            if (index == 1 && !result.paths.empty())
                throw NumericalError("the output field 'spreading_m' is +infinite");
        }
        std::string end(std::size_t n, std::size_t failed) const override { return inner.end(n, failed); }
    } refusing(csv);
    const BatchRun run = connect_batch(solver, pairs, {}, refusing, 2);
    CHECK(run.pairs == 3u);
    CHECK(run.failed == 1u);
    const CsvTable table = parse_csv(run.text, "batch");
    std::size_t rows_of_p1 = 0;
    for (const auto& row : table.rows)
        if (row.fields[1] == "p1") {
            ++rows_of_p1;
            CHECK(row.fields.back().find("numerical failure") != std::string::npos);
        }
    CHECK(rows_of_p1 == 1u);
    CHECK(run.paths == connect_pair(solver, pairs[0], {}).paths.size() + connect_pair(solver, pairs[2], {}).paths.size());
}
