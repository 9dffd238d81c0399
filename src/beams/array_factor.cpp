#include "beams/array_factor.hpp"

#include <algorithm>
#include <cmath>
#include <complex>

#include <fmt/format.h>

#include "core/constants.hpp"
#include "core/errors.hpp"
#include "core/text.hpp"

namespace firnray {

double array_factor(const PlaneWaveOffsets& wave, const PlaneWaveOffsets& beam, double frequency_hz) {
    if (!std::isfinite(frequency_hz) || frequency_hz <= 0.0)
        throw DataInputError(fmt::format("a frequency must be > 0, not {}", number_for_message(frequency_hz)),
                             {"", 0, "frequency"});
    const std::size_t n = wave.offsets_s.size();
    std::complex<double> sum = 0.0;
    for (std::size_t k = 0; k < n; ++k)
        if (wave.offsets_s[k] && beam.offsets_s[k])
            sum += std::polar(1.0, 2.0 * pi * frequency_hz * (*wave.offsets_s[k] - *beam.offsets_s[k]));
    return n == 0 ? 0.0 : std::abs(sum) / static_cast<double>(n);
}

std::vector<PlaneWaveOffsets> plane_wave_sweep(const StratifiedProfile& profile, const PhasedArray& array,
                                               const std::vector<double>& zeniths_deg) {
    std::vector<PlaneWaveOffsets> sweep;
    sweep.reserve(zeniths_deg.size());
    for (double zenith : zeniths_deg) sweep.push_back(plane_wave_offsets(profile, array, zenith));
    return sweep;
}

ArrayFactorCurve array_factor_curve(const std::vector<PlaneWaveOffsets>& sweep, const PlaneWaveOffsets& beam,
                                    double frequency_hz) {
    ArrayFactorCurve curve;
    for (const PlaneWaveOffsets& wave : sweep) {
        curve.zenith_deg.push_back(wave.arrival_zenith_deg);
        curve.value.push_back(array_factor(wave, beam, frequency_hz));
    }
    return curve;
}

double half_power_width_deg(const StratifiedProfile& profile, const PhasedArray& array, const PlaneWaveOffsets& beam,
                            double frequency_hz) {
    const double peak = array_factor(beam, beam, frequency_hz);
    if (peak <= 0.0) return 0.0;
    const double level = peak / std::sqrt(2.0);
    auto above = [&](double zenith) {
        return array_factor(plane_wave_offsets(profile, array, zenith), beam, frequency_hz) >= level;
    };
    // A step well below the narrowest lobe of a compact array, so that no crossing is stepped over.
    constexpr double step_deg = 0.25;
    auto edge = [&](double direction) {
        const double bound = direction > 0 ? 180.0 : 0.0;
        double inside = beam.arrival_zenith_deg;
        while (inside != bound) {
            const double next = direction > 0 ? std::min(bound, inside + step_deg) : std::max(bound, inside - step_deg);
            if (!above(next)) {
                double outside = next;
                while (std::abs(outside - inside) > 1e-6) {
                    const double middle = 0.5 * (inside + outside);
                    (above(middle) ? inside : outside) = middle;
                }
                return 0.5 * (inside + outside);
            }
            inside = next;
        }
        return bound;
    };
    return edge(1.0) - edge(-1.0);
}

std::vector<double> grating_lobes_deg(const ArrayFactorCurve& curve, double beam_zenith_deg) {
    const auto& z = curve.zenith_deg;
    const auto& v = curve.value;
    std::vector<double> lobes;
    if (z.empty()) return lobes;
    // The sample nearest the beam, and the main lobe as the run around it above half power.
    std::size_t centre = 0;
    for (std::size_t i = 1; i < z.size(); ++i)
        if (std::abs(z[i] - beam_zenith_deg) < std::abs(z[centre] - beam_zenith_deg)) centre = i;
    double peak = v[centre];
    for (std::size_t i = centre; i < z.size() && v[i] >= v[centre] / std::sqrt(2.0); ++i) peak = std::max(peak, v[i]);
    for (std::size_t i = centre + 1; i-- > 0 && v[i] >= v[centre] / std::sqrt(2.0);) peak = std::max(peak, v[i]);
    const double level = peak / std::sqrt(2.0);
    std::size_t low = centre, high = centre;
    while (low > 0 && v[low - 1] >= level) --low;
    while (high + 1 < z.size() && v[high + 1] >= level) ++high;
    for (std::size_t i = 0; i < z.size(); ++i) {
        if (i >= low && i <= high) continue;
        const bool left_ok = i == 0 || v[i] >= v[i - 1];
        const bool right_ok = i + 1 == z.size() || v[i] > v[i + 1];
        if (left_ok && right_ok && v[i] >= level) lobes.push_back(z[i]);
    }
    return lobes;
}

}  // namespace firnray
