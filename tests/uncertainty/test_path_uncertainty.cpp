// connect --uncertainty: the 1σ of each path against closed forms (t = nL/c in uniform ice), the
// linearised law against Monte Carlo, paths that some draws lack, reproducibility whatever the
// thread count, and a model without an [uncertainty] table refused end to end.
#include <cmath>
#include <string>

#include <catch2/catch.hpp>

#include "core/constants.hpp"
#include "io/csv_reader.hpp"
#include "model/model_file.hpp"
#include "paths/find_paths.hpp"
#include "solver/make_solver.hpp"
#include "support/json_reader.hpp"
#include "support/run_cli.hpp"
#include "uncertainty/path_uncertainty.hpp"

using namespace firnray;
using namespace firnray::test;

namespace {

constexpr double sigma_n = 0.01;

FirnModel uniform_ice() {
    return parse_model("[index]\nkind = \"constant\"\nn = 1.78\n"
                       "[uncertainty]\nparameters = [\"n\"]\ncovariance = [[1e-4]]\n",
                       "uniform.toml");
}

const char* exponential_text =
    "[index]\nkind = \"exponential\"\nn_deep = 1.78\nn_surface = 1.35\nscale_depth_m = 37\n"
    "[uncertainty]\nparameters = [\"n_surface\", \"scale_depth_m\", \"n_deep\"]\n"
    "covariance = [[4e-4, 0.01, 0], [0.01, 9.0, 0], [0, 0, 1e-6]]\n";

FirnModel exponential_with_covariance() { return parse_model(exponential_text, "exponential.toml"); }

PairPaths nominal_paths(const FirnModel& model, const Point& source, const Point& receiver) {
    const auto solver = make_solver(std::make_shared<FirnModel>(model), SolverChoice::automatic);
    PairPaths result;
    result.paths = find_paths(*solver, source, receiver);
    return result;
}

PropagationOptions monte_carlo(int samples, int threads = 1) {
    PropagationOptions options;
    options.method = PropagationMethod::monte_carlo;
    options.samples = samples;
    options.threads = threads;
    return options;
}

}  // namespace

TEST_CASE("connect path time sigma in uniform ice is L sigma_n over c exactly (Fermat, t = nL/c)",
          "[uncertainty][connect]") {
    const FirnModel model = uniform_ice();
    const ModelPerturbation perturbation(model);
    const Point source{300.0, 0.0, -150.0}, receiver{0.0, 0.0, -100.0};
    PairPaths result = nominal_paths(model, source, receiver);
    REQUIRE(!result.paths.empty());
    add_path_spreads(perturbation, {}, {}, source, receiver, result);
    REQUIRE(result.spreads.size() == result.paths.size());
    CHECK(result.spread_models == 2);
    for (std::size_t i = 0; i < result.paths.size(); ++i) {
        const ConnectedPath& p = result.paths[i];
        INFO(to_string(p.kind));
        // a straight path or one mirrored at the surface: its length does not depend on n
        CHECK(result.spreads[i].time_ns == Approx(p.length_m * sigma_n / speed_of_light * 1e9).epsilon(1e-6));
        CHECK(result.spreads[i].absent == 0);
        // straight lines: the angles do not depend on n
        CHECK(result.spreads[i].launch_zenith_deg == Approx(0.0).margin(1e-6));
    }
    CHECK(result.paths.front().length_m == Approx(std::hypot(300.0, 50.0)));
}

TEST_CASE("connect linearised and Monte Carlo path sigmas agree within 10 percent (JCGM 100 2008 against JCGM 101 2008)",
          "[uncertainty][connect]") {
    const FirnModel model = exponential_with_covariance();
    const ModelPerturbation perturbation(model);
    const Point source{400.0, 0.0, -120.0}, receiver{0.0, 0.0, -60.0};
    PairPaths linear = nominal_paths(model, source, receiver);
    REQUIRE(linear.paths.size() >= 2);
    PairPaths sampled = linear;
    add_path_spreads(perturbation, {}, {}, source, receiver, linear);
    add_path_spreads(perturbation, {}, monte_carlo(400, 2), source, receiver, sampled);
    CHECK(sampled.spread_models == 400);
    for (std::size_t i = 0; i < 2; ++i) {
        INFO("path " << i + 1 << ": linearised " << linear.spreads[i].time_ns << " ns, Monte Carlo "
                     << sampled.spreads[i].time_ns);
        CHECK(sampled.spreads[i].absent <= 4);  // a draw far in the tail may put the receiver in the shadow
        CHECK(sampled.spreads[i].time_ns == Approx(linear.spreads[i].time_ns).epsilon(0.10));
        CHECK(sampled.spreads[i].launch_zenith_deg == Approx(linear.spreads[i].launch_zenith_deg).epsilon(0.10));
    }
}

TEST_CASE("connect counts the draws that lack a path near the shadow edge and gives it no linearised sigma (common practice)",
          "[uncertainty][connect]") {
    const FirnModel model = exponential_with_covariance();
    const ModelPerturbation perturbation(model);
    // near the shadow edge: the reflected path of this pair disappears (it turns below the surface
    // instead) when the firn bends rays more strongly, and more strongly still both disappear
    const Point source{250.0, 0.0, -20.0}, receiver{0.0, 0.0, -100.0};
    PairPaths linear = nominal_paths(model, source, receiver);
    REQUIRE(linear.paths.size() == 2);
    REQUIRE(linear.paths[1].kind == PathKind::reflected);
    PairPaths sampled = linear;
    add_path_spreads(perturbation, {}, {}, source, receiver, linear);
    CHECK(std::isnan(linear.spreads[1].time_ns));
    CHECK(linear.spreads[1].absent == 1);
    CHECK(std::isfinite(linear.spreads[0].time_ns));
    add_path_spreads(perturbation, {}, monte_carlo(200), source, receiver, sampled);
    // near the shadow edge: the draws that bend rays most lose both paths, more of them the reflected one
    CHECK(sampled.spreads[0].absent < sampled.spreads[1].absent);
    CHECK(sampled.spreads[1].absent > 0);
    CHECK(sampled.spreads[1].absent < 200);
    CHECK(std::isfinite(sampled.spreads[1].time_ns));  // over the draws that have it
}

TEST_CASE("matching a perturbed path goes by kind and rank within the kind, direct and refracted as one (common practice)",
          "[uncertainty][connect]") {
    std::vector<ConnectedPath> nominal(3), perturbed(3);
    nominal[0].kind = PathKind::refracted;
    nominal[1].kind = PathKind::reflected;
    nominal[2].kind = PathKind::reflected;
    perturbed[0].kind = PathKind::direct;  // the refracted path, its turning point now beyond its end
    perturbed[1].kind = PathKind::reflected;
    perturbed[2].kind = PathKind::bottom;
    CHECK(matching_path(perturbed, nominal, 0) == std::optional<std::size_t>(0));
    CHECK(matching_path(perturbed, nominal, 1) == std::optional<std::size_t>(1));
    CHECK(!matching_path(perturbed, nominal, 2));  // no second reflected path
}

TEST_CASE("connect with Monte Carlo uncertainty gives the same output for 1 and 2 threads, and another seed another one",
          "[uncertainty][connect][cli]") {
    const std::string folder = temp_folder("connect-uncertainty");
    const std::string model = write_file(folder + "/exp.toml", exponential_text);
    const std::string pairs = write_file(folder + "/pairs.csv",
                                         "name,source_x_m,source_z_m,receiver_x_m,receiver_z_m\n"
                                         "a,400,-120,0,-60\nb,250,-20,0,-100\nbad,oops,-20,0,-100\nc,100,-300,0,-50\n");
    const auto run = [&](const std::string& threads, const std::string& seed) {
        return run_firnray({"connect", "--model", model, "--pairs", pairs, "--format", "csv", "--uncertainty-samples",
                            "40", "--seed", seed, "--threads", threads, "--quiet"});
    };
    const CliResult one = run("1", "5"), two = run("2", "5"), other = run("2", "6");
    INFO(one.err);
    REQUIRE(one.exit_code == 7);  // the bad row fails alone
    CHECK(one.out == two.out);
    CHECK(one.out != other.out);
    CHECK_THAT(one.out, Catch::StartsWith("# uncertainty: Monte Carlo, 40 draws, seed 5, 41 models per propagation; 3 parameters"));
    const std::string path = write_file(folder + "/out.csv", one.out);
    const CsvTable table = read_csv(path);
    const std::size_t sigma = table.column("time_sigma_ns"), models = table.column("sigma_models");
    std::size_t with_sigma = 0;
    for (const CsvRow& row : table.rows) {
        if (!table.text(row, table.column("error")).empty()) continue;
        CHECK(table.text(row, models) == "40");
        with_sigma += table.number(row, sigma) > 0.0;
    }
    CHECK(with_sigma >= 4);

    const CliResult single = run_firnray({"connect", "--model", model, "--source", "400,-120", "--receiver", "0,-60",
                                          "--format", "json", "--uncertainty"});
    REQUIRE(single.exit_code == 0);
    const JsonValue doc = parse_json(single.out);
    CHECK(doc["uncertainty"]["method"].str() == "linearised");
    CHECK(doc["uncertainty"]["models"].num() == 7);
    CHECK(doc["paths"][0]["time_sigma_ns"].num() > 0.0);
}

TEST_CASE("connect and delays with uncertainty refuse a model without an uncertainty table (exit 3)",
          "[uncertainty][connect][cli]") {
    const CliResult connect = run_firnray({"connect", "--source", "250,-20", "--receiver", "0,-100", "--uncertainty"});
    CHECK(connect.exit_code == 3);
    CHECK_THAT(connect.err, Catch::Contains("has no [uncertainty] table"));
    const CliResult delays = run_firnray({"delays", "--station", source_path("demo/station.toml"), "--sources",
                                          source_path("demo/calibration-sources.csv"), "--uncertainty-samples", "10"});
    CHECK(delays.exit_code == 3);
    CHECK_THAT(delays.err, Catch::Contains("has no [uncertainty] table"));
}
