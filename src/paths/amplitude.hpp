// The one amplitude and caustic computation of a ray path, shared by find_paths (connect,
// delays) and the arrival tables of maps: ray-tube spreading, the energy-flux factor, the
// interface factors and attenuation, and the single caustic threshold. docs/physics.md §6.3.
#pragma once

#include <complex>

#include "paths/connected_path.hpp"

namespace firnray {

// A path is a caustic when its spreading distance L_eff is at most this fraction of its arc
// length: ray theory would predict a focusing gain above 1000 in field against the same path in
// a homogeneous medium (where L_eff equals the unfolded path length). Near a fold L_eff only
// vanishes like (R_max − R)^{1/4}, so this marks the neighbourhood of the caustic itself.
inline constexpr double caustic_fraction = 1e-3;

// |cos θ| where n sin θ = ξ (the ray parameter), without the cancellation of 1 − (ξ/n)².
double cos_from_ray_parameter(double n, double ray_parameter);

// The ray-tube geometry of one path, as the spreading formula needs it. A ray tube is the bundle
// of rays launched within dθ0 of the path's; the energy flux along it is constant, so the field
// falls as the tube widens: its width at the receiver, per dθ0, is what L_eff measures.
struct RayTube {
    double n_source = 1.0;               // index at the source end
    double n_receiver = 1.0;             // index at the receiver end
    double horizontal_distance_m = 0.0;  // r
    double ray_parameter = 0.0;          // ξ
    // |∂r/∂ξ|·|cos θ0 cos θr| (m per unit ξ). At an end where the ray is horizontal ∂r/∂ξ is
    // infinite and the caller passes the finite limit of the product.
    double derivative_cosines = 0.0;
    // |∂r/∂ξ| itself: r/ξ → ∂r/∂ξ for a vertical path (ξ = 0).
    double distance_derivative = 0.0;
    double length_m = 0.0;               // arc length of the path
};

// Geometric spreading (Červený 2001): L_eff = √(r·|∂r/∂θ0|·|cos θr| / sin θ0), computed as
// n_source·√((r/ξ)·|∂r/∂ξ|·|cos θ0 cos θr|) since ∂ξ/∂θ0 = n_source cos θ0. It equals the
// straight-line distance in a homogeneous medium.
double spreading_distance(const RayTube& tube);

// L_eff at or below caustic_fraction × the path length (or not a number).
bool is_caustic(double spreading_distance_m, double length_m);

// The amplitude of a path: interface factors (Fresnel at the surface, √reflectivity at the
// bottom), crossing_flux the product of √(n2 cos θt / (n1 cos θi)) at each surface crossing (1
// without), the attenuation exponent Σ ∫ ds / L_α, and the tube. Fields are NaN at a caustic.
PathAmplitude path_amplitude(std::complex<double> interface_s, std::complex<double> interface_p, double crossing_flux,
                             double attenuation_exponent, const RayTube& tube);

// The field magnitude averaged over the two polarisations, √(½(|E_s|² + |E_p|²)): the one
// number a map shows per arrival. NaN at a caustic.
double mean_field_magnitude(const PathAmplitude& amplitude);

}  // namespace firnray
