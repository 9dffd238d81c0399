// End-to-end tests of `firnray trace` (src/cli/commands/trace.cpp): run the binary, parse its CSV and
// JSON, and check them against the definitions of the conventions (z up, zenith of travel) and
// Snell's law at the surface.
#include <catch2/catch.hpp>

#include <cmath>
#include <filesystem>
#include <map>
#include <sstream>
#include <string>
#include <vector>

#include "support/run_cli.hpp"

using firnray::test::read_file;
using firnray::test::run_firnray;
using firnray::test::temp_folder;

namespace {

struct CsvRow {
    int ray = 0, branch = 0, parent = 0;
    std::string kind;
    double zenith_deg = 0, x = 0, z = 0, time_ns = 0, length = 0;
};

std::vector<CsvRow> parse_csv(const std::string& text, std::string& header) {
    std::istringstream in(text);
    std::getline(in, header);
    std::vector<CsvRow> rows;
    std::string line;
    while (std::getline(in, line)) {
        std::vector<std::string> f;
        std::stringstream ss(line);
        std::string cell;
        while (std::getline(ss, cell, ',')) f.push_back(cell);
        REQUIRE(f.size() == 9);
        rows.push_back(CsvRow{std::stoi(f[0]), std::stoi(f[1]), std::stoi(f[2]), f[3], std::stod(f[4]), std::stod(f[5]),
                              std::stod(f[6]), std::stod(f[7]), std::stod(f[8])});
    }
    return rows;
}

}  // namespace

TEST_CASE("firnray trace: CSV of a fan in a homogeneous-looking deep leg has one row per point, "
          "times n·d/c near the launch and the kinds of branches (definition)",
          "[cli][trace]") {
    const auto r = run_firnray({"trace", "--from", "0,-150", "--zenith-range", "20:160:20", "--max-distance", "400",
                                "--spacing", "10"});
    REQUIRE(r.exit_code == 0);
    std::string header;
    const auto rows = parse_csv(r.out, header);
    CHECK(header == "ray,branch,parent,kind,launch_zenith_deg,x_m,z_m,time_ns,length_m");
    REQUIRE(rows.size() > 100);
    std::map<int, double> launch_zenith;
    bool saw_air = false;
    for (const auto& row : rows) {
        launch_zenith[row.ray] = row.zenith_deg;
        if (row.kind == "air-transmitted") {
            saw_air = true;
            CHECK(row.parent == 0);
            CHECK(row.z >= 0.0);
        }
        if (row.kind == "ice") {
            CHECK(row.z <= 1e-9);
        }
        CHECK(row.x <= 400.0 + 1e-9);
        CHECK(row.time_ns >= 0.0);
    }
    CHECK(launch_zenith.size() == 8);  // 20, 40, ..., 160
    CHECK(launch_zenith[0] == 20.0);
    CHECK(launch_zenith[7] == 160.0);
    CHECK(saw_air);  // the steep upward rays (ξ < n_air) transmit into the air
    // Consecutive points of a branch: 10 m of path apart (or less, at events and ends), time increasing.
    // Near the launch the time is n·s/c with n of the launch depth (the index changes by < 0.2 %
    // over the first 10 m at 150 m depth); in the air every step takes exactly Δs/c.
    const double n_launch = 1.78 - 0.43 * std::exp(-150.0 / 37.0);  // the built-in model
    int near_launch = 0, air_steps = 0;
    for (std::size_t i = 1; i < rows.size(); ++i) {
        if (rows[i].ray != rows[i - 1].ray || rows[i].branch != rows[i - 1].branch) continue;
        CHECK(rows[i].length - rows[i - 1].length <= 10.0 + 1e-9);
        CHECK(rows[i].time_ns > rows[i - 1].time_ns);
        if (rows[i].branch == 0 && rows[i - 1].length == 0.0 && rows[i].length > 0.0) {
            CHECK(rows[i].time_ns == Approx(n_launch * rows[i].length / 0.299792458).epsilon(2e-3));
            ++near_launch;
        }
        if (rows[i].kind == "air-transmitted") {
            CHECK(rows[i].time_ns - rows[i - 1].time_ns ==
                  Approx((rows[i].length - rows[i - 1].length) / 0.299792458).epsilon(1e-6));
            ++air_steps;
        }
    }
    CHECK(near_launch == 8);
    CHECK(air_steps > 0);
}

TEST_CASE("firnray trace: JSON from the air gives the air branch, its surface event and the transmitted ice "
          "branch obeying n_air sin θ = n_ice sin θ_t (Snell's law)",
          "[cli][trace]") {
    const std::string dir = temp_folder("trace-json");
    const std::string out = dir + "/fan.json";
    const auto r = run_firnray({"trace", "--from", "0,20", "--zenith-deg", "150", "--max-distance", "100",
                                "--format", "json", "--sample", "ends", "--output", out});
    REQUIRE(r.exit_code == 0);
    CHECK(r.out.empty());
    const std::string json = read_file(out);
    CHECK(json.find("\"kind\": \"air\"") != std::string::npos);
    CHECK(json.find("\"kind\": \"ice-transmitted\"") != std::string::npos);
    CHECK(json.find("\"type\": \"surface-reflection-in-air\"") != std::string::npos);
    CHECK(json.find("\"reason\": \"ceiling\"") != std::string::npos);
    CHECK(json.find("\"amplitude_s\"") != std::string::npos);
    CHECK(json.find("\"drift\"") != std::string::npos);
    // The ray parameter of the ice branch is n_air sin 150° = 0.5 (Snell's law across the surface).
    const std::size_t ice = json.find("\"kind\": \"ice-transmitted\"");
    const std::size_t key = json.find("\"ray_parameter\": ", ice);
    REQUIRE(key != std::string::npos);
    CHECK(std::stod(json.substr(key + 17, 24)) == Approx(0.5).epsilon(1e-12));
}

TEST_CASE("firnray trace: --plot writes an SVG naming the model", "[cli][trace]") {
    const std::string dir = temp_folder("trace-plot");
    const std::string svg = dir + "/fan.svg";
    const auto r = run_firnray({"trace", "--from", "0,-100", "--zenith-deg", "30,60,90,120", "--max-distance", "300",
                                "--plot", svg, "--output", dir + "/fan.csv"});
    REQUIRE(r.exit_code == 0);
    const std::string text = read_file(svg);
    CHECK(text.find("<svg") != std::string::npos);
    CHECK(text.find("model:") != std::string::npos);
    CHECK(read_file(dir + "/fan.csv").find("ray,branch") == 0);
}

TEST_CASE("firnray trace: malformed --from, angles or ranges are usage errors naming the option (exit 2)",
          "[cli][trace]") {
    struct Case {
        std::vector<std::string> args;
        std::string option;
    };
    const Case cases[] = {
        {{"trace", "--from", "0;-10", "--zenith-deg", "90"}, "--from"},
        {{"trace", "--from", "0,-10,5", "--zenith-deg", "90"}, "--from"},
        {{"trace", "--from", "0,-10", "--zenith-deg", "90,abc"}, "--zenith-deg"},
        {{"trace", "--from", "0,-10", "--zenith-range", "10:20"}, "--zenith-range"},
        {{"trace", "--from", "0,-10", "--zenith-range", "30:10:5"}, "--zenith-range"},
        {{"trace", "--from", "0,-10", "--zenith-deg", "90", "--max-distance", "-5"}, "--max-distance"},
        {{"trace", "--from", "0,-10"}, "--zenith"},
        {{"trace", "--from", "0,-10", "--zenith-deg", "90", "--format", "xml"}, "--format"},
    };
    for (const Case& c : cases) {
        const auto r = run_firnray(c.args);
        std::string joined;
        for (const auto& a : c.args) joined += a + " ";
        INFO(joined);
        CHECK(r.exit_code == 2);
        CHECK(r.err.find(c.option) != std::string::npos);
    }
}

TEST_CASE("firnray trace --help carries a worked example and the conventions", "[cli][trace]") {
    const auto r = run_firnray({"trace", "--help"});
    CHECK(r.exit_code == 0);
    CHECK(r.out.find("Example:") != std::string::npos);
    CHECK(r.out.find("z is up") != std::string::npos);
    CHECK(r.out.find("zenith") != std::string::npos);
}

TEST_CASE("firnray trace: an unwritable output is exit 6 and leaves no file", "[cli][trace]") {
    const auto r = run_firnray({"trace", "--from", "0,-10", "--zenith-deg", "90", "--output", "/nonexistent-dir/x.csv"});
    CHECK(r.exit_code == 6);
    // An output path that is a folder: the temporary file is written beside it, the rename fails,
    // and nothing is left behind.
    const std::string dir = temp_folder("trace-unwritable");
    std::filesystem::create_directory(dir + "/taken");
    const auto r2 = run_firnray({"trace", "--from", "0,-10", "--zenith-deg", "90", "--output", dir + "/taken"});
    CHECK(r2.exit_code == 6);
    std::size_t entries = 0;
    for ([[maybe_unused]] const auto& e : std::filesystem::directory_iterator(dir)) ++entries;
    CHECK(entries == 1);  // only the folder itself
    CHECK(std::filesystem::is_empty(dir + "/taken"));
}
