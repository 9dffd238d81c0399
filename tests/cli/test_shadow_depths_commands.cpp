// End-to-end: firnray shadow and firnray depths, run as a user would, outputs parsed and
// SVGs rendered with rsvg-convert (librsvg, Debian package librsvg2-bin) to prove they parse.
#include <catch2/catch.hpp>

#include <algorithm>

#include <cstdlib>
#include <filesystem>
#include <sstream>

#include <fmt/format.h>

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
}  // namespace

TEST_CASE("firnray shadow: grid, boundary and map for one receiver", "[cli][shadow]") {
    const std::string dir = temp_folder("shadow");
    const auto r = run_firnray({"shadow", "--receiver", "0,-60", "--distance", "0:1500", "--distance-cells", "60",
                                "--depth", "0:300", "--depth-cells", "30", "-o", dir + "/grid.csv", "--boundary",
                                dir + "/boundary.csv", "--plot", dir + "/map.svg", "--quiet"});
    INFO(r.err);
    REQUIRE(r.exit_code == 0);
    const auto grid = csv_rows(read_file(dir + "/grid.csv"));
    REQUIRE(grid.size() == 1 + 60 * 30);
    CHECK(grid[0][0] == "depth_m");
    CHECK(grid[0][3] == "kinds");
    int shadow = 0, seen = 0;
    for (std::size_t i = 1; i < grid.size(); ++i) (grid[i][3] == "none" ? shadow : seen)++;
    CHECK(shadow > 0);  // a receiver at 60 m in firn has a shadow zone within 1.5 km
    CHECK(seen > 0);
    const auto boundary = csv_rows(read_file(dir + "/boundary.csv"));
    REQUIRE(boundary.size() == 31);
    CHECK(std::stod(boundary[1][1]) < std::stod(boundary[30][1]));  // deeper sources are seen farther
    require_svg_renders(dir + "/map.svg");
}

TEST_CASE("firnray shadow: a station with --min-receivers, and its errors", "[cli][shadow]") {
    const std::string dir = temp_folder("shadow-station");
    const auto r = run_firnray({"shadow", "--station", source_path("demo/station.toml"), "--min-receivers", "12",
                                "--distance-cells", "40", "--depth-cells", "20", "-o", dir + "/grid.csv", "--plot",
                                dir + "/map.svg", "--quiet"});
    INFO(r.err);
    REQUIRE(r.exit_code == 0);
    require_svg_renders(dir + "/map.svg");

    const auto too_many = run_firnray({"shadow", "--station", source_path("demo/station.toml"), "--min-receivers", "21",
                                       "-o", dir + "/x.csv"});
    CHECK(too_many.exit_code == 2);  // a wrong option value
    CHECK(too_many.err.find("min-receivers") != std::string::npos);
    CHECK_FALSE(fs::exists(dir + "/x.csv"));

    const auto neither = run_firnray({"shadow"});
    CHECK(neither.exit_code == 2);
    const auto bad_point = run_firnray({"shadow", "--receiver", "0,abc"});
    CHECK(bad_point.exit_code == 2);
    CHECK(bad_point.err.find("--receiver") != std::string::npos);
    const auto in_air = run_firnray({"shadow", "--receiver", "0,5"});
    CHECK(in_air.exit_code == 2);
    CHECK(in_air.err.find("above the surface") != std::string::npos);

    const std::string bad_station = write_file(dir + "/bad.toml", "[[receiver]]\nname = \"R\"\nx_m = 0\ny_m = 0\nz_m = 4\n");
    const auto bad = run_firnray({"shadow", "--station", bad_station, "-o", dir + "/y.csv"});
    CHECK(bad.exit_code == 3);
    CHECK(bad.err.find("bad.toml:1") != std::string::npos);
    CHECK_FALSE(fs::exists(dir + "/y.csv"));
}

TEST_CASE("firnray depths: one row per candidate depth, the best flagged once, and a plot", "[cli][depths]") {
    const std::string dir = temp_folder("depths");
    const auto r = run_firnray({"depths", "--depths", "20,60,100", "--max-distance", "800", "--source-depth", "0:200",
                                "--distance-cells", "40", "--depth-cells", "20", "--plot", dir + "/depths.svg",
                                "--quiet"});
    INFO(r.err);
    REQUIRE(r.exit_code == 0);
    const auto rows = csv_rows(r.out);
    REQUIRE(rows.size() == 4);
    int best = 0;
    const auto best_column = static_cast<std::size_t>(
        std::find(rows[0].begin(), rows[0].end(), "best") - rows[0].begin());
    REQUIRE(best_column < rows[0].size());
    for (std::size_t i = 1; i < rows.size(); ++i) {
        const double region = std::stod(rows[i][1]), visible = std::stod(rows[i][2]);
        CHECK(region == Approx(3.14159265358979 * 800.0 * 800.0 * 200.0).epsilon(1e-9));  // π R² H
        CHECK(visible <= region);
        best += rows[i][best_column] == "1";
    }
    CHECK(best == 1);
    require_svg_renders(dir + "/depths.svg");
    const auto json = run_firnray({"depths", "--depths", "50", "--distance-cells", "10", "--depth-cells", "10",
                                   "--format", "json", "--quiet"});
    CHECK(json.exit_code == 0);
    CHECK(json.out.find("\"best_receiver_depth_m\": 50") != std::string::npos);
    CHECK(run_firnray({"depths", "--depths", "-5"}).exit_code == 2);
}

TEST_CASE("firnray shadow: a deep receiver on the built-in model gives a map and a finite boundary (issue 9)",
          "[cli][shadow]") {
    const auto r = run_firnray({"shadow", "--receiver", "0,-1500", "--source-distance", "0:3000", "--source-depth",
                                "1000:2000", "--distance-cells", "12", "--depth-cells", "6", "--quiet"});
    INFO(r.err);
    REQUIRE(r.exit_code == 0);
    const auto rows = csv_rows(r.out);
    REQUIRE(rows.size() == 1 + 12 * 6);
    CHECK(rows[0][0] == "depth_m");  // nothing is left out on this model: no comment line
    int visible = 0;
    for (std::size_t i = 1; i < rows.size(); ++i) visible += rows[i][5] == "1";
    CHECK(visible > 0);
}

TEST_CASE("firnray shadow and depths on a model with a bottom: bottom-reflected paths are in the map, and what "
          "--max-bounces or --no-bottom leave out is said on a comment line and in --help",
          "[cli][shadow][depths]") {
    const std::string model = source_path("models/demo-site.toml");
    const std::vector<std::string> small{"--model", model, "--receiver", "0,-60", "--source-distance", "0:1500",
                                         "--source-depth", "0:300", "--distance-cells", "15", "--depth-cells", "6",
                                         "--ray-parameters", "400", "--quiet"};
    auto with = [&](std::vector<std::string> extra) {
        std::vector<std::string> args{"shadow"};
        args.insert(args.end(), small.begin(), small.end());
        args.insert(args.end(), extra.begin(), extra.end());
        return run_firnray(args);
    };
    const auto r = with({"--max-bounces", "1"});
    INFO(r.err);
    REQUIRE(r.exit_code == 0);
    auto rows = csv_rows(r.out);
    REQUIRE(rows.size() == 2 + 15 * 6);
    CHECK(rows[0][0].find("# left out: paths with more than 1 turns and reflections (--max-bounces 1)") == 0);
    int bottom = 0;
    for (std::size_t i = 2; i < rows.size(); ++i) bottom += rows[i][3].find("bottom") != std::string::npos;
    CHECK(bottom > 0);

    const auto no_bottom = with({"--no-bottom"});
    REQUIRE(no_bottom.exit_code == 0);
    rows = csv_rows(no_bottom.out);
    CHECK(rows[0][0].find("# left out: paths reflected at the bottom") == 0);
    for (std::size_t i = 2; i < rows.size(); ++i) CHECK(rows[i][3].find("bottom") == std::string::npos);

    const auto help = run_firnray({"shadow", "--help"});
    CHECK(help.out.find("--max-bounces") != std::string::npos);
    CHECK(help.out.find("--no-bottom") != std::string::npos);
    CHECK(help.out.find("left out") != std::string::npos);

    const auto scan = run_firnray({"depths", "--model", model, "--depths", "60", "--source-distance", "0:1500",
                                   "--source-depth", "0:300", "--distance-cells", "15", "--depth-cells", "6",
                                   "--ray-parameters", "400", "--max-bounces", "1", "--format", "json", "--quiet"});
    INFO(scan.err);
    REQUIRE(scan.exit_code == 0);
    CHECK(scan.out.find("\"left_out\"") != std::string::npos);
    CHECK(scan.out.find("\"bottom_only_volume_m3\"") != std::string::npos);
    CHECK(scan.out.find("\"max_bounces\": 1") != std::string::npos);
}

TEST_CASE("firnray depths --resolution: per depth the median 1 sigma and the unresolved share of the resolution "
          "map of the station lowered there (Cramer-Rao bound, as firnray resolution computes it)",
          "[cli][depths][resolution]") {
    const std::string dir = temp_folder("depths-resolution");
    const std::string station = source_path("demo/station.toml");
    // The demo station's shallowest receivers hang at 40 m: at that candidate depth the station
    // is where its file puts it, so the figures must be those of `firnray resolution` on it.
    const auto r = run_firnray({"depths", "--depths", "40,120", "--source-distance", "0:800", "--source-depth",
                                "0:200", "--distance-cells", "20", "--depth-cells", "10", "--max-bounces", "1",
                                "--resolution", station, "--resolution-distance-cells", "8",
                                "--resolution-depth-cells", "5", "--quiet"});
    INFO(r.err);
    REQUIRE(r.exit_code == 0);
    const auto rows = csv_rows(r.out);
    REQUIRE(rows.size() == 3);
    const auto column = [&](const std::string& name) {
        const auto at = static_cast<std::size_t>(std::find(rows[0].begin(), rows[0].end(), name) - rows[0].begin());
        REQUIRE(at < rows[0].size());
        return at;
    };
    const std::size_t distance = column("resolution_median_sigma_distance_m"),
                      depth = column("resolution_median_sigma_depth_m"),
                      unresolved = column("resolution_unresolved_fraction");

    const auto map = run_firnray({"resolution", "--station", station, "--source-distance", "0:800", "--source-depth",
                                  "0:200", "--distance-cells", "8", "--depth-cells", "5", "--max-bounces", "1"});
    INFO(map.err);
    REQUIRE(map.exit_code == 0);
    const auto cells = csv_rows(map.out);
    REQUIRE(cells.size() == 41);
    std::vector<double> sigma_distance, sigma_depth;
    for (std::size_t i = 1; i < cells.size(); ++i)
        if (cells[i][3] == "1") {
            sigma_distance.push_back(std::stod(cells[i][4]));
            sigma_depth.push_back(std::stod(cells[i][5]));
        }
    REQUIRE(!sigma_distance.empty());
    const auto median = [](std::vector<double> v) {
        std::sort(v.begin(), v.end());
        const std::size_t h = v.size() / 2;
        return v.size() % 2 == 1 ? v[h] : 0.5 * (v[h - 1] + v[h]);
    };
    CHECK(std::stod(rows[1][distance]) == Approx(median(sigma_distance)).epsilon(1e-5));
    CHECK(std::stod(rows[1][depth]) == Approx(median(sigma_depth)).epsilon(1e-5));
    CHECK(std::stod(rows[1][unresolved]) == Approx(1.0 - sigma_distance.size() / 40.0).epsilon(1e-5));
    for (std::size_t i = 1; i < rows.size(); ++i) {
        const double share = std::stod(rows[i][unresolved]);
        CHECK(share >= 0.0);
        CHECK(share <= 1.0);
    }

    // The figure gains a resolution panel with the same unresolved shares.
    const std::string svg = dir + "/scan.svg";
    const auto plotted = run_firnray({"depths", "--depths", "40,120", "--source-distance", "0:800", "--source-depth",
                                      "0:200", "--distance-cells", "20", "--depth-cells", "10", "--max-bounces", "1",
                                      "--resolution", station, "--resolution-distance-cells", "8",
                                      "--resolution-depth-cells", "5", "--quiet", "-o", dir + "/scan.csv", "--plot",
                                      svg});
    INFO(plotted.err);
    REQUIRE(plotted.exit_code == 0);
    const std::string figure = read_file(svg);
    CHECK(figure.find("median 1σ (m)") != std::string::npos);  // the resolution panel's axis
    CHECK(figure.find(fmt::format("unresolved {:.0f}% at 40 m", 100.0 * std::stod(rows[1][unresolved]))) !=
          std::string::npos);

    const auto json = run_firnray({"depths", "--depths", "60", "--distance-cells", "10", "--depth-cells", "10",
                                   "--resolution", station, "--resolution-distance-cells", "4",
                                   "--resolution-depth-cells", "3", "--format", "json", "--quiet"});
    CHECK(json.exit_code == 0);
    CHECK(json.out.find("\"median_sigma_distance_m\"") != std::string::npos);
    CHECK(json.out.find("\"unresolved_fraction\"") != std::string::npos);
    CHECK(json.out.find("\"station\": \"Kestrel Station (fictional)\"") != std::string::npos);
    // Without --resolution the table is unchanged, and its options alone are a usage error.
    const auto plain = run_firnray({"depths", "--depths", "60", "--distance-cells", "10", "--depth-cells", "10"});
    CHECK(plain.out.find("resolution") == std::string::npos);
    CHECK(run_firnray({"depths", "--depths", "60", "--timing-sigma-ns", "1"}).exit_code == 2);
    const auto missing = run_firnray({"depths", "--depths", "60", "--resolution", dir + "/no-such-station.toml"});
    CHECK(missing.exit_code != 0);
    CHECK(missing.err.find("no-such-station.toml") != std::string::npos);
}
