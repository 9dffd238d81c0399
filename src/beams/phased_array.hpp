// A phased array: the receivers of one vertical string of a station, in depth order, with a
// reference antenna, and the plane-wave delays of its trigger beams in a stratified medium
// (docs/beams.md; docs/physics.md §8 for the accessible interval of a ray parameter).
#pragma once

#include <cstddef>
#include <optional>
#include <string>
#include <vector>

#include "solver/stratified_intervals.hpp"
#include "station/station.hpp"

namespace firnray {

struct PhasedArray {
    std::string string_name;
    std::string origin;                // the station file, for messages
    std::vector<Receiver> antennas;    // top first (depth order)
    std::size_t reference = 0;         // index into antennas

    const Receiver& reference_antenna() const { return antennas[reference]; }
    // Mean distance between neighbouring antennas (m).
    double mean_spacing_m() const;
};

// The receivers of string `string_name`, top first, the top one as reference. Throws
// DataInputError when the station has no such string (the front end checks the name first, with
// a did-you-mean), ModelInputError naming the station file and line for a string of fewer than 2
// (or more than 1000) antennas, two antennas at one depth, an antenna in the air, or antennas not on one vertical line.
PhasedArray make_phased_array(const Station& station, const std::string& string_name);

// Makes `name` the reference antenna; DataInputError when it is not on the array's string.
void set_reference(PhasedArray& array, const std::string& name);

// The same array with its antennas moved: every antenna shifted so that the top one is at
// `top_depth_m` (design scans against depth), or re-spaced evenly by `spacing_m` from the top one
// (design scans against spacing). DataInputError for a depth < 0 or a spacing <= 0.
PhasedArray array_at_depth(const PhasedArray& array, double top_depth_m);
PhasedArray array_with_spacing(const PhasedArray& array, double spacing_m);

// Why a plane wave does not reach an antenna: it turns at `turning_depth_m` before getting there
// (the antenna is above or below the accessible interval of the wave's ray parameter), or the
// antenna lies below a reflecting bottom.
struct Unreached {
    bool antenna_above = true;         // the antenna is above the turning point (false: below)
    bool at_bottom = false;            // the interval ends at a reflecting bottom, not a turning point
    double turning_depth_m = 0.0;      // depth of that end
};

// The plane wave of one arrival zenith at the reference, and its arrival time at each antenna
// relative to the reference: c·Δt = ±∫ √(n² − ξ²) dz (the vertical slowness integral), positive
// along the direction of travel. Conventions: below 90° the wave travels up, above 90° down; at
// exactly 90° the wave turns at the reference and the branch that travels down is taken. An
// antenna met twice (between a turning point and the reference) gets the branch that continues
// the direction of travel at the reference.
struct PlaneWaveOffsets {
    double arrival_zenith_deg = 0.0;
    double ray_parameter = 0.0;                      // ξ = n(z_ref) sin θ
    std::vector<std::optional<double>> offsets_s;    // per antenna; empty where not reached
    std::vector<std::optional<Unreached>> unreached; // per antenna; set where offsets_s is empty
    std::size_t reached() const;
};

// DataInputError for a zenith outside 0..180° or not finite.
PlaneWaveOffsets plane_wave_offsets(const StratifiedProfile& profile, const PhasedArray& array,
                                    double arrival_zenith_deg);

// `count` beam zeniths from `first_deg` to `last_deg` inclusive (count 1: first only). DataInputError
// for a count below 1 or above 1000, or a zenith outside 0..180°.
std::vector<double> evenly_spaced_zeniths(int count, double first_deg, double last_deg);

}  // namespace firnray
