#include "beams/coherent_sum.hpp"

#include <algorithm>
#include <cmath>

#include <fmt/format.h>

#include "core/errors.hpp"
#include "core/text.hpp"

namespace firnray {

namespace {

void check_pulse(const PulseShape& pulse) {
    if (!std::isfinite(pulse.fwhm_s) || pulse.fwhm_s <= 0.0)
        throw DataInputError(fmt::format("a pulse width must be > 0, not {} s", number_for_message(pulse.fwhm_s)),
                             {"", 0, "pulse-fwhm"});
}

// A pulse more than 7σ away adds less than e^-24.5 ≈ 2e-11 of its peak: left out of the sum.
constexpr double negligible_exponent = 24.5;

// The sum and its first two derivatives in t, in units of the peak of one pulse.
struct SumValue {
    double value = 0.0, slope = 0.0, curvature = 0.0;
};

SumValue sum_at(std::span<const double> residuals, double t, double inverse_variance) {
    SumValue s;
    for (double r : residuals) {
        if (!std::isfinite(r)) continue;
        const double u = t - r;
        const double exponent = 0.5 * u * u * inverse_variance;
        if (exponent > negligible_exponent) continue;
        const double g = std::exp(-exponent);
        s.value += g;
        s.slope -= u * inverse_variance * g;
        s.curvature += (u * u * inverse_variance - 1.0) * inverse_variance * g;
    }
    return s;
}

}  // namespace

double PulseShape::sigma_s() const { return fwhm_s / (2.0 * std::sqrt(2.0 * std::log(2.0))); }

double PulseShape::value(double time_s) const {
    const double sigma = sigma_s();
    return std::exp(-0.5 * time_s * time_s / (sigma * sigma));
}

double coherent_sum_efficiency(std::span<const double> residuals_s, std::size_t antenna_count, const PulseShape& pulse) {
    check_pulse(pulse);
    const double sigma = pulse.sigma_s();
    const double inverse_variance = 1.0 / (sigma * sigma);
    double mean = 0.0, low = INFINITY, high = -INFINITY;
    std::size_t used = 0;
    for (double r : residuals_s)
        if (std::isfinite(r)) {
            mean += r;
            low = std::min(low, r);
            high = std::max(high, r);
            ++used;
        }
    if (used == 0 || antenna_count == 0) return 0.0;
    mean /= static_cast<double>(used);

    // Pulses that all lie within 2σ of each other sum to one hump: its peak is found from the mean.
    // Wider apart, the sum can have several maxima, each near a residual or the mean of a cluster:
    // start from the best of those.
    double t = mean;
    SumValue at = sum_at(residuals_s, t, inverse_variance);
    if (high - low > 2.0 * sigma)
        for (double r : residuals_s) {
            if (!std::isfinite(r)) continue;
            const SumValue candidate = sum_at(residuals_s, r, inverse_variance);
            if (candidate.value > at.value) {
                at = candidate;
                t = r;
            }
        }
    // Newton on the slope, each step at most σ/2; a step that lowers the sum is halved instead.
    double best = at.value;
    for (int iteration = 0; iteration < 60; ++iteration) {
        double step = at.curvature < 0.0 ? -at.slope / at.curvature : (at.slope >= 0.0 ? 0.5 : -0.5) * sigma;
        step = std::clamp(step, -0.5 * sigma, 0.5 * sigma);
        SumValue next = sum_at(residuals_s, t + step, inverse_variance);
        while (next.value < at.value && std::abs(step) > 1e-4 * sigma) {
            step *= 0.5;
            next = sum_at(residuals_s, t + step, inverse_variance);
        }
        if (next.value < at.value) break;
        t += step;
        at = next;
        best = std::max(best, at.value);
        if (std::abs(step) <= 1e-4 * sigma) break;  // the sum is then within ~1e-8 of its peak
    }
    return std::min(1.0, best / static_cast<double>(antenna_count));
}

}  // namespace firnray
