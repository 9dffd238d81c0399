// The trigger beams of a phased array as the `beams` command reports them: each beam's plane-wave
// offsets at every antenna, the same in whole samples at a digitiser's rate, and the half-power
// width of its narrow-band array factor at one frequency.
#pragma once

#include <optional>
#include <vector>

#include "beams/phased_array.hpp"

namespace firnray {

struct BeamTable {
    PhasedArray array;
    std::vector<PlaneWaveOffsets> beams;
    std::vector<double> half_power_width_deg;   // per beam
    double frequency_hz = 300e6;
    std::optional<double> sample_rate_hz;       // offsets in samples only when given

    // round(offset × rate): the nearest whole sample; empty where the offset is, or without a rate.
    std::optional<long> offset_samples(std::size_t beam, std::size_t antenna) const;
};

// DataInputError for no zeniths, a zenith outside 0..180°, a frequency or sample rate not > 0.
BeamTable make_beam_table(const StratifiedProfile& profile, const PhasedArray& array,
                          const std::vector<double>& zeniths_deg, double frequency_hz,
                          std::optional<double> sample_rate_hz);

}  // namespace firnray
