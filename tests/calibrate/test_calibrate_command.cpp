// End-to-end: firnray calibrate on the demo's synthetic pulser times (bench/make_demo_pulser_times.cpp:
// the path finder on n_surface 1.365, n_deep 1.775, scale depth 40 m, with 0.5 ns of noise), its
// JSON, fixed parameters, the calibrated model file read back with its covariance, bad inputs
// with their exit codes, and the covariance that profile --fit now writes.
#include <catch2/catch.hpp>

#include <cmath>
#include <string>

#include "model/model_file.hpp"
#include "support/json_reader.hpp"
#include "support/run_cli.hpp"

using namespace firnray;
using namespace firnray::test;

namespace {

std::vector<std::string> demo_calibration(std::vector<std::string> extra) {
    std::vector<std::string> args{"calibrate", "--station", source_path("demo/station.toml"), "--times",
                                  source_path("demo/pulser-times.csv"), "--fit", "exponential", "--quiet"};
    args.insert(args.end(), extra.begin(), extra.end());
    return args;
}

}  // namespace

TEST_CASE("calibrate recovers the profile the demo times were made from within 3 sigma "
          "(least-squares statistics, synthetic truth of bench/make_demo_pulser_times.cpp)",
          "[cli][calibrate]") {
    const std::string folder = temp_folder("calibrate");
    const CliResult r = run_firnray(demo_calibration(
        {"--format", "json", "--write-model", folder + "/fitted.toml", "--plot", folder + "/fit.svg"}));
    INFO(r.err);
    REQUIRE(r.exit_code == 0);
    const JsonValue doc = parse_json(r.out);
    const std::pair<const char*, double> truth[] = {{"n_surface", 1.365}, {"n_deep", 1.775}, {"scale_depth_m", 40.0}};
    for (const auto& [name, value] : truth) {
        const JsonValue& p = doc["parameters"][name];
        INFO(name << " = " << p["value"].num() << " +- " << p["sigma"].num());
        CHECK(p["sigma"].num() > 0.0);
        CHECK(std::abs(p["value"].num() - value) < 3.0 * p["sigma"].num());
        CHECK_FALSE(p.has("fixed"));
    }
    REQUIRE(doc["parameter_names"].size() == 3);
    REQUIRE(doc["covariance"].size() == 3);
    const std::size_t pulses = doc["residuals"].size();
    const std::size_t pulsers = doc["pulsers"].size();
    CHECK(pulsers == 10);
    CHECK(doc["ndof"].num() == static_cast<double>(pulses - 3 - pulsers));
    const double ndof = doc["ndof"].num();
    CHECK(std::abs(doc["chi2"].num() - ndof) < 5.0 * std::sqrt(2.0 * ndof));
    const JsonValue& first = doc["residuals"][0];
    for (const char* member : {"pulser", "channel", "measured", "predicted", "residual_ns", "path_kind", "arrival_order",
                               "flags", "pulser_depth_m", "horizontal_distance_m"})
        CHECK(first.has(member));

    // The model file loads back with the fitted values and their covariance.
    const FirnModel model = load_model_file(folder + "/fitted.toml");
    REQUIRE(model.uncertainty);
    REQUIRE(model.uncertainty->parameters);
    CHECK(model.uncertainty->parameters->names == std::vector<std::string>{"n_surface", "n_deep", "scale_depth_m"});
    for (std::size_t a = 0; a < 3; ++a)
        for (std::size_t b = 0; b < 3; ++b)
            CHECK(model.uncertainty->parameters->matrix[a][b] == Approx(doc["covariance"][a][b].num()).epsilon(1e-12));
    CHECK(model.index->index(0.0) == Approx(doc["parameters"]["n_surface"]["value"].num()).epsilon(1e-12));
    CHECK_THAT(read_file(folder + "/fit.svg"), Catch::Contains("<svg"));
}

TEST_CASE("calibrate with fix n_deep keeps it in parameters as fixed and out of the covariance "
          "(least-squares statistics, common practice)",
          "[cli][calibrate]") {
    const CliResult r = run_firnray(demo_calibration({"--format", "json", "--fix", "n_deep=1.78", "--fix", "n_surface"}));
    INFO(r.err);
    REQUIRE(r.exit_code == 0);
    const JsonValue doc = parse_json(r.out);
    CHECK(doc["parameters"]["n_deep"]["fixed"].boolean);
    CHECK(doc["parameters"]["n_deep"]["value"].num() == 1.78);
    CHECK(doc["parameters"]["n_deep"]["sigma"].num() == 0.0);
    CHECK(doc["parameters"]["n_surface"]["value"].num() == 1.35);  // the built-in start value
    REQUIRE(doc["parameter_names"].size() == 1);
    CHECK(doc["parameter_names"][0].string == "scale_depth_m");
    REQUIRE(doc["covariance"].size() == 1);
    CHECK(doc["ndof"].num() == static_cast<double>(doc["residuals"].size() - 1 - doc["pulsers"].size()));
}

TEST_CASE("calibrate bad inputs name what and where, with their exit codes", "[cli][calibrate]") {
    const std::string folder = temp_folder("calibrate-bad");
    const std::string header = "pulser,pulser_x_m,pulser_y_m,pulser_z_m,channel,time_ns\n";
    const std::string unknown = write_file(folder + "/unknown.csv", header + "p,90,60,-25,A1,100\np,90,60,-25,A5,130\n");
    CliResult r = run_firnray({"calibrate", "--station", source_path("demo/station.toml"), "--times", unknown, "--fit",
                               "exponential"});
    CHECK(r.exit_code == 4);
    CHECK_THAT(r.err, Catch::Contains("unknown.csv:3:") && Catch::Contains("'A5' is not a receiver") &&
                          Catch::Contains("did you mean"));

    const std::string lonely =
        write_file(folder + "/lonely.csv", header + "p,90,60,-25,A1,100\np,90,60,-25,B1,130\nq,0,0,-50,A2,90\n");
    r = run_firnray({"calibrate", "--station", source_path("demo/station.toml"), "--times", lonely, "--fit",
                     "exponential"});
    CHECK(r.exit_code == 4);
    CHECK_THAT(r.err, Catch::Contains("lonely.csv:4:") && Catch::Contains("pulser 'q' has one pulse only"));

    r = run_firnray(demo_calibration({"--fix", "scale_depth=30"}));
    CHECK(r.exit_code == 2);
    CHECK_THAT(r.err, Catch::Contains("--fix") && Catch::Contains("no parameter 'scale_depth'") &&
                          Catch::Contains("did you mean 'scale_depth_m'"));

    for (const char* bad : {"n_deep=", "=1.78", "n_deep=1.7x", "n deep=1.7"}) {
        INFO(bad);
        r = run_firnray(demo_calibration({"--fix", bad}));
        CHECK(r.exit_code == 2);
        CHECK_THAT(r.err, Catch::Contains("--fix"));
    }

    r = run_firnray(demo_calibration({"--fix", "n_deep=1.7", "--fix", "n_deep=1.8"}));
    CHECK(r.exit_code == 2);
    CHECK_THAT(r.err, Catch::Contains("n_deep is fixed twice"));

    r = run_firnray({"calibrate", "--station", source_path("demo/station.toml"), "--times",
                     source_path("demo/pulser-times.csv"), "--fit", "layered"});
    CHECK(r.exit_code == 3);
    CHECK_THAT(r.err, Catch::Contains("--fit layered needs a start model with a layered profile"));
}

TEST_CASE("calibrate with a density log adds its own chi2 term and ndof", "[cli][calibrate]") {
    const CliResult r = run_firnray(demo_calibration({"--format", "json", "--density-log",
                                                      source_path("models/synthetic-density.csv"), "--density-column",
                                                      "density_kg_m3", "--density-rule", "kovacs", "--log-sigma-n",
                                                      "0.02"}));
    INFO(r.err);
    REQUIRE(r.exit_code == 0);
    const JsonValue doc = parse_json(r.out);
    const double points = doc["density_log"]["points"].num();
    CHECK(points > 0);
    CHECK(doc["ndof"].num() == static_cast<double>(doc["residuals"].size()) + points - 3 -
                                   static_cast<double>(doc["pulsers"].size()));
    CHECK(doc["chi2"].num() == Approx(doc["chi2_times"].num() + doc["density_log"]["chi2"].num()));
}

TEST_CASE("profile fit write-model carries the covariance of the fit in uncertainty", "[cli][calibrate]") {
    const std::string folder = temp_folder("profile-fit-covariance");
    const CliResult r = run_firnray({"profile", "--fit", source_path("models/synthetic-density.csv"),
                                     "--density-column", "density_kg_m3", "--density-rule", "kovacs", "--format",
                                     "json", "--write-model", folder + "/fit.toml", "--fix-n-deep", "1.78"});
    INFO(r.err);
    REQUIRE(r.exit_code == 0);
    const FirnModel model = load_model_file(folder + "/fit.toml");
    REQUIRE(model.uncertainty);
    REQUIRE(model.uncertainty->parameters);
    CHECK(model.uncertainty->parameters->names == std::vector<std::string>{"n_surface", "scale_depth_m"});
    CHECK(model.uncertainty->parameters->matrix[0][0] > 0.0);
}
