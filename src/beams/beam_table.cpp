#include "beams/beam_table.hpp"

#include <cmath>

#include <fmt/format.h>

#include "beams/array_factor.hpp"
#include "core/errors.hpp"
#include "core/text.hpp"

namespace firnray {

std::optional<long> BeamTable::offset_samples(std::size_t beam, std::size_t antenna) const {
    const auto& offset = beams[beam].offsets_s[antenna];
    if (!offset || !sample_rate_hz) return std::nullopt;
    return std::lround(*offset * *sample_rate_hz);
}

BeamTable make_beam_table(const StratifiedProfile& profile, const PhasedArray& array,
                          const std::vector<double>& zeniths_deg, double frequency_hz,
                          std::optional<double> sample_rate_hz) {
    if (zeniths_deg.empty()) throw DataInputError("no beams: give at least one arrival zenith", {"", 0, "beams"});
    if (!std::isfinite(frequency_hz) || frequency_hz <= 0.0)
        throw DataInputError(fmt::format("a frequency must be > 0, not {}", number_for_message(frequency_hz)),
                             {"", 0, "frequency"});
    if (sample_rate_hz && (!std::isfinite(*sample_rate_hz) || *sample_rate_hz <= 0.0))
        throw DataInputError(fmt::format("a sample rate must be > 0, not {}", number_for_message(*sample_rate_hz)),
                             {"", 0, "sample-rate"});
    BeamTable table;
    table.array = array;
    table.frequency_hz = frequency_hz;
    table.sample_rate_hz = sample_rate_hz;
    for (double zenith : zeniths_deg) {
        table.beams.push_back(plane_wave_offsets(profile, array, zenith));
        table.half_power_width_deg.push_back(half_power_width_deg(profile, array, table.beams.back(), frequency_hz));
    }
    return table;
}

}  // namespace firnray
