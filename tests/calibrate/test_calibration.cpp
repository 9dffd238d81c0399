// The calibration fit on synthetic pulser times made by the path finder from a known exponential
// profile with Gaussian noise: recovery of the parameters, the spread of the pulls, the degrees
// of freedom with a parameter fixed, and the library's refusals.
#include <catch2/catch.hpp>

#include <cmath>
#include <memory>
#include <random>

#include "calibrate/calibration.hpp"
#include "calibrate/synthetic_pulser_times.hpp"
#include "locate/locate_test_support.hpp"
#include "model/layered_profile.hpp"
#include "model/model_file.hpp"
#include "model/model_parameters.hpp"
#include "solver/make_solver.hpp"

using namespace firnray;
using firnray::test::SyntheticPulser;

namespace {

// Inside the published ranges of polar firn (from memory) and a little off the built-in model
// (n_surface 1.35, n_deep 1.78, scale depth 37 m) that the fits start from.
std::shared_ptr<const FirnModel> true_model() {
    FirnModel model = default_model();
    model.index = std::make_shared<ExponentialProfile>(1.775, 1.37, 33.0);
    return std::make_shared<const FirnModel>(model);
}

// A borehole pulser lowered to three depths (none at a receiver depth) and two near-surface ones.
std::vector<SyntheticPulser> test_pulsers() {
    return {{"hole-25m", {150.0, 40.0, -25.0}},
            {"hole-70m", {150.0, 40.0, -70.0}},
            {"hole-130m", {150.0, 40.0, -130.0}},
            {"surface-60m", {60.0, -40.0, -3.0}},
            {"surface-120m", {-100.0, 60.0, -3.0}}};
}

}  // namespace

TEST_CASE("calibrate recovers the exponential parameters within 3 sigma on noisy synthetic times "
          "(least-squares statistics, Gauss-Markov theorem)",
          "[calibrate]") {
    const Station station = test::three_string_station();
    const auto truth = true_model();
    const auto solver = make_solver(truth, SolverChoice::automatic);
    std::mt19937_64 rng(20261203);
    const PulserTimes times = test::synthetic_pulser_times(*solver, station, test_pulsers(), 0.5, rng, true);
    REQUIRE(times.pulsers.size() >= 4);

    const CalibrationResult fit = calibrate_profile(default_model(), station, times, CalibrationKind::exponential);
    const std::vector<double> true_values = profile_parameter_values(*truth->index);
    REQUIRE(fit.parameters.size() == 3);
    for (std::size_t k = 0; k < 3; ++k) {
        INFO(fit.parameters[k].name << " = " << fit.parameters[k].value << " +- " << fit.parameters[k].sigma);
        CHECK(fit.parameters[k].sigma > 0.0);
        CHECK(std::abs(fit.parameters[k].value - true_values[k]) < 3.0 * fit.parameters[k].sigma);
    }
    CHECK(fit.ndof == static_cast<int>(times.pulse_count()) - 3 - static_cast<int>(times.pulsers.size()));
    CHECK(fit.chi2 < fit.ndof + 5.0 * std::sqrt(2.0 * fit.ndof));
    CHECK(fit.residuals.size() == times.pulse_count());
    CHECK(fit.free_names == std::vector<std::string>{"n_surface", "n_deep", "scale_depth_m"});
    REQUIRE(fit.fitted_model.uncertainty);
    CHECK(fit.fitted_model.uncertainty->parameters->names == fit.free_names);
    // Every second arrival in the data was matched to a second path.
    std::size_t seconds = 0;
    for (const PulseResidual& r : fit.residuals) seconds += r.arrival_order == 2 ? 1 : 0;
    CHECK(seconds > 0);
}

TEST_CASE("calibrate pulls have unit spread within 15 percent over 300 noisy draws "
          "(least-squares statistics, Gauss-Markov theorem)",
          "[calibrate][statistics]") {
    const Station station = test::three_string_station();
    const auto truth = true_model();
    const auto solver = make_solver(truth, SolverChoice::automatic);
    const std::vector<double> true_values = profile_parameter_values(*truth->index);
    // Start from the truth's neighbourhood so that each fit takes few iterations: the pulls
    // measure the covariance, not the path to the minimum (the first test does that).
    FirnModel start = *truth;
    start.index = std::make_shared<ExponentialProfile>(1.78, 1.36, 35.0);
    std::mt19937_64 rng(7);
    const int draws = 300;
    std::vector<double> sum(3, 0.0), sum_squares(3, 0.0);
    const std::vector<SyntheticPulser> pulsers = {test_pulsers()[0], test_pulsers()[2], test_pulsers()[3]};
    for (int draw = 0; draw < draws; ++draw) {
        const PulserTimes times = test::synthetic_pulser_times(*solver, station, pulsers, 0.5, rng);
        const CalibrationResult fit = calibrate_profile(start, station, times, CalibrationKind::exponential);
        for (std::size_t k = 0; k < 3; ++k) {
            const double pull = (fit.parameters[k].value - true_values[k]) / fit.parameters[k].sigma;
            sum[k] += pull;
            sum_squares[k] += pull * pull;
        }
    }
    for (std::size_t k = 0; k < 3; ++k) {
        const double mean = sum[k] / draws;
        const double spread = std::sqrt(sum_squares[k] / draws - mean * mean);
        INFO("parameter " << k << ": pull mean " << mean << ", spread " << spread);
        CHECK(spread > 0.85);
        CHECK(spread < 1.15);
        CHECK(std::abs(mean) < 0.25);  // 4 standard errors of the mean of 300 unit pulls is 0.23
    }
}

TEST_CASE("calibrate with n_deep fixed has ndof = pulses minus free parameters minus pulsers "
          "(least-squares statistics, common practice)",
          "[calibrate]") {
    const Station station = test::three_string_station();
    const auto solver = make_solver(true_model(), SolverChoice::automatic);
    std::mt19937_64 rng(11);
    const PulserTimes times = test::synthetic_pulser_times(*solver, station, test_pulsers(), 0.5, rng);
    CalibrationOptions options;
    options.fixed = {{"n_deep", 1.775}};
    const CalibrationResult fit = calibrate_profile(default_model(), station, times, CalibrationKind::exponential, options);
    CHECK(fit.ndof == static_cast<int>(times.pulse_count()) - 2 - static_cast<int>(times.pulsers.size()));
    CHECK(fit.free_names == std::vector<std::string>{"n_surface", "scale_depth_m"});
    REQUIRE(fit.covariance.size() == 2);
    CHECK(fit.parameters[1].fixed);
    CHECK(fit.parameters[1].value == 1.775);
    CHECK(fit.parameters[1].sigma == 0.0);
    // --fix NAME alone holds the start value.
    options.fixed = {{"scale_depth_m", std::nullopt}};
    const CalibrationResult held = calibrate_profile(default_model(), station, times, CalibrationKind::exponential, options);
    CHECK(held.parameters[2].value == 37.0);
    CHECK(held.ndof == static_cast<int>(times.pulse_count()) - 2 - static_cast<int>(times.pulsers.size()));
}

TEST_CASE("calibrate refuses a fixed parameter the profile lacks, a start model of another kind and too few pulses",
          "[calibrate]") {
    const Station station = test::three_string_station();
    const auto solver = make_solver(true_model(), SolverChoice::automatic);
    std::mt19937_64 rng(3);
    const PulserTimes times = test::synthetic_pulser_times(*solver, station, test_pulsers(), 0.5, rng);
    CalibrationOptions options;
    options.fixed = {{"n_dep", 1.78}};
    try {
        calibrate_profile(default_model(), station, times, CalibrationKind::exponential, options);
        FAIL("no error");
    } catch (const DataInputError& e) {
        CHECK_THAT(e.what(), Catch::Contains("no parameter 'n_dep'") && Catch::Contains("did you mean 'n_deep'"));
        CHECK(e.where().key == "--fix");
    }
    options.fixed = {{"n_surface", 0.9}};
    CHECK_THROWS_AS(calibrate_profile(default_model(), station, times, CalibrationKind::exponential, options),
                    DataInputError);
    try {
        calibrate_profile(default_model(), station, times, CalibrationKind::layered);
        FAIL("no error");
    } catch (const ModelInputError& e) {
        CHECK_THAT(e.what(), Catch::Contains("--fit layered needs a start model with a layered profile"));
    }
    PulserTimes two = times;
    two.pulsers.resize(1);
    two.pulsers[0].pulses.resize(3);  // 3 pulses: 3 parameters + 1 offset
    CHECK_THROWS_WITH(calibrate_profile(default_model(), station, two, CalibrationKind::exponential),
                      Catch::Contains("3 pulses cannot determine 3 free parameters and 1 emission offsets"));
}

TEST_CASE("calibrate fits the layer parameters of a layered start model on synthetic times "
          "(least-squares statistics, Gauss-Markov theorem)",
          "[calibrate][layered]") {
    // Three channels and two pulser depths keep the stratified path finder's work small (about
    // 45 ms per pair on a layered profile, docs/performance.md).
    Station station = test::three_string_station();
    std::erase_if(station.receivers, [](const Receiver& r) { return r.name != "A1" && r.name != "A4" && r.name != "B2"; });
    const auto layered = [](double top_scale_depth_m, double deep_n) {
        FirnModel model = default_model();
        model.index = std::make_shared<LayeredProfile>(
            1.36, std::vector<ExponentialLayer>{{15.0, 1.70, top_scale_depth_m}, {INFINITY, deep_n, 40.0}});
        return model;
    };
    const auto truth = std::make_shared<const FirnModel>(layered(25.0, 1.78));
    const auto solver = make_solver(truth, SolverChoice::automatic);
    std::mt19937_64 rng(5);
    const PulserTimes times = test::synthetic_pulser_times(
        *solver, station, {{"hole-50m", {90.0, 60.0, -50.0}}, {"hole-150m", {90.0, 60.0, -150.0}}}, 0.5, rng, true);
    CalibrationOptions options;
    options.fixed = {{"n_surface", std::nullopt},
                     {"layer[0].n_deep", std::nullopt},
                     {"layer[0].bottom_depth_m", std::nullopt},
                     {"layer[1].scale_depth_m", std::nullopt}};
    options.threads = 2;
    const CalibrationResult fit = calibrate_profile(layered(24.0, 1.782), station, times, CalibrationKind::layered, options);
    CHECK(fit.free_names == std::vector<std::string>{"layer[0].scale_depth_m", "layer[1].n_deep"});
    CHECK(fit.ndof == static_cast<int>(times.pulse_count()) - 2 - 2);
    const CalibratedParameter& scale = fit.parameters[2];
    const CalibratedParameter& deep = fit.parameters[4];
    INFO(scale.value << " +- " << scale.sigma << ", " << deep.value << " +- " << deep.sigma);
    CHECK(std::abs(scale.value - 25.0) < 4.0 * scale.sigma);
    CHECK(std::abs(deep.value - 1.78) < 4.0 * deep.sigma);
}

TEST_CASE("the fitted profile's 1 sigma band is the sigma of n_surface at the surface and of n_deep far below "
          "(linear error propagation, common practice)",
          "[calibrate]") {
    const Station station = test::three_string_station();
    const auto solver = make_solver(true_model(), SolverChoice::automatic);
    std::mt19937_64 rng(17);
    const PulserTimes times = test::synthetic_pulser_times(*solver, station, test_pulsers(), 0.5, rng);
    const CalibrationResult fit = calibrate_profile(default_model(), station, times, CalibrationKind::exponential);
    CHECK(fitted_index_sigma(fit, 0.0) == Approx(fit.parameters[0].sigma).epsilon(1e-4));
    CHECK(fitted_index_sigma(fit, 3000.0) == Approx(fit.parameters[1].sigma).epsilon(1e-4));
    // In between, the band follows gᵀCg with the analytic gradient of the exponential formula.
    const double d = 30.0, z0 = fit.parameters[2].value, a = fit.parameters[1].value, s = fit.parameters[0].value;
    const double e = std::exp(-d / z0);
    const double g[3] = {e, 1.0 - e, -(a - s) * e * d / (z0 * z0)};
    double variance = 0.0;
    for (int i = 0; i < 3; ++i)
        for (int j = 0; j < 3; ++j) variance += g[i] * fit.covariance[static_cast<std::size_t>(i)][static_cast<std::size_t>(j)] * g[j];
    CHECK(fitted_index_sigma(fit, d) == Approx(std::sqrt(variance)).epsilon(1e-4));
}
