// The Snell integrals of one ray leg in any stratified profile, for one ray parameter ξ:
//   x = ∫ ξ/Q dz,  c·T = ∫ n²/Q dz,  s = ∫ n/Q dz,  Q = √(n² − ξ²)  (physics notes §8),
// and ∂x/∂ξ, by Gauss–Legendre quadrature over the profile's cells. At an end where Q vanishes
// (a turning point) or nearly does (a ray almost horizontal at a fixed end), z = z_root ± u²
// removes the inverse square root, so the rule converges fast; elsewhere each panel's order or
// size follows the distance to the nearest zero of Q² (from a local quadratic model of n² − ξ²),
// except next to a local minimum of n where ξ is just below it (Q² has two zeros just off the real
// axis there), integrated in t with z = z_m ± s·sinh t.
// n − ξ comes from RayLevel, so that rays near n_deep keep their accuracy (see RayLevel).
#pragma once

#include "solver/stratified_intervals.hpp"

namespace firnray {

class AttenuationProfile;

enum class LegEnd : unsigned char {
    fixed,    // a given depth (source, receiver, surface or bottom reflection)
    turning,  // a turning point of the ray: n = ξ there, and the end moves with ξ
};

struct LegEndpoint {
    double z = 0.0;
    LegEnd kind = LegEnd::fixed;
};

struct LegIntegrals {
    double distance_m = 0.0;      // x >= 0
    double optical_path_m = 0.0;  // c·T
    double length_m = 0.0;        // s
    double attenuation_exponent = 0.0;  // ∫ ds/L_α, when an attenuation profile is given
    // ∂x/∂ξ (m per unit ξ): at fixed ends ∫ n²/Q³ dz; with a turning end, the total derivative as
    // that end moves with ξ (finite, possibly negative). Infinite at a fixed end where n = ξ.
    double distance_derivative = 0.0;
};

// The leg between a and b (either order), monotone in z, inside one accessible interval of
// `level`: n > ξ strictly between the ends. A turning end must be a root of n = ξ (from
// StratifiedProfile::interval_around). A turning end where dn/dz = 0 too (a double root: the ray
// is trapped horizontally there) gives infinite distance, time and length and a NaN derivative:
// a limit, which path finders treat as such. Throws DataInputError for ends above the surface or
// below the profile's floor. With an attenuation profile (and with_time_and_length) the field
// attenuation exponent ∫ ds/L_α is added: s/L for a uniform length, the same quadrature otherwise.
// Runs of whole cells inside the leg, and the cell of a turning end when the leg goes on beyond
// it, come from tables over ξ kept on the profile (built lazily, thread-safe, checked against the
// quadrature as they are built; see SnellCellTables in snell_integrals.cpp); partial cells at
// fixed ends, anything the tables do not cover, and everything when an attenuation profile
// varies with depth, by the quadrature above.
LegIntegrals leg_integrals(const StratifiedProfile& profile, const RayLevel& level, LegEndpoint a, LegEndpoint b,
                           bool with_time_and_length = true, bool with_derivative = true,
                           const AttenuationProfile* attenuation = nullptr);

// The leg from a turning end known to its cell only (its z anywhere inside the cell that holds the
// turning point: StratifiedProfile::interval_around with cell_only_turning) to a fixed end beyond
// that cell, where the cell's table serves the turning part (which needs the cell and ξ, not the
// turning depth); empty where it does not (solve for the turning point then). No attenuation.
std::optional<LegIntegrals> leg_integrals_from_turning_cell(const StratifiedProfile& profile, const RayLevel& level,
                                                            double turning_z, double fixed_z, bool with_time_and_length,
                                                            bool with_derivative = true);

// The same by quadrature alone, every cell included (the reference the tables are built from).
LegIntegrals leg_integrals_by_quadrature(const StratifiedProfile& profile, const RayLevel& level, LegEndpoint a,
                                         LegEndpoint b, bool with_time_and_length = true, bool with_derivative = true,
                                         const AttenuationProfile* attenuation = nullptr);

}  // namespace firnray
