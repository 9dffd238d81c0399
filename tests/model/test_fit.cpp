#include <cmath>
#include <random>
#include <vector>

#include <catch2/catch.hpp>

#include "core/errors.hpp"
#include "model/fit.hpp"

using namespace firnray;

namespace {

struct Synthetic {
    std::vector<double> depth, n;
};

// Samples of n_deep - (n_deep - n_surface) exp(-d / z0) (docs/physics.md §1) with Gaussian noise.
Synthetic synthetic(double n_deep, double n_surface, double z0, int points, double max_depth, double noise,
                    unsigned seed) {
    std::mt19937_64 rng(seed);
    std::normal_distribution<double> gauss(0.0, noise);
    Synthetic s;
    for (int i = 0; i < points; ++i) {
        const double d = max_depth * i / (points - 1);
        s.depth.push_back(d);
        s.n.push_back(n_deep - (n_deep - n_surface) * std::exp(-d / z0) + (noise > 0 ? gauss(rng) : 0.0));
    }
    return s;
}

}  // namespace

TEST_CASE("fit: noise-free exponential data give back the parameters exactly", "[model][fit]") {
    const Synthetic s = synthetic(1.78, 1.35, 37.0, 30, 150.0, 0.0, 1);
    const ExponentialFit fit = fit_exponential(s.depth, s.n);
    CHECK(fit.n_deep == Approx(1.78).epsilon(1e-9));
    CHECK(fit.n_surface == Approx(1.35).epsilon(1e-9));
    CHECK(fit.scale_depth_m == Approx(37.0).epsilon(1e-8));
    CHECK(fit.residual_rms < 1e-10);
    CHECK(fit.points == 30);
    CHECK(fit.parameters == 3);
    CHECK(fit.iterations >= 1);
}

TEST_CASE("fit: recovers known parameters from noisy synthetic data within a few sigma", "[model][fit]") {
    const double noise = 0.004;
    const Synthetic s = synthetic(1.78, 1.35, 37.0, 80, 160.0, noise, 42);
    const ExponentialFit fit = fit_exponential(s.depth, s.n);
    INFO("n_deep " << fit.n_deep << " ± " << fit.n_deep_sigma << ", n_surface " << fit.n_surface << " ± "
                   << fit.n_surface_sigma << ", z0 " << fit.scale_depth_m << " ± " << fit.scale_depth_sigma_m);
    CHECK(std::abs(fit.n_deep - 1.78) < 4 * fit.n_deep_sigma);
    CHECK(std::abs(fit.n_surface - 1.35) < 4 * fit.n_surface_sigma);
    CHECK(std::abs(fit.scale_depth_m - 37.0) < 4 * fit.scale_depth_sigma_m);
    // The uncertainties are of a sensible size for 80 points with noise 0.004.
    CHECK(fit.n_surface_sigma > 1e-4);
    CHECK(fit.n_surface_sigma < 1e-2);
    CHECK(fit.residual_sigma == Approx(noise).epsilon(0.2));
    CHECK(fit.covariance(0, 1) == Approx(fit.covariance(1, 0)));
}

TEST_CASE("fit: the 1-sigma intervals cover the truth about 68% of the time (Gaussian least squares)",
          "[model][fit]") {
    // For linearised least squares with Gaussian noise, each parameter estimate lies within its
    // 1-sigma interval with probability 0.683 (any statistics text, e.g. Press et al. §15.6).
    int covered[3] = {0, 0, 0};
    const int trials = 300;
    for (int t = 0; t < trials; ++t) {
        const Synthetic s = synthetic(1.78, 1.35, 37.0, 50, 150.0, 0.005, 1000 + t);
        const ExponentialFit fit = fit_exponential(s.depth, s.n);
        covered[0] += std::abs(fit.n_deep - 1.78) < fit.n_deep_sigma;
        covered[1] += std::abs(fit.n_surface - 1.35) < fit.n_surface_sigma;
        covered[2] += std::abs(fit.scale_depth_m - 37.0) < fit.scale_depth_sigma_m;
    }
    for (int k = 0; k < 3; ++k) {
        const double fraction = static_cast<double>(covered[k]) / trials;
        INFO("parameter " << k << " covered " << fraction);
        CHECK(fraction > 0.60);  // binomial 1-sigma for 300 trials is 0.027
        CHECK(fraction < 0.77);
    }
}

TEST_CASE("fit: n_deep held fixed", "[model][fit]") {
    const Synthetic s = synthetic(1.78, 1.33, 45.0, 60, 100.0, 0.003, 7);
    ExponentialFitOptions options;
    options.fixed_n_deep = 1.78;
    const ExponentialFit fit = fit_exponential(s.depth, s.n, options);
    CHECK(fit.n_deep_fixed);
    CHECK(fit.n_deep == 1.78);
    CHECK(fit.n_deep_sigma == 0.0);
    CHECK(fit.parameters == 2);
    CHECK(std::abs(fit.n_surface - 1.33) < 4 * fit.n_surface_sigma);
    CHECK(std::abs(fit.scale_depth_m - 45.0) < 4 * fit.scale_depth_sigma_m);
}

TEST_CASE("fit: densities converted with Kovacs et al. (1995) recover the index model", "[model][fit]") {
    // rho(d) = 0.917 - (0.917 - 0.38) exp(-d / 36) g/cm3; n = 1 + 0.845 rho is then exponential with
    // n_deep = 1 + 0.845 * 0.917, n_surface = 1 + 0.845 * 0.38 and the same scale depth.
    std::mt19937_64 rng(3);
    std::normal_distribution<double> gauss(0.0, 0.003);
    std::vector<double> depth, rho;
    for (int i = 0; i < 60; ++i) {
        depth.push_back(2.5 * i);
        rho.push_back(0.917 - (0.917 - 0.38) * std::exp(-depth.back() / 36.0) + gauss(rng));
    }
    const ExponentialFit fit = fit_exponential_to_density(depth, rho, DensityRule::kovacs);
    CHECK(std::abs(fit.n_deep - kovacs_index(0.917)) < 4 * fit.n_deep_sigma);
    CHECK(std::abs(fit.n_surface - kovacs_index(0.38)) < 4 * fit.n_surface_sigma);
    CHECK(std::abs(fit.scale_depth_m - 36.0) < 4 * fit.scale_depth_sigma_m);
    CHECK_THROWS_AS(fit_exponential_to_density(depth, std::vector<double>(60, 450.0), DensityRule::kovacs),
                    DataInputError);  // kg/m3 given as g/cm3
}

TEST_CASE("fit: bad data are data input errors", "[model][fit]") {
    const std::vector<double> d{0, 10, 20, 40, 80}, n{1.35, 1.45, 1.55, 1.68, 1.76};
    CHECK_THROWS_AS(fit_exponential(std::vector<double>{0, 10, 20}, std::vector<double>{1.3, 1.4, 1.5}), DataInputError);
    CHECK_THROWS_AS(fit_exponential(d, std::vector<double>{1.35, 1.45}), DataInputError);
    CHECK_THROWS_AS(fit_exponential(std::vector<double>{0, 10, NAN, 40, 80}, n), DataInputError);
    CHECK_THROWS_AS(fit_exponential(std::vector<double>{0, -10, 20, 40, 80}, n), DataInputError);
    CHECK_THROWS_AS(fit_exponential(d, std::vector<double>{1.35, 0.5, 1.55, 1.68, 1.76}), DataInputError);
    CHECK_THROWS_AS(fit_exponential(d, std::vector<double>{1.35, 1.45, INFINITY, 1.68, 1.76}), DataInputError);
    CHECK_THROWS_AS(fit_exponential(std::vector<double>{5, 5, 5, 9, 9}, n), DataInputError);  // 2 depths, 3 parameters
    // Decreasing with depth: the best exponential has n_surface above n_deep.
    CHECK_THROWS_AS(fit_exponential(d, std::vector<double>{1.76, 1.68, 1.55, 1.45, 1.35}), DataInputError);
    ExponentialFitOptions bad;
    bad.fixed_n_deep = 0.5;
    CHECK_THROWS_AS(fit_exponential(d, n, bad), DataInputError);
}

TEST_CASE("fit: data that cannot fix the scale depth fail as numerical errors", "[model][fit]") {
    // A constant index: any scale depth fits equally well.
    const std::vector<double> d{0, 10, 20, 40, 80}, n(5, 1.5);
    CHECK_THROWS_AS(fit_exponential(d, n), NumericalError);
}

TEST_CASE("fit: an optimum outside what firn can be is a numerical failure, and indices above 2 are refused "
          "(model bounds of docs/model-files.md)",
          "[model][fit]") {
    // Data that fall near the surface before they rise: the least-squares optimum puts n_surface
    // below 1 (found by fuzzing; the fit used to return it as a model).
    const std::vector<double> depth{0, 1, 2, 3, 4, 50};
    const std::vector<double> n{1.05, 1.01, 1.5, 1.7, 1.75, 1.78};
    CHECK_THROWS_AS(fit_exponential(depth, n), NumericalError);
    CHECK_THROWS_WITH(fit_exponential(depth, n), Catch::Contains("outside what firn can be"));
    const std::vector<double> too_high{1.35, 1.5, 1.6, 2.5, 1.75, 1.78};
    CHECK_THROWS_AS(fit_exponential(depth, too_high), DataInputError);
    CHECK_THROWS_WITH(fit_exponential(depth, too_high), Catch::Contains("point 4"));
}
