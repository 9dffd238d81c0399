// Every ray path between two depths of any stratified profile at a given horizontal distance
// (physics notes §8): for each range of ξ over which the accessible interval keeps the same kinds
// of ends, each family of paths (a start direction and a number of ends met: U, L, U, … with
// U = turning point or surface above, L = turning point or bottom below), and every root of its
// horizontal distance X(ξ) = R, folds included. Ducted paths are families with several ends in an
// interval bounded on both sides; k half-oscillations count k times one.
#pragma once

#include <memory>
#include <optional>
#include <string>
#include <vector>

#include "solver/snell_integrals.hpp"
#include "solver/stratified_intervals.hpp"

namespace firnray {

enum class StratifiedPathKind : unsigned char {
    direct,           // no end met: monotone in z
    refracted,        // one end, a turning point above
    reflected,        // one end, a reflection at the surface
    bottom,           // at least one reflection at the bottom
    refracted_below,  // one end, a turning point below (where n falls with depth under the ray)
    ducted,           // two or more ends, none of them at the bottom: oscillating in a duct
};
const char* to_string(StratifiedPathKind kind);

enum class PathTurnKind : unsigned char { turning, surface_reflection, bottom_reflection };
const char* to_string(PathTurnKind kind);

// Where a path turns back vertically, in order from the source.
struct PathTurn {
    PathTurnKind kind = PathTurnKind::turning;
    double z_m = 0.0;
    double offset_m = 0.0;  // horizontal distance from the source
};

// A family: the ray leaves the source upward or downward and meets `ends` ends of its interval
// in turn (upward: U, L, U, …; downward: L, U, L, …). ends = 0 is the direct path.
struct PathFamily {
    bool starts_upward = true;
    int ends = 0;
    // "direct", or the ends in order, e.g. "U", "LU", "ULUL".
    std::string label() const;
};

// The legs of one family for one ray level, summed (legs repeated in a duct counted once and
// multiplied). distance_derivative is dX/dξ along the family (turning ends moving with ξ).
struct FamilyLegs {
    LegIntegrals total;
    AccessibleInterval interval;
    double first_leg_m = 0.0;      // from the source to the first end
    double traversal_m = 0.0;      // from one end of the interval to the other
};
// Empty when the family does not exist for this level: the receiver is not in the source's
// interval, a lower end is needed but the interval is unbounded below, or it has no ends at all.
std::optional<FamilyLegs> family_legs(const StratifiedProfile& profile, const RayLevel& level, const PathFamily& family,
                                      double z_source, double z_receiver, bool with_time_and_length = true,
                                      const AttenuationProfile* attenuation = nullptr);

struct StratifiedPath {
    StratifiedPathKind kind = StratifiedPathKind::direct;
    std::string family;          // PathFamily::label()
    double ray_parameter = 0.0;  // ξ = n sin θ
    double time_s = 0.0;
    double length_m = 0.0;
    double launch_zenith_rad = 0.0;   // direction of travel at the source: 0 up, π/2 horizontal, π down
    double arrival_zenith_rad = 0.0;  // at the receiver
    double distance_derivative = 0.0; // ∂X/∂ξ along the family; infinite where the path is horizontal at an end
    // |∂X/∂ξ|·|cos θ0·cos θr|, what the spreading needs (paths/amplitude.hpp, RayTube): finite
    // where the path is horizontal at an end too (the limit, taken on a ray a little less
    // horizontal); 0 where even that fails (then counted as a caustic).
    double derivative_cosines = 0.0;
    double attenuation_exponent = 0.0; // Σ ∫ ds/L_α (0 without an attenuation profile)
    std::vector<PathTurn> turns;
};

struct StratifiedPathOptions {
    // The most ends (turning points and reflections, all counted) a path may meet. 0..64.
    int max_bounces = 1;
    // Whether to include paths reflected at the bottom (only when the profile has one).
    bool bottom_paths = true;
    // Samples of ξ per family and range of ξ, with dX/dξ at each, to bracket every root. 4..10000.
    int scan_samples = 16;
    // The field attenuation to integrate along each path (null: none).
    std::shared_ptr<const AttenuationProfile> attenuation;
};

// Where the accessible interval of a pair between depths z_low <= z_high can change the kinds of
// its ends or jump, as ξ falls: the smallest n between the depths, then each new lowest n met going
// outward from them (a local minimum of n or a flat stretch, StratifiedProfile::stationary_z, lower
// than everything between it and the pair; n of the surface and of the bottom or floor when they
// are such record lows), each with its depth; from the largest ξ down (equal values kept). The
// pair finder searches each range of ξ between two cuts; the map tables stop where it does.
struct RayParameterCut {
    double ray_parameter = 0.0;
    double anchor_z = 0.0;  // n(anchor_z) = ray_parameter
};
std::vector<RayParameterCut> ray_parameter_cuts(const StratifiedProfile& profile, double z_low, double z_high);

// How close to a cut, as a fraction of the range of ξ beside it, roots are sought (n − ξ there,
// far below a rounding error of ξ: the ranges' ξ are offsets from n at the cut's depth).
inline constexpr double stratified_cut_limit = 1e-24;

// The largest relative miss |X − R| / (1 + R) of a path found: beyond it a sign change of X − R is
// a jump (ξ not resolved by a double), not a root.
inline constexpr double stratified_root_residual = 1e-5;

// Every path from z_source to z_receiver (both in the ice, z <= 0, not below the floor) whose ends
// are horizontal_distance_m apart, sorted by time. Empty when there is none (the shadow zone).
// Throws DataInputError for non-finite or out-of-range input and coincident ends.
std::vector<StratifiedPath> find_stratified_paths(const StratifiedProfile& profile, double z_source, double z_receiver,
                                                  double horizontal_distance_m, const StratifiedPathOptions& options = {});

}  // namespace firnray
