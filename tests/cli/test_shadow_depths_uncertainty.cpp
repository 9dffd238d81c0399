// End-to-end: shadow and depths with --uncertainty / --uncertainty-samples, run as a user would:
// the new columns and comment line, reproducible Monte Carlo output for any --threads, bad input,
// and SVGs that rsvg-convert (librsvg, Debian package librsvg2-bin) renders.
#include <catch2/catch.hpp>

#include <cstdlib>
#include <filesystem>
#include <sstream>

#include "support/run_cli.hpp"

using namespace firnray::test;
namespace fs = std::filesystem;

namespace {

const char* const fitted_model =
    "[index]\nkind = \"exponential\"\nn_deep = 1.78\nn_surface = 1.35\nscale_depth_m = 37\n"
    "[uncertainty]\nparameters = [\"n_surface\", \"scale_depth_m\", \"n_deep\"]\n"
    "covariance = [[4e-4, 0.012, 0], [0.012, 4.0, 0], [0, 0, 1e-6]]\n";

const char* const plain_model = "[index]\nkind = \"exponential\"\nn_deep = 1.78\nn_surface = 1.35\nscale_depth_m = 37\n";

std::vector<std::string> lines_of(const std::string& text) {
    std::vector<std::string> lines;
    std::stringstream in(text);
    std::string line;
    while (std::getline(in, line)) lines.push_back(line);
    return lines;
}

std::vector<std::string> shadow_args(const std::string& model, const std::string& boundary) {
    return {"shadow", "--model", model, "--receiver", "0,-60", "--source-distance", "0:1500", "--distance-cells", "30",
            "--source-depth", "0:300", "--depth-cells", "12", "--ray-parameters", "400", "-o", "/dev/null",
            "--boundary", boundary, "--quiet"};
}

void require_svg_renders(const std::string& svg_path) {
    const std::string png = svg_path + ".png";
    const int status = std::system(("rsvg-convert '" + svg_path + "' -o '" + png + "' 2>/dev/null").c_str());
    INFO("rsvg-convert (Debian package librsvg2-bin) must render " << svg_path);
    REQUIRE(status == 0);
    REQUIRE(fs::file_size(png) > 1000);
}

}  // namespace

TEST_CASE("firnray shadow --uncertainty: boundary sigma columns, the method line and a band on the map",
          "[cli][shadow][uncertainty]") {
    const std::string dir = temp_folder("shadow-unc");
    const std::string model = write_file(dir + "/fitted.toml", fitted_model);
    auto args = shadow_args(model, dir + "/b.csv");
    args.insert(args.end(), {"--uncertainty", "--plot", dir + "/map.svg"});
    const auto r = run_firnray(args);
    INFO(r.err);
    REQUIRE(r.exit_code == 0);
    const auto lines = lines_of(read_file(dir + "/b.csv"));
    REQUIRE(lines.size() == 2 + 12);
    CHECK(lines[0].rfind("# uncertainty: linearised", 0) == 0);
    CHECK(lines[0].find("7 models; 3 parameters (n_surface, scale_depth_m, n_deep)") != std::string::npos);
    CHECK(lines[1] == "depth_m,max_visible_distance_m,max_visible_distance_sigma_m,models_without_boundary,models_unbounded");
    // Every row of this region has a finite boundary, hence a 1σ and no absent model.
    for (std::size_t k = 2; k < lines.size(); ++k) {
        std::stringstream row(lines[k]);
        std::string depth, boundary, sigma, without, unbounded;
        std::getline(row, depth, ',');
        std::getline(row, boundary, ',');
        std::getline(row, sigma, ',');
        std::getline(row, without, ',');
        std::getline(row, unbounded, ',');
        INFO(lines[k]);
        CHECK(std::stod(sigma) > 0.0);
        CHECK(without == "0");
        CHECK(unbounded == "0");
    }
    const std::string svg = read_file(dir + "/map.svg");
    CHECK(svg.find("boundary ± 1σ (linearised; 3 parameters (n_surface, scale_depth_m, n_deep))") != std::string::npos);
    require_svg_renders(dir + "/map.svg");

    // Without the options, the boundary CSV is what it always was.
    const auto plain = run_firnray(shadow_args(model, dir + "/plain.csv"));
    REQUIRE(plain.exit_code == 0);
    CHECK(read_file(dir + "/plain.csv").rfind("depth_m,max_visible_distance_m\n", 0) == 0);
}

TEST_CASE("firnray shadow --uncertainty-samples: byte-identical for --threads 1 and 2, another seed differs",
          "[cli][shadow][uncertainty]") {
    const std::string dir = temp_folder("shadow-mc");
    const std::string model = write_file(dir + "/fitted.toml", fitted_model);
    std::string outputs[3];
    const std::vector<std::vector<std::string>> extra{{"--threads", "1"},
                                                      {"--threads", "2"},
                                                      {"--threads", "2", "--seed", "7"}};
    for (int k = 0; k < 3; ++k) {
        auto args = shadow_args(model, dir + "/b" + std::to_string(k) + ".csv");
        args.insert(args.end(), {"--uncertainty-samples", "20"});
        args.insert(args.end(), extra[k].begin(), extra[k].end());
        const auto r = run_firnray(args);
        INFO(r.err);
        REQUIRE(r.exit_code == 0);
        outputs[k] = read_file(dir + "/b" + std::to_string(k) + ".csv");
    }
    CHECK(outputs[0] == outputs[1]);
    CHECK(outputs[0] != outputs[2]);
    CHECK(outputs[0].rfind("# uncertainty: Monte Carlo, 20 draws, seed 20261203", 0) == 0);
    CHECK(outputs[2].rfind("# uncertainty: Monte Carlo, 20 draws, seed 7", 0) == 0);
}

TEST_CASE("firnray shadow --uncertainty with a station and min-receivers", "[cli][shadow][uncertainty]") {
    const std::string dir = temp_folder("shadow-station-unc");
    const std::string model = write_file(dir + "/fitted.toml", fitted_model);
    const std::string station = write_file(dir + "/station.toml",
                                           "[[receiver]]\nname = \"a\"\nx_m = 0\ny_m = 0\nz_m = -40\n"
                                           "[[receiver]]\nname = \"b\"\nx_m = 30\ny_m = 10\nz_m = -80\n"
                                           "[[receiver]]\nname = \"c\"\nx_m = -20\ny_m = -25\nz_m = -60\n");
    const auto r = run_firnray({"shadow", "--model", model, "--station", station, "--min-receivers", "2",
                                "--source-distance", "0:1500", "--distance-cells", "30", "--source-depth", "0:300",
                                "--depth-cells", "8", "--ray-parameters", "400", "-o", "/dev/null", "--boundary",
                                dir + "/b.csv", "--plot", dir + "/map.svg", "--uncertainty-samples", "10", "--quiet"});
    INFO(r.err);
    REQUIRE(r.exit_code == 0);
    const auto lines = lines_of(read_file(dir + "/b.csv"));
    REQUIRE(lines.size() == 2 + 8);
    CHECK(lines[0].rfind("# uncertainty: Monte Carlo, 10 draws", 0) == 0);
    require_svg_renders(dir + "/map.svg");
}

TEST_CASE("firnray shadow and depths refuse --uncertainty without an uncertainty table (exit 3), --seed alone and a covariance too large for memory (exit 2)",
          "[cli][shadow][depths][uncertainty]") {
    const std::string dir = temp_folder("unc-bad");
    const std::string plain = write_file(dir + "/plain.toml", plain_model);
    const std::string fitted = write_file(dir + "/fitted.toml", fitted_model);
    auto args = shadow_args(plain, dir + "/b.csv");
    args.push_back("--uncertainty");
    const auto no_table = run_firnray(args);
    CHECK(no_table.exit_code == 3);
    CHECK(no_table.err.find("[uncertainty]") != std::string::npos);
    CHECK(!fs::exists(dir + "/b.csv"));

    const auto depths_no_table = run_firnray({"depths", "--model", plain, "--depths", "60", "--uncertainty-samples",
                                              "5", "--quiet"});
    CHECK(depths_no_table.exit_code == 3);
    CHECK(depths_no_table.err.find("[uncertainty]") != std::string::npos);

    auto seed_only = shadow_args(fitted, dir + "/b.csv");
    seed_only.insert(seed_only.end(), {"--seed", "5"});
    const auto seed = run_firnray(seed_only);
    CHECK(seed.exit_code == 2);
    CHECK(seed.err.find("--seed") != std::string::npos);
    const auto depths_seed = run_firnray({"depths", "--model", fitted, "--depths", "60", "--seed", "5", "--quiet"});
    CHECK(depths_seed.exit_code == 2);

    // The covariance of two outputs per depth row is counted by the memory check.
    const auto too_big = run_firnray({"shadow", "--model", fitted, "--receiver", "0,-60", "--depth-cells", "20000",
                                      "--distance-cells", "10", "--uncertainty-samples", "100", "--boundary",
                                      dir + "/b.csv", "-o", dir + "/g.csv", "--quiet"});
    CHECK(too_big.exit_code == 2);
    CHECK(too_big.err.find("with its boundary's uncertainty") != std::string::npos);

    auto both = shadow_args(fitted, dir + "/b.csv");
    both.insert(both.end(), {"--uncertainty", "--uncertainty-samples", "10"});
    CHECK(run_firnray(both).exit_code == 2);
}

TEST_CASE("firnray depths --uncertainty: sigma columns, JSON sigma members and bands on the plot",
          "[cli][depths][uncertainty]") {
    const std::string dir = temp_folder("depths-unc");
    const std::string model = write_file(dir + "/fitted.toml", fitted_model);
    const std::vector<std::string> base{"depths", "--model", model, "--depths", "40,100", "--source-distance", "0:1500",
                                        "--source-depth", "0:300", "--distance-cells", "40", "--depth-cells", "20",
                                        "--ray-parameters", "300", "--quiet"};
    auto csv_args = base;
    csv_args.insert(csv_args.end(), {"--uncertainty", "--plot", dir + "/d.svg"});
    const auto csv = run_firnray(csv_args);
    INFO(csv.err);
    REQUIRE(csv.exit_code == 0);
    const auto lines = lines_of(csv.out);
    REQUIRE(lines.size() == 4);
    CHECK(lines[0].rfind("# uncertainty: linearised", 0) == 0);
    CHECK(lines[1].find(",ducted_only_volume_m3,bottom_only_volume_m3,visible_volume_sigma_m3,visible_fraction_sigma,"
                        "two_path_volume_sigma_m3,strong_volume_sigma_m3,ducted_only_volume_sigma_m3,"
                        "bottom_only_volume_sigma_m3") != std::string::npos);
    require_svg_renders(dir + "/d.svg");
    CHECK(read_file(dir + "/d.svg").find("visible ± 1σ (linearised; 3 parameters (n_surface, scale_depth_m, n_deep))") != std::string::npos);

    auto json_args = base;
    json_args.insert(json_args.end(), {"--uncertainty-samples", "6", "--format", "json", "--threads", "2"});
    const auto json = run_firnray(json_args);
    INFO(json.err);
    REQUIRE(json.exit_code == 0);
    CHECK(json.out.find("\"method\": \"monte-carlo\",\n    \"samples\": 6,\n    \"seed\": 20261203") !=
          std::string::npos);
    CHECK(json.out.find("\"sigma\": {\n        \"visible_volume_m3\": ") != std::string::npos);
    json_args[json_args.size() - 1] = "1";
    const auto json_one = run_firnray(json_args);
    CHECK(json_one.out == json.out);
}
