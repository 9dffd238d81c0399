// Coherent-sum efficiency of shifted pulses: two equal Gaussians dt apart against the closed form
// exp(−dt²/(8σ²)) (the sum peaks midway), and several pulses against a direct evaluation on a
// fine time grid.
#include <catch2/catch.hpp>

#include <cmath>
#include <random>
#include <vector>

#include "beams/coherent_sum.hpp"
#include "core/errors.hpp"

using namespace firnray;

TEST_CASE("two equal Gaussian pulses dt <= 2 sigma apart sum to efficiency exp(-dt^2/(8 sigma^2)) (closed form of two Gaussians)", "[beams][coherent-sum]") {
    const PulseShape pulse;  // 1 ns FWHM
    const double sigma = pulse.sigma_s();
    CHECK(sigma == Approx(1e-9 / 2.354820045).epsilon(1e-9));
    for (double fraction : {0.0, 0.1, 0.5, 1.0, 1.5, 2.0}) {
        const double dt = fraction * sigma;
        const std::vector<double> residuals{0.3e-6, 0.3e-6 + dt};
        CHECK(coherent_sum_efficiency(residuals, 2, pulse) == Approx(std::exp(-dt * dt / (8.0 * sigma * sigma))).epsilon(1e-7));
    }
}

TEST_CASE("several pulses: efficiency equals a direct evaluation of the peak of the summed pulses (direct computation)", "[beams][coherent-sum]") {
    std::mt19937 random(12);
    const PulseShape pulse{2e-9};
    const double sigma = pulse.sigma_s();
    for (int trial = 0; trial < 60; ++trial) {
        const std::size_t antennas = 3 + trial % 6;
        std::uniform_real_distribution<double> spread(0.0, (0.2 + 0.1 * (trial % 40)) * sigma);
        std::vector<double> residuals(antennas);
        for (double& r : residuals) r = 1e-6 + spread(random);
        if (trial % 5 == 0) residuals[1] = NAN;  // an antenna that adds nothing
        // The peak of the summed pulses on a grid of σ/100, then on a grid of σ/10⁵ around the best point.
        auto summed = [&](double t) {
            double sum = 0.0;
            for (double r : residuals)
                if (std::isfinite(r)) sum += pulse.value(t - r);
            return sum / static_cast<double>(antennas);
        };
        double direct = 0.0, at = 0.0;
        for (double t = 1e-6 - 4 * sigma; t < 1e-6 + 8 * sigma; t += sigma * 1e-2)
            if (summed(t) > direct) direct = summed(t), at = t;
        for (double t = at - sigma * 1e-2; t <= at + sigma * 1e-2; t += sigma * 1e-5) direct = std::max(direct, summed(t));
        const double found = coherent_sum_efficiency(residuals, antennas, pulse);
        CHECK(found >= direct - 1e-8);
        CHECK(found == Approx(direct).epsilon(1e-6));
    }
}

TEST_CASE("coherent sum: no pulse gives 0, one of N gives 1/N, and a bad pulse width is refused", "[beams][coherent-sum]") {
    const PulseShape pulse;
    const std::vector<double> none{NAN, NAN};
    CHECK(coherent_sum_efficiency(none, 2, pulse) == 0.0);
    const std::vector<double> one{NAN, 5e-9, NAN, NAN};
    CHECK(coherent_sum_efficiency(one, 4, pulse) == Approx(0.25));
    CHECK_THROWS_AS(coherent_sum_efficiency(one, 4, PulseShape{0.0}), DataInputError);
    CHECK_THROWS_AS(coherent_sum_efficiency(one, 4, PulseShape{-1e-9}), DataInputError);
}
