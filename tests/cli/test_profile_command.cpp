// End-to-end tests of `firnray profile`: tables, fits, and the exit codes and messages of bad input.
#include <cmath>
#include <cstdlib>
#include <filesystem>
#include <random>

#include <catch2/catch.hpp>
#include <fmt/format.h>

#include "io/csv_reader.hpp"
#include "model/model_file.hpp"
#include "support/run_cli.hpp"

using namespace firnray;
using firnray::test::read_file;
using firnray::test::run_firnray;
using firnray::test::source_path;
using firnray::test::temp_folder;
using firnray::test::write_file;

TEST_CASE("profile: the CSV table of the built-in model parses and matches docs/physics.md §1", "[cli][profile]") {
    const auto r = run_firnray({"profile", "--to-depth", "100", "--step", "2.5"});
    REQUIRE(r.exit_code == 0);
    const CsvTable t = parse_csv(r.out, "stdout");
    REQUIRE(t.columns == std::vector<std::string>{"depth_m", "z_m", "n", "dn_dz_per_m"});
    REQUIRE(t.rows.size() == 41);
    for (const auto& row : t.rows) {
        const double depth = t.number(row, "depth_m");
        CHECK(t.number(row, "z_m") == Approx(-depth).margin(1e-12));
        // n = n_deep - (n_deep - n_surface) exp(z / z0) with the built-in 1.78, 1.35, 37 m.
        CHECK(t.number(row, "n") == Approx(1.78 - 0.43 * std::exp(-depth / 37.0)).epsilon(1e-9));
        CHECK(t.number(row, "dn_dz_per_m") == Approx(-0.43 / 37.0 * std::exp(-depth / 37.0)).epsilon(1e-9));
    }
    CHECK(t.number(t.rows.back(), "depth_m") == 100.0);
}

TEST_CASE("profile: JSON output and --output to a file", "[cli][profile]") {
    const std::string dir = temp_folder("profile");
    const auto r = run_firnray({"profile", "--model", source_path("models/demo-site.toml"), "--format", "json",
                                "--to-depth", "20", "--output", dir + "/p.json"});
    REQUIRE(r.exit_code == 0);
    CHECK(r.out.empty());
    const std::string json = read_file(dir + "/p.json");
    CHECK(json.find("\"name\": \"Halvard Dome (fictional)\"") != std::string::npos);
    CHECK(json.find("\"samples\": [") != std::string::npos);
    CHECK(json.find("\"depth_m\": 20,") != std::string::npos);
}

TEST_CASE("profile: a bad model file exits 3 with file:line: key message", "[cli][profile]") {
    const std::string dir = temp_folder("profile-bad");
    const std::string path = write_file(dir + "/bad.toml",
                                        "name = \"bad\"\n[index]\nkind = \"exponential\"\nn_deep = 1.78\n"
                                        "n_surface = 1.35\nscale_depth_m = -4\n");
    const auto r = run_firnray({"profile", "--model", path});
    CHECK(r.exit_code == 3);
    CHECK(r.out.empty());
    CHECK(r.err.find(path + ":6: key 'index.scale_depth_m': ") != std::string::npos);
    const auto missing = run_firnray({"profile", "--model", dir + "/none.toml"});
    CHECK(missing.exit_code == 3);
    CHECK(missing.err.find(dir + "/none.toml") != std::string::npos);
}

TEST_CASE("profile: usage errors exit 2", "[cli][profile]") {
    CHECK(run_firnray({"profile", "--step", "0"}).exit_code == 2);
    CHECK(run_firnray({"profile", "--from-depth", "50", "--to-depth", "10"}).exit_code == 2);
    CHECK(run_firnray({"profile", "--format", "text"}).exit_code == 2);
    CHECK(run_firnray({"profile", "--format", "xml"}).exit_code == 2);
    CHECK(run_firnray({"profile", "--no-such-option"}).exit_code == 2);
    CHECK(run_firnray({"profile", "--density-rule", "kovacs"}).exit_code == 2);  // needs --fit
    const std::string data = source_path("models/synthetic-density.csv");
    CHECK(run_firnray({"profile", "--fit", data, "--density-column", "density_kg_m3"}).exit_code == 2);  // no rule
    CHECK(run_firnray({"profile", "--fit", data, "--format", "csv"}).exit_code == 2);
    CHECK(run_firnray({"profile", "--fit", data, "--to-depth", "5"}).exit_code == 2);
    const auto help = run_firnray({"profile", "--help"});
    CHECK(help.exit_code == 0);
    CHECK(help.out.find("Examples:") != std::string::npos);
    CHECK(help.out.find("z up") != std::string::npos);
}

TEST_CASE("profile --fit: recovers synthetic parameters, and the written model loads back", "[cli][profile]") {
    const std::string dir = temp_folder("profile-fit");
    std::mt19937_64 rng(11);
    std::normal_distribution<double> noise(0.0, 0.002);
    std::string csv = "# synthetic test data\nz,index\n";
    for (int i = 0; i <= 60; ++i) {
        const double depth = 2.0 * i;
        csv += fmt::format("{},{}\n", -depth, 1.775 - (1.775 - 1.34) * std::exp(-depth / 41.0) + noise(rng));
    }
    write_file(dir + "/log.csv", csv);
    const auto r = run_firnray({"profile", "--fit", dir + "/log.csv", "--z-column", "z", "--n-column", "index",
                                "--write-model", dir + "/fitted.toml", "--name", "test fit"});
    REQUIRE(r.exit_code == 0);
    CHECK(r.out.find("n_deep        = ") != std::string::npos);
    CHECK(r.out.find("(1 sigma)") != std::string::npos);
    const FirnModel fitted = load_model_file(dir + "/fitted.toml");
    CHECK(fitted.name == "test fit");
    const auto& p = dynamic_cast<const ExponentialProfile&>(*fitted.index);
    CHECK(p.n_deep() == Approx(1.775).margin(0.01));
    CHECK(p.n_surface() == Approx(1.34).margin(0.01));
    CHECK(p.scale_depth_m() == Approx(41.0).margin(3.0));
    const auto table = run_firnray({"profile", "--model", dir + "/fitted.toml", "--to-depth", "10"});
    CHECK(table.exit_code == 0);

    const auto json = run_firnray({"profile", "--fit", dir + "/log.csv", "--z-column", "z", "--n-column", "index",
                                   "--format", "json", "--fix-n-deep", "1.775"});
    REQUIRE(json.exit_code == 0);
    CHECK(json.out.find("\"fixed\": true") != std::string::npos);
    CHECK(json.out.find("\"covariance\": [") != std::string::npos);
}

TEST_CASE("profile --fit: densities with a rule, bad rows are data errors (exit 4) naming the line",
          "[cli][profile]") {
    const std::string data = source_path("models/synthetic-density.csv");
    const auto r = run_firnray({"profile", "--fit", data, "--density-column", "density_kg_m3", "--density-rule", "kovacs"});
    REQUIRE(r.exit_code == 0);
    // The synthetic log was made from 917 - 537 exp(-d / 36 m) kg/m3: by Kovacs et al. (1995)
    // n_deep = 1 + 0.845 * 0.917 = 1.7749 and the scale depth is 36 m.
    CHECK(r.out.find("n_deep        = 1.77") != std::string::npos);
    CHECK(r.out.find("scale_depth_m = 3") != std::string::npos);

    const std::string dir = temp_folder("profile-fit-bad");
    write_file(dir + "/bad.csv", "depth_m,n\n0,1.35\n10,1.45\n20,oops\n40,1.68\n80,1.76\n");
    const auto bad = run_firnray({"profile", "--fit", dir + "/bad.csv", "--write-model", dir + "/m.toml"});
    CHECK(bad.exit_code == 4);
    CHECK(bad.err.find(dir + "/bad.csv:4: key 'n': 'oops' is not a finite number") != std::string::npos);
    CHECK_FALSE(std::filesystem::exists(dir + "/m.toml"));
    write_file(dir + "/few.csv", "depth_m,n\n0,1.35\n10,1.45\n");
    CHECK(run_firnray({"profile", "--fit", dir + "/few.csv"}).exit_code == 4);
    write_file(dir + "/flat.csv", "depth_m,n\n0,1.5\n10,1.5\n20,1.5\n40,1.5\n");
    CHECK(run_firnray({"profile", "--fit", dir + "/flat.csv"}).exit_code == 5);
    CHECK(run_firnray({"profile", "--fit", dir + "/none.csv"}).exit_code == 4);
}

TEST_CASE("profile --plot: SVGs of the model and of a fit, titled with the model and the data", "[cli][profile]") {
    const std::string dir = temp_folder("profile-plot");
    const auto r = run_firnray({"profile", "--model", source_path("models/demo-site.toml"), "--to-depth", "150",
                                "--output", dir + "/p.csv", "--plot", dir + "/p.svg"});
    REQUIRE(r.exit_code == 0);
    const std::string svg = read_file(dir + "/p.svg");
    CHECK(svg.find("<svg") != std::string::npos);
    // librsvg (an independent SVG implementation) renders it.
    REQUIRE(std::system("command -v rsvg-convert >/dev/null 2>&1") == 0);
    CHECK(std::system(("rsvg-convert '" + dir + "/p.svg' -o '" + dir + "/p.png' 2>/dev/null").c_str()) == 0);
    CHECK(svg.find("Halvard Dome (fictional)") != std::string::npos);
    CHECK(svg.find("depth (m, increasing downward") != std::string::npos);
    CHECK(svg.find("</svg>") != std::string::npos);

    const auto fit = run_firnray({"profile", "--fit", source_path("models/synthetic-density.csv"), "--density-column",
                                  "density_kg_m3", "--density-rule", "looyenga", "--plot", dir + "/fit.svg"});
    REQUIRE(fit.exit_code == 0);
    const std::string fit_svg = read_file(dir + "/fit.svg");
    CHECK(fit_svg.find("Exponential fit to synthetic-density.csv") != std::string::npos);
    CHECK(fit_svg.find("looyenga") != std::string::npos);
    // A plot that cannot be written is an output error (exit 6) and leaves nothing behind.
    CHECK(run_firnray({"profile", "--plot", dir + "/no/such/folder/p.svg"}).exit_code == 6);
}

TEST_CASE("profile: a log with inversions lists them and their ducts in the CSV, the JSON and on the plot",
          "[cli][profile][inversions]") {
    const std::string dir = temp_folder("profile-inversions");
    // n falls with depth from 2 to 3 m: one inversion, one duct around 2 m.
    write_file(dir + "/log.toml", "name = \"lens\"\n[index]\nkind = \"table\"\n"
                                  "depth_m = [0, 1, 2, 3, 4, 6, 10]\nn = [1.30, 1.40, 1.50, 1.44, 1.52, 1.60, 1.70]\n");
    const auto csv = run_firnray({"profile", "--model", dir + "/log.toml", "--depths", "0:10:0.5", "--plot",
                                  dir + "/p.svg"});
    REQUIRE(csv.exit_code == 0);
    CHECK(csv.out.rfind("# n falls with depth in 1 interval of this profile, making 1 duct", 0) == 0);
    CHECK(csv.out.find("# inversion 1: n falls with depth from 1.5 at 2 m to 1.44 at 3 m") != std::string::npos);
    CHECK(csv.out.find("# duct 1: rays with ray parameter between 1.44 and 1.5 are trapped around 2 m deep")
          != std::string::npos);
    // Readers that skip # lines (firnray's own) still see the same table.
    const CsvTable t = parse_csv(csv.out, "stdout");
    CHECK(t.columns == std::vector<std::string>{"depth_m", "z_m", "n", "dn_dz_per_m"});
    CHECK(t.rows.size() == 21);

    const auto json = run_firnray({"profile", "--model", dir + "/log.toml", "--format", "json", "--depths", "0:10:1"});
    REQUIRE(json.exit_code == 0);
    CHECK(json.out.find("\"inversions\": [") != std::string::npos);
    CHECK(json.out.find("\"top_depth_m\": 2,") != std::string::npos);
    CHECK(json.out.find("\"n_bottom\": 1.44") != std::string::npos);
    CHECK(json.out.find("\"ducts\": [") != std::string::npos);
    CHECK(json.out.find("\"axis_depth_m\": 2,") != std::string::npos);
    CHECK(json.out.find("\"ray_parameter_low\": 1.44") != std::string::npos);

    const std::string svg = read_file(dir + "/p.svg");
    CHECK(svg.find("n falls with depth (1 interval, numbered)") != std::string::npos);
    CHECK(svg.find("inversion 1") != std::string::npos);
    CHECK(std::system(("rsvg-convert '" + dir + "/p.svg' -o '" + dir + "/p.png' 2>/dev/null").c_str()) == 0);

    // A profile whose n grows with depth says nothing more than before.
    const auto plain = run_firnray({"profile", "--to-depth", "10"});
    CHECK(plain.out.rfind("depth_m,z_m,n,dn_dz_per_m", 0) == 0);
    const auto plain_json = run_firnray({"profile", "--to-depth", "10", "--format", "json"});
    CHECK(plain_json.out.find("inversions") == std::string::npos);
}

TEST_CASE("profile: the demo's synthetic log loads with its warnings on stderr, also under --quiet of other commands",
          "[cli][profile][warnings]") {
    const auto r = run_firnray({"profile", "--model", source_path("models/halvard-log.toml"), "--depths", "0:40:1"});
    REQUIRE(r.exit_code == 0);
    CHECK(r.err.find("warning: ") == 0);
    CHECK(r.err.find("halvard-density-log.csv:") != std::string::npos);
    CHECK(r.err.find("n falls by") != std::string::npos);
    CHECK(r.out.find("# n falls with depth in ") == 0);
    // Every command that loads a model shows them, --quiet or not.
    const auto trace = run_firnray({"trace", "--model", source_path("models/halvard-log.toml"), "--from", "0,-100",
                                    "--zenith-range", "80:100:10", "--max-distance", "10"});
    CHECK(trace.err.find("warning: ") != std::string::npos);
}

TEST_CASE("profile: table data no firn can be exits 3 naming file, line and column", "[cli][profile][errors]") {
    const std::string dir = temp_folder("profile-bad-data");
    write_file(dir + "/log.csv", "depth_m,rho\n0,400\n10,1100\n20,700\n30,800\n");
    write_file(dir + "/m.toml", "[index]\nkind = \"table\"\nfile = \"log.csv\"\ndepth_column = \"depth_m\"\n"
                                "density_column = \"rho\"\ndensity_unit = \"kg/m3\"\ndensity_rule = \"kovacs\"\n");
    const auto r = run_firnray({"profile", "--model", dir + "/m.toml"});
    CHECK(r.exit_code == 3);
    CHECK(r.err.find("log.csv:3:4: key 'rho': density 1100 kg/m3 is not a snow, firn or ice density")
          != std::string::npos);
}
