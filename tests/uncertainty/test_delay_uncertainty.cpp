// delays --uncertainty: the time differences between channels take the joint covariance of the
// times (one profile for every channel), checked against the closed form of uniform ice and
// against the quadrature sum that independent errors would give; Monte Carlo against linearised.
#include <cmath>
#include <string>

#include <catch2/catch.hpp>

#include "core/constants.hpp"
#include "io/csv_reader.hpp"
#include "model/model_file.hpp"
#include "solver/make_solver.hpp"
#include "station/delay_table.hpp"
#include "support/run_cli.hpp"
#include "uncertainty/path_uncertainty.hpp"

using namespace firnray;
using namespace firnray::test;

namespace {

std::vector<Receiver> nearby_channels() {
    std::vector<Receiver> receivers(3);
    receivers[0] = {"A1", "A", 0.0, 0.0, -100.0, false, 0};
    receivers[1] = {"A2", "A", 0.0, 0.0, -110.0, false, 0};
    receivers[2] = {"B1", "B", 30.0, 0.0, -100.0, false, 0};
    return receivers;
}

SourceDelays nominal_delays(const FirnModel& model, const std::vector<Receiver>& receivers, const Point& source) {
    const auto solver = make_solver(std::make_shared<FirnModel>(model), SolverChoice::automatic);
    DelayOptions options;
    return compute_delays(*solver, receivers, {DelaySource{"s", 0, source, ""}}, options).front();
}

}  // namespace

TEST_CASE("delays time difference sigma in uniform ice is sigma_n times the path length difference over c exactly "
          "(t = nL/c, GUM JCGM 100 2008 law of propagation with correlated inputs)",
          "[uncertainty][delays]") {
    const FirnModel model = parse_model("[index]\nkind = \"constant\"\nn = 1.78\n"
                                        "[uncertainty]\nparameters = [\"n\"]\ncovariance = [[1e-4]]\n",
                                        "uniform.toml");
    const double sigma_n = 0.01;
    const ModelPerturbation perturbation(model);
    const auto receivers = nearby_channels();
    const Point source{300.0, 0.0, -150.0};
    SourceDelays delays = nominal_delays(model, receivers, source);
    add_delay_spreads(perturbation, {}, {}, receivers, 0, source, delays);
    CHECK(delays.spread_models == 2);
    const auto length_to = [&](std::size_t k) { return delays.receivers[k].paths.front().length_m; };
    for (std::size_t k = 0; k < receivers.size(); ++k) {
        const ReceiverArrivals& here = delays.receivers[k];
        REQUIRE(here.spreads.size() == here.paths.size());
        const double sigma_time = here.spreads.front().time_s;
        CHECK(sigma_time == Approx(length_to(k) * sigma_n / speed_of_light).epsilon(1e-6));
        if (k == 0) continue;
        const double expected = sigma_n * std::abs(length_to(k) - length_to(0)) / speed_of_light;
        CHECK(here.first_minus_reference_first_sigma_s == Approx(expected).epsilon(1e-5));
        CHECK(here.spreads.front().minus_reference_same_kind_s == Approx(expected).epsilon(1e-5));
        // independent errors would add in quadrature: far more than the correlated difference
        const double quadrature = std::hypot(sigma_time, delays.receivers[0].spreads.front().time_s);
        CHECK(here.first_minus_reference_first_sigma_s < 0.2 * quadrature);
    }
    // the difference between the two paths at one channel: their lengths differ too
    const ReceiverArrivals& a1 = delays.receivers[0];
    REQUIRE(a1.paths.size() >= 2);
    CHECK(a1.second_minus_first_sigma_s ==
          Approx(sigma_n * (a1.paths[1].length_m - a1.paths[0].length_m) / speed_of_light).epsilon(1e-5));
}

TEST_CASE("delays difference sigmas on firn are below the quadrature sum for nearby channels, and Monte Carlo "
          "agrees with linearised within 10 percent (JCGM 101 2008 against JCGM 100 2008)",
          "[uncertainty][delays]") {
    const FirnModel model =
        parse_model("[index]\nkind = \"exponential\"\nn_deep = 1.78\nn_surface = 1.35\nscale_depth_m = 37\n"
                    "[uncertainty]\nparameters = [\"n_surface\", \"scale_depth_m\", \"n_deep\"]\n"
                    "covariance = [[4e-4, 0.01, 0], [0.01, 9.0, 0], [0, 0, 1e-6]]\n",
                    "exponential.toml");
    const ModelPerturbation perturbation(model);
    const auto receivers = nearby_channels();
    const Point source{400.0, 0.0, -150.0};
    SourceDelays linear = nominal_delays(model, receivers, source);
    SourceDelays sampled = linear;
    add_delay_spreads(perturbation, {}, {}, receivers, 0, source, linear);
    PropagationOptions options;
    options.method = PropagationMethod::monte_carlo;
    options.samples = 400;
    options.threads = 2;
    add_delay_spreads(perturbation, {}, options, receivers, 0, source, sampled);
    for (std::size_t k = 1; k < receivers.size(); ++k) {
        const ReceiverArrivals& l = linear.receivers[k];
        const ReceiverArrivals& s = sampled.receivers[k];
        INFO("channel " << receivers[k].name);
        const double quadrature = std::hypot(l.spreads.front().time_s, linear.receivers[0].spreads.front().time_s);
        CHECK(l.first_minus_reference_first_sigma_s < 0.5 * quadrature);
        CHECK(s.first_minus_reference_first_sigma_s == Approx(l.first_minus_reference_first_sigma_s).epsilon(0.10));
        CHECK(s.spreads.front().time_s == Approx(l.spreads.front().time_s).epsilon(0.10));
    }
}

TEST_CASE("delays with Monte Carlo uncertainty gives the same table for 1 and 2 threads", "[uncertainty][delays][cli]") {
    const std::string folder = temp_folder("delays-uncertainty");
    const std::string model = write_file(
        folder + "/exp.toml", "[index]\nkind = \"exponential\"\nn_deep = 1.78\nn_surface = 1.35\nscale_depth_m = 37\n"
                              "[uncertainty]\nparameters = [\"n_surface\", \"scale_depth_m\"]\n"
                              "covariance = [[4e-4, 0.01], [0.01, 9.0]]\n");
    const auto run = [&](const std::string& threads) {
        return run_firnray({"delays", "--model", model, "--station", source_path("demo/station.toml"), "--sources",
                            source_path("demo/calibration-sources.csv"), "--reference", "A1",
                            "--uncertainty-samples", "30", "--threads", threads, "--quiet"});
    };
    const CliResult one = run("1"), two = run("2");
    INFO(one.err);
    REQUIRE(one.exit_code == 0);
    CHECK(one.out == two.out);
    const CsvTable table = read_csv(write_file(folder + "/out.csv", one.out));
    const std::size_t sigma = table.column("time_sigma_ns");
    std::size_t with_sigma = 0;
    for (const CsvRow& row : table.rows)
        if (table.text(row, table.column("kind")) != "none") with_sigma += table.number(row, sigma) > 0.0;
    CHECK(with_sigma > 10);
}
