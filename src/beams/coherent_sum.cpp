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

// The sum and its first two derivatives in t, in units of the peak of one pulse.
struct SumValue {
    double value = 0.0, slope = 0.0, curvature = 0.0;
};

SumValue sum_at(std::span<const double> residuals, double t, double inverse_variance) {
    SumValue s;
    for (double r : residuals) {
        if (!std::isfinite(r)) continue;
        const double u = t - r;
        const double g = std::exp(-0.5 * u * u * inverse_variance);
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

double coherent_sum_at_mean(std::span<const double> residuals_s, std::size_t antenna_count, const PulseShape& pulse) {
    check_pulse(pulse);
    double mean = 0.0;
    std::size_t used = 0;
    for (double r : residuals_s)
        if (std::isfinite(r)) {
            mean += r;
            ++used;
        }
    if (used == 0 || antenna_count == 0) return 0.0;
    const double sigma = pulse.sigma_s();
    return sum_at(residuals_s, mean / static_cast<double>(used), 1.0 / (sigma * sigma)).value /
           static_cast<double>(antenna_count);
}

double coherent_sum_efficiency(std::span<const double> residuals_s, std::size_t antenna_count, const PulseShape& pulse) {
    check_pulse(pulse);
    const double sigma = pulse.sigma_s();
    const double inverse_variance = 1.0 / (sigma * sigma);
    double mean = 0.0;
    std::size_t used = 0;
    for (double r : residuals_s)
        if (std::isfinite(r)) {
            mean += r;
            ++used;
        }
    if (used == 0 || antenna_count == 0) return 0.0;
    mean /= static_cast<double>(used);

    // The sum of equal Gaussians can have several maxima (residuals several σ apart); each lies
    // near a residual or, for a tight cluster, near its mean: start from the best of those.
    double start = mean, best = sum_at(residuals_s, mean, inverse_variance).value;
    for (double r : residuals_s) {
        if (!std::isfinite(r)) continue;
        const double v = sum_at(residuals_s, r, inverse_variance).value;
        if (v > best) {
            best = v;
            start = r;
        }
    }
    // Newton on the slope, each step at most σ/2 and kept only when the sum grows.
    double t = start;
    for (int iteration = 0; iteration < 50; ++iteration) {
        const SumValue s = sum_at(residuals_s, t, inverse_variance);
        double step = s.curvature < 0.0 ? -s.slope / s.curvature : (s.slope >= 0.0 ? 0.5 : -0.5) * sigma;
        step = std::clamp(step, -0.5 * sigma, 0.5 * sigma);
        bool improved = false;
        for (int halving = 0; halving < 30 && std::abs(step) > 1e-9 * sigma; ++halving, step *= 0.5) {
            const double v = sum_at(residuals_s, t + step, inverse_variance).value;
            if (v >= best) {
                best = v;
                t += step;
                improved = true;
                break;
            }
        }
        if (!improved || std::abs(step) <= 1e-9 * sigma) break;
    }
    return std::min(1.0, best / static_cast<double>(antenna_count));
}

}  // namespace firnray
