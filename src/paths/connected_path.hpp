// One ray path joining a source and a receiver, with everything a user asks of it: kind, time,
// angles, geometry, and the amplitude factors (interfaces, spreading, attenuation). find_paths
// (paths/find_paths.hpp) returns these, sorted by arrival time.
#pragma once

#include <complex>
#include <optional>
#include <vector>

namespace firnray {

// What a path did. Precedence when several apply: bottom > transmitted > ducted > refracted_below >
// reflected > refracted > direct (a path with a bottom bounce is "bottom" even when it also
// crosses the surface or turns in a duct).
enum class PathKind : unsigned char {
    direct,           // monotone in z between the two ends
    refracted,        // rises above both ends and turns below the surface (ξ > n_surface)
    reflected,        // rises above both ends and reflects at the surface (ξ <= n_surface), or in air off the surface
    transmitted,      // crosses the surface: one end in the air
    bottom,           // reflects at the bottom at least once
    refracted_below,  // goes down from both ends and turns below them (where n falls with depth under the pair)
    ducted,           // turns or reflects two or more times, never at the bottom: trapped between two ends of a duct
};
const char* to_string(PathKind kind);

enum class PathEventKind : unsigned char { turning, surface_reflection, bottom_reflection, surface_crossing };
const char* to_string(PathEventKind kind);

// Where the path turns back vertically (at a turning point or a reflection) or crosses the surface,
// in order from the source: what tells two ducted paths apart.
struct PathEvent {
    PathEventKind kind = PathEventKind::turning;
    double offset_m = 0.0;  // horizontal distance from the source, along the azimuth
    double z_m = 0.0;
};

// Field factors of a path. The field at the receiver, relative to the field the source makes at
// 1 m in its own medium, is interface × flux_factor × attenuation_factor / spreading_distance_m
// (given for convenience as field_s and field_p).
struct PathAmplitude {
    // Product of the interface coefficients for s and p polarisation: Fresnel r at each surface
    // reflection, Fresnel t at a surface crossing (trace/fresnel.hpp: Hecht's convention for r_p,
    // exp(−iωt)), √(power reflectivity) at each bottom reflection (no phase information).
    std::complex<double> interface_s{1.0, 0.0}, interface_p{1.0, 0.0};
    // Energy-flux bookkeeping of a ray tube (field ∝ 1/√(n·tube area)): √(n_source / n_receiver),
    // times √(n2 cos θt / (n1 cos θi)) at a surface crossing (common practice). With it the
    // amplitude is the same both ways along a path (reciprocity).
    double flux_factor = 1.0;
    // Geometric spreading (Červený 2001): L_eff = √(r·|∂r/∂θ0|·|cos θr| / sin θ0), which equals
    // the straight-line distance in a homogeneous medium. Computed as
    // n_source·√((r/ξ)·|∂r/∂ξ|·|cos θ0 cos θr|), with the limits ξ → 0 (vertical) and
    // ∂r/∂ξ → ∞ (horizontal at an end) taken analytically.
    double spreading_distance_m = 0.0;
    // ∂r/∂θ0 → 0: L_eff vanishes and ray theory gives no amplitude. Set when L_eff <= 1e-3 × the
    // path length, a focusing gain above 1000 (or when the spreading cannot be computed);
    // field_s/p are then NaN. L_eff itself is still reported.
    bool caustic = false;
    double attenuation_factor = 1.0;  // exp(−Σ attenuation exponents); 1 without an attenuation model
    std::complex<double> field_s{0.0, 0.0}, field_p{0.0, 0.0};
};

struct ConnectedPath {
    PathKind kind = PathKind::direct;
    double time_s = 0.0;
    double ray_parameter = 0.0;        // ξ = n sin θ, the same all along the path
    double launch_zenith_rad = 0.0;    // direction of travel at the source: 0 up, π/2 horizontal, π down
    double arrival_zenith_rad = 0.0;   // direction of travel at the receiver
    double length_m = 0.0;             // arc length
    double horizontal_distance_m = 0.0;  // r between source and receiver (the same for every path of a pair)
    double azimuth_rad = 0.0;          // direction from source to receiver: atan2(Δy, Δx), 0 when r = 0
    // Where the path first turns back at a turning point (refracted: all its turning points share
    // it; a ducted path turns at two depths, both listed in `events`).
    std::optional<double> turning_z_m;
    int turning_points = 0;
    int surface_bounces = 0;           // surface reflections (from below, or from above for air pairs)
    int bottom_bounces = 0;
    bool crosses_surface = false;
    double attenuation_exponent = 0.0; // Σ ∫ ds / L_α
    // ∂r/∂ξ along the path's family (m per unit ξ) and ∂r/∂θ0 = ∂r/∂ξ · n0 cos θ0 (m per radian).
    // Infinite where the path is horizontal at an end (the fold where two families meet).
    double distance_derivative = 0.0;
    double distance_per_launch_angle = 0.0;
    PathAmplitude amplitude;
    std::vector<PathEvent> events;
};

}  // namespace firnray
