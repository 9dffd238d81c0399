#include "beams/phased_array.hpp"

#include <algorithm>
#include <cmath>
#include <numeric>

#include <fmt/format.h>

#include "core/constants.hpp"
#include "core/errors.hpp"
#include "core/text.hpp"
#include "solver/snell_integrals.hpp"

namespace firnray {

namespace {

// Antennas farther apart than this horizontally are not one vertical string: the plane-wave
// delays assume they are.
constexpr double max_horizontal_offset_m = 0.01;
// Antenna counts are kept in 16 bits per map cell; real arrays have a few to a few tens.
constexpr std::size_t max_antennas = 1000;

ModelInputError station_error(const PhasedArray& array, const Receiver& at, const std::string& what) {
    return ModelInputError(what, {array.origin, at.source_line, "string.receiver"});
}

void check_zenith(double zenith_deg) {
    if (!std::isfinite(zenith_deg) || zenith_deg < 0.0 || zenith_deg > 180.0)
        throw DataInputError(fmt::format("an arrival zenith must be between 0 and 180 degrees, not {}",
                                         number_for_message(zenith_deg)),
                             {"", 0, "arrival_zenith_deg"});
}

}  // namespace

double PhasedArray::mean_spacing_m() const {
    if (antennas.size() < 2) return 0.0;
    return (antennas.front().z_m - antennas.back().z_m) / static_cast<double>(antennas.size() - 1);
}

std::size_t PlaneWaveOffsets::reached() const {
    return static_cast<std::size_t>(std::count_if(offsets_s.begin(), offsets_s.end(), [](auto& o) { return o.has_value(); }));
}

PhasedArray make_phased_array(const Station& station, const std::string& string_name) {
    PhasedArray array;
    array.string_name = string_name;
    array.origin = station.origin;
    for (const Receiver& r : station.receivers)
        if (!string_name.empty() && r.string_name == string_name) array.antennas.push_back(r);
    if (array.antennas.empty())
        throw DataInputError(fmt::format("the station has no string named '{}'", printable_excerpt(string_name)),
                             {station.origin, 0, "string"});
    std::stable_sort(array.antennas.begin(), array.antennas.end(),
                     [](const Receiver& a, const Receiver& b) { return a.z_m > b.z_m; });
    if (array.antennas.size() < 2)
        throw station_error(array, array.antennas.front(),
                            fmt::format("string '{}' has one antenna ('{}'); a phased array needs at least 2",
                                        printable_excerpt(string_name), printable_excerpt(array.antennas.front().name)));
    if (array.antennas.size() > max_antennas)
        throw station_error(array, array.antennas.back(),
                            fmt::format("string '{}' has {} antennas; a phased array takes at most {}",
                                        printable_excerpt(string_name), array.antennas.size(), max_antennas));
    const Receiver& top = array.antennas.front();
    for (std::size_t k = 0; k < array.antennas.size(); ++k) {
        const Receiver& r = array.antennas[k];
        if (r.z_m > 0.0 || r.in_air)
            throw station_error(array, r, fmt::format("antenna '{}' of string '{}' is in the air; a phased array's "
                                                      "antennas must be in the ice",
                                                      printable_excerpt(r.name), printable_excerpt(string_name)));
        if (k > 0 && r.z_m == array.antennas[k - 1].z_m)
            throw station_error(array, r, fmt::format("antennas '{}' and '{}' of string '{}' are at the same depth ({} m); "
                                                      "a phased array needs distinct depths",
                                                      printable_excerpt(array.antennas[k - 1].name),
                                                      printable_excerpt(r.name), printable_excerpt(string_name),
                                                      number_for_message(-r.z_m)));
        if (std::hypot(r.x_m - top.x_m, r.y_m - top.y_m) > max_horizontal_offset_m)
            throw station_error(array, r, fmt::format("antenna '{}' is {} m off the vertical line of string '{}'; "
                                                      "the beams assume a vertical string",
                                                      printable_excerpt(r.name),
                                                      number_for_message(std::hypot(r.x_m - top.x_m, r.y_m - top.y_m)),
                                                      printable_excerpt(string_name)));
    }
    return array;
}

void set_reference(PhasedArray& array, const std::string& name) {
    for (std::size_t k = 0; k < array.antennas.size(); ++k)
        if (array.antennas[k].name == name) {
            array.reference = k;
            return;
        }
    std::vector<std::string> names;
    for (const Receiver& r : array.antennas) names.push_back(r.name);
    throw DataInputError(fmt::format("string '{}' has no antenna named '{}'{}", printable_excerpt(array.string_name),
                                     printable_excerpt(name), did_you_mean(name, names)),
                         {"", 0, "reference"});
}

PhasedArray array_at_depth(const PhasedArray& array, double top_depth_m) {
    if (!std::isfinite(top_depth_m) || top_depth_m < 0.0)
        throw DataInputError(fmt::format("an array depth must be >= 0 m, not {}", number_for_message(top_depth_m)),
                             {"", 0, "depth"});
    PhasedArray moved = array;
    const double shift = -top_depth_m - array.antennas.front().z_m;
    for (Receiver& r : moved.antennas) r.z_m += shift;
    return moved;
}

PhasedArray array_with_spacing(const PhasedArray& array, double spacing_m) {
    if (!std::isfinite(spacing_m) || spacing_m <= 0.0)
        throw DataInputError(fmt::format("an antenna spacing must be > 0 m, not {}", number_for_message(spacing_m)),
                             {"", 0, "spacing"});
    PhasedArray spaced = array;
    const double top = array.antennas.front().z_m;
    for (std::size_t k = 0; k < spaced.antennas.size(); ++k) spaced.antennas[k].z_m = top - spacing_m * static_cast<double>(k);
    return spaced;
}

PlaneWaveOffsets plane_wave_offsets(const StratifiedProfile& profile, const PhasedArray& array,
                                    double arrival_zenith_deg) {
    check_zenith(arrival_zenith_deg);
    const double z_ref = array.reference_antenna().z_m;
    const double n_ref = profile.index(z_ref);
    // sin(180°) is not exactly 0 in floating point; straight down and straight up have ξ = 0.
    const bool horizontal = arrival_zenith_deg == 90.0;
    const double xi = horizontal ? n_ref
                      : (arrival_zenith_deg == 0.0 || arrival_zenith_deg == 180.0)
                          ? 0.0
                          : n_ref * std::sin(deg_to_rad(arrival_zenith_deg));
    // Up for zeniths below 90°, down above it and at 90° (the branch below the turning reference).
    const double travel = arrival_zenith_deg < 90.0 ? 1.0 : -1.0;

    PlaneWaveOffsets result;
    result.arrival_zenith_deg = arrival_zenith_deg;
    result.ray_parameter = xi;
    result.offsets_s.resize(array.antennas.size());
    result.unreached.resize(array.antennas.size());
    const RayLevel level = RayLevel::plain(xi);
    // At 90° the reference is itself a turning point; the down-going branch lives in the interval
    // just below it (none where n does not grow with depth there).
    const double below_ref = z_ref - 1e-9 * std::max(1.0, std::abs(z_ref));
    const auto interval = !horizontal                         ? profile.interval_around(level, z_ref)
                          : profile.index(below_ref) > xi ? profile.interval_around(level, below_ref)
                                                              : std::nullopt;
    // A horizontal wave in a layer of constant index (n = ξ all along) reaches all of it at once.
    auto in_uniform_layer = [&](double z) {
        return profile.index(z) == xi && profile.index(0.5 * (z + z_ref)) == xi &&
               profile.minimum_index(std::min(z, z_ref), std::max(z, z_ref)).first == xi;
    };
    for (std::size_t k = 0; k < array.antennas.size(); ++k) {
        const double z = array.antennas[k].z_m;
        if (k == array.reference) {
            result.offsets_s[k] = 0.0;
            continue;
        }
        const bool inside = interval && (interval->contains(z) || (horizontal && z <= z_ref && z >= interval->lower_z));
        if (!inside && in_uniform_layer(z)) {
            result.offsets_s[k] = 0.0;
            continue;
        }
        if (!inside) {
            Unreached why;
            why.antenna_above = z > z_ref;
            if (interval) {
                why.turning_depth_m = -(why.antenna_above ? interval->upper_z : interval->lower_z);
                why.at_bottom = !why.antenna_above && interval->lower_kind == LowerEndKind::bottom;
            } else {
                why.turning_depth_m = -z_ref;
            }
            result.unreached[k] = why;
            continue;
        }
        // Ends where n = ξ are turning points: the quadrature then removes the inverse square root there.
        const AccessibleInterval span = interval.value();
        auto end_at = [&](double end_z) {
            const bool upper_turn = span.upper_kind == UpperEndKind::turning && end_z == span.upper_z;
            const bool lower_turn = span.lower_kind == LowerEndKind::turning && end_z == span.lower_z;
            return LegEndpoint{end_z, (upper_turn || lower_turn || (horizontal && end_z == z_ref)) ? LegEnd::turning
                                                                                                 : LegEnd::fixed};
        };
        const LegIntegrals leg = leg_integrals(profile, level, end_at(z_ref), end_at(z), true, false);
        // c·T − ξ·x = ∫ √(n² − ξ²) dz over the leg (docs/physics.md §8).
        const double vertical_slowness_integral = std::max(0.0, leg.optical_path_m - xi * leg.distance_m);
        const double side = z > z_ref ? 1.0 : -1.0;
        result.offsets_s[k] = travel * side * vertical_slowness_integral / speed_of_light;
    }
    return result;
}

std::vector<double> evenly_spaced_zeniths(int count, double first_deg, double last_deg) {
    if (count < 1 || count > 1000)
        throw DataInputError(fmt::format("the number of beams must be 1 to 1000, not {}", count), {"", 0, "beam-count"});
    check_zenith(first_deg);
    check_zenith(last_deg);
    std::vector<double> zeniths(static_cast<std::size_t>(count));
    for (int b = 0; b < count; ++b)
        zeniths[static_cast<std::size_t>(b)] =
            count == 1 ? first_deg : first_deg + (last_deg - first_deg) * b / static_cast<double>(count - 1);
    zeniths.back() = count == 1 ? first_deg : last_deg;
    return zeniths;
}

}  // namespace firnray
