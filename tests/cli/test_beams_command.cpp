// End-to-end: firnray beams run as a user would, on the demo station's fictional phased-array
// string: the beam table in every format, the array-factor figure, the coverage map and the
// design scan (SVGs rendered with rsvg-convert, Debian package librsvg2-bin, to prove they
// parse), and every bad input with its exit code.
#include <catch2/catch.hpp>

#include <cstdlib>
#include <filesystem>
#include <sstream>

#include "support/run_cli.hpp"

using namespace firnray::test;
namespace fs = std::filesystem;

namespace {

std::vector<std::vector<std::string>> csv_rows(const std::string& text) {
    std::vector<std::vector<std::string>> rows;
    std::stringstream in(text);
    std::string line;
    while (std::getline(in, line)) {
        std::vector<std::string> fields;
        std::stringstream l(line);
        std::string f;
        while (std::getline(l, f, ',')) fields.push_back(f);
        if (!line.empty() && line.back() == ',') fields.emplace_back();
        rows.push_back(fields);
    }
    return rows;
}

void require_svg_renders(const std::string& svg_path) {
    const std::string png = svg_path + ".png";
    const int status = std::system(("rsvg-convert '" + svg_path + "' -o '" + png + "' 2>/dev/null").c_str());
    INFO("rsvg-convert (Debian package librsvg2-bin) must render " << svg_path);
    REQUIRE(status == 0);
    REQUIRE(fs::file_size(png) > 1000);
}

std::vector<std::string> beams_args(std::vector<std::string> extra) {
    std::vector<std::string> args{"beams", "--station", source_path("demo/station.toml"), "--string", "PA"};
    args.insert(args.end(), extra.begin(), extra.end());
    return args;
}

}  // namespace

TEST_CASE("firnray beams: text, csv and json beam tables of the demo's phased array", "[cli][beams]") {
    const auto text = run_firnray(beams_args({"--beam-zenith-deg", "60,90,120", "--sample-rate-ghz", "1.5"}));
    INFO(text.err);
    REQUIRE(text.exit_code == 0);
    CHECK(text.out.find("reference PA1") != std::string::npos);
    CHECK(text.out.find("whole samples at 1.5 GHz") != std::string::npos);
    // The 90° beam takes the down-going branch at the top antenna: every antenna below is reached.
    CHECK(text.out.find("does not reach") == std::string::npos);

    const auto below = run_firnray(beams_args({"--beam-zenith-deg", "90", "--reference", "PA4"}));
    REQUIRE(below.exit_code == 0);
    CHECK(below.out.find("PA1: the wave turns at 183 m depth, below this antenna") != std::string::npos);

    const auto csv = run_firnray(beams_args({"--beam-count", "4", "--zenith-range", "60:120", "--format", "csv"}));
    REQUIRE(csv.exit_code == 0);
    const auto rows = csv_rows(csv.out);
    REQUIRE(rows.size() == 1 + 4 * 8);
    CHECK(rows[0][0] == "beam");
    CHECK(rows[0][6] == "offset_ns");
    CHECK(rows[1][1] == "60");
    CHECK(rows[32][1] == "120");
    CHECK(rows[1][7].empty());  // no sample rate given

    const std::string dir = temp_folder("beams-json");
    const auto json = run_firnray(beams_args({"--beam-zenith-deg", "90", "--reference", "PA4", "--format", "json",
                                              "--sample-rate-ghz", "2", "-o", dir + "/beams.json"}));
    INFO(json.err);
    REQUIRE(json.exit_code == 0);
    const std::string doc = read_file(dir + "/beams.json");
    for (const char* member : {"\"model\"", "\"array\"", "\"beams\"", "\"beam\": 0", "\"arrival_zenith_deg\": 90",
                               "\"ray_parameter\"", "\"offsets_ns\"", "\"offsets_samples\"", "\"half_power_width_deg\"",
                               "\"PA1\": null", "\"PA4\": 0"})
        CHECK(doc.find(member) != std::string::npos);
}

TEST_CASE("firnray beams: array-factor plot, coverage map with threshold, and a design scan", "[cli][beams]") {
    const std::string dir = temp_folder("beams-map");
    const auto r = run_firnray(beams_args({"--beam-count", "6", "--zenith-range", "50:130", "--frequency-mhz", "200",
                                           "--plot", dir + "/af.svg", "--map", dir + "/cover.csv", "--map-plot",
                                           dir + "/cover.svg", "--threshold", "0.6", "--source-distance", "0:1200",
                                           "--distance-cells", "40", "--source-depth", "0:400", "--depth-cells", "20",
                                           "--ray-parameters", "400", "--format", "json", "-o", dir + "/beams.json",
                                           "--quiet"}));
    INFO(r.err);
    REQUIRE(r.exit_code == 0);
    require_svg_renders(dir + "/af.svg");
    require_svg_renders(dir + "/cover.svg");
    // In-ice λ at 200 MHz is 0.84 m, below the 1 m spacing: grating lobes (Balanis, Antenna Theory).
    CHECK(read_file(dir + "/af.svg").find("grating lobe") != std::string::npos);
    const auto grid = csv_rows(read_file(dir + "/cover.csv"));
    REQUIRE(grid.size() == 1 + 40 * 20);
    CHECK(grid[0][5] == "first_efficiency");
    CHECK(grid[0].back() == "triggered");
    int triggered = 0;
    for (std::size_t i = 1; i < grid.size(); ++i) triggered += grid[i].back() == "1";
    CHECK(triggered > 0);
    const std::string doc = read_file(dir + "/beams.json");
    CHECK(doc.find("\"coverage\"") != std::string::npos);
    CHECK(doc.find("\"triggered_volume_m3\"") != std::string::npos);

    const auto scan = run_firnray(beams_args({"--beam-count", "4", "--zenith-range", "60:120", "--scan", "depth",
                                              "--scan-values", "40,120,200", "--scan-output", dir + "/scan.csv",
                                              "--scan-plot", dir + "/scan.svg", "--source-distance", "0:800",
                                              "--distance-cells", "20", "--source-depth", "0:300", "--depth-cells",
                                              "10", "--ray-parameters", "300", "-o", "/dev/null", "--quiet"}));
    INFO(scan.err);
    REQUIRE(scan.exit_code == 0);
    const auto rows = csv_rows(read_file(dir + "/scan.csv"));
    REQUIRE(rows.size() == 4);
    CHECK(rows[0][6] == "efficiency_weighted_volume_m3");
    int best = 0;
    for (std::size_t i = 1; i < rows.size(); ++i) best += rows[i].back() == "1";
    CHECK(best == 1);
    require_svg_renders(dir + "/scan.svg");
}

TEST_CASE("firnray beams: bad inputs get a message and exit 2 (option) or 3 (station file)", "[cli][beams]") {
    const std::string dir = temp_folder("beams-bad");
    SECTION("an unknown string name, with a did-you-mean") {
        const auto r = run_firnray({"beams", "--station", source_path("demo/station.toml"), "--string", "Pa",
                                    "--beam-zenith-deg", "60"});
        CHECK(r.exit_code == 2);
        CHECK(r.err.find("no string named 'Pa'") != std::string::npos);
        CHECK(r.err.find("did you mean 'PA'") != std::string::npos);
    }
    SECTION("an unknown reference") {
        const auto r = run_firnray(beams_args({"--beam-zenith-deg", "60", "--reference", "PA9"}));
        CHECK(r.exit_code == 2);
        CHECK(r.err.find("--reference") != std::string::npos);
    }
    SECTION("a zenith outside 0 to 180 degrees") {
        for (const char* zenith : {"-5", "181", "nan"}) {
            const auto r = run_firnray(beams_args({"--beam-zenith-deg", zenith}));
            CHECK(r.exit_code == 2);
            CHECK(r.err.find("--beam-zenith-deg") != std::string::npos);
        }
        const auto range = run_firnray(beams_args({"--beam-count", "3", "--zenith-range", "10:190"}));
        CHECK(range.exit_code == 2);
        CHECK(range.err.find("--zenith-range") != std::string::npos);
    }
    SECTION("a zero or negative sample rate or frequency") {
        for (const char* option : {"--sample-rate-ghz", "--frequency-mhz"})
            for (const char* value : {"0", "-1"}) {
                const auto r = run_firnray(beams_args({"--beam-zenith-deg", "60", option, value}));
                CHECK(r.exit_code == 2);
                CHECK(r.err.find(option) != std::string::npos);
            }
    }
    SECTION("a threshold of 0, or without a map") {
        const auto zero = run_firnray(beams_args({"--beam-zenith-deg", "60", "--threshold", "0", "--map", dir + "/m.csv"}));
        CHECK(zero.exit_code == 2);
        CHECK(zero.err.find("--threshold") != std::string::npos);
        CHECK_FALSE(fs::exists(dir + "/m.csv"));
        CHECK(run_firnray(beams_args({"--beam-zenith-deg", "60", "--threshold", "0.5"})).exit_code == 2);
    }
    SECTION("no beams, or both ways of giving them") {
        CHECK(run_firnray(beams_args({})).exit_code == 2);
        CHECK(run_firnray(beams_args({"--beam-zenith-deg", "60", "--beam-count", "2", "--zenith-range", "60:90"})).exit_code == 2);
    }
    SECTION("a string with fewer than 2 antennas") {
        const std::string station = write_file(dir + "/one.toml", R"(name = "one"
[[string]]
name = "S"
x_m = 0.0
y_m = 0.0
[[string.receiver]]
name = "S1"
depth_m = 100.0
)");
        const auto r = run_firnray({"beams", "--station", station, "--string", "S", "--beam-zenith-deg", "60"});
        CHECK(r.exit_code == 3);
        CHECK(r.err.find("at least 2") != std::string::npos);
        CHECK(r.err.find("one.toml:6") != std::string::npos);
    }
    SECTION("two antennas at one depth") {
        const std::string station = write_file(dir + "/same.toml", R"(name = "same"
[[string]]
name = "S"
x_m = 0.0
y_m = 0.0
[[string.receiver]]
name = "S1"
depth_m = 100.0
[[string.receiver]]
name = "S2"
depth_m = 100.0
)");
        const auto r = run_firnray({"beams", "--station", station, "--string", "S", "--beam-zenith-deg", "60",
                                    "-o", dir + "/x.txt"});
        CHECK(r.exit_code == 3);
        CHECK(r.err.find("same depth") != std::string::npos);
        CHECK(r.err.find("same.toml:9") != std::string::npos);
        CHECK_FALSE(fs::exists(dir + "/x.txt"));
    }
}
