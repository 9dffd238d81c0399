// The narrow-band array factor of a phased array's beam against arrival zenith, its half-power
// width and its grating lobes. In a stratified medium the phase of each antenna comes from the
// plane-wave offsets of the arrival angle (beams/phased_array.hpp); in uniform ice this is the
// textbook array factor of a uniform linear array (Balanis, Antenna Theory, ch. 6).
#pragma once

#include <vector>

#include "beams/phased_array.hpp"

namespace firnray {

// |Σ_k exp(i 2π f (τ_k − o_k))| / N over the antennas where both the wave's offset τ_k and the
// beam's offset o_k exist (the others add nothing; N stays the number of antennas). 1 when the
// wave matches the beam at every antenna. DataInputError for a frequency that is not > 0.
double array_factor(const PlaneWaveOffsets& wave, const PlaneWaveOffsets& beam, double frequency_hz);

struct ArrayFactorCurve {
    std::vector<double> zenith_deg;
    std::vector<double> value;  // array_factor at each zenith
};

// The plane waves of `zeniths_deg` at the array, computed once and shared by every beam's curve.
std::vector<PlaneWaveOffsets> plane_wave_sweep(const StratifiedProfile& profile, const PhasedArray& array,
                                               const std::vector<double>& zeniths_deg);
ArrayFactorCurve array_factor_curve(const std::vector<PlaneWaveOffsets>& sweep, const PlaneWaveOffsets& beam,
                                    double frequency_hz);

// Width in arrival zenith of the main lobe where the power |AF|² is at least half of its value at
// the beam's own zenith, found by stepping out from the beam and bisecting each crossing to
// 1e-6°. A lobe that reaches 0° or 180° is cut there (the width is then that of the part inside).
double half_power_width_deg(const StratifiedProfile& profile, const PhasedArray& array, const PlaneWaveOffsets& beam,
                            double frequency_hz);

// Grating lobes on a curve: local maxima outside the main lobe (the run of zeniths around the beam
// where |AF|² stays above half its value at the beam) whose power is above that half too.
std::vector<double> grating_lobes_deg(const ArrayFactorCurve& curve, double beam_zenith_deg);

}  // namespace firnray
