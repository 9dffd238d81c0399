#include "paths/amplitude.hpp"

#include <algorithm>
#include <cmath>
#include <limits>

namespace firnray {

double cos_from_ray_parameter(double n, double ray_parameter) {
    return std::sqrt(std::max(0.0, (n - ray_parameter) * (n + ray_parameter))) / n;
}

double spreading_distance(const RayTube& tube) {
    const double r_over_xi =
        tube.ray_parameter > 0.0 ? tube.horizontal_distance_m / tube.ray_parameter : std::abs(tube.distance_derivative);
    return tube.n_source * std::sqrt(r_over_xi * tube.derivative_cosines);
}

bool is_caustic(double spreading_distance_m, double length_m) {
    return !(spreading_distance_m > caustic_fraction * length_m);
}

PathAmplitude path_amplitude(std::complex<double> interface_s, std::complex<double> interface_p, double crossing_flux,
                             double attenuation_exponent, const RayTube& tube) {
    constexpr double nan = std::numeric_limits<double>::quiet_NaN();
    PathAmplitude amplitude;
    amplitude.interface_s = interface_s;
    amplitude.interface_p = interface_p;
    amplitude.flux_factor = std::sqrt(tube.n_source / tube.n_receiver) * crossing_flux;
    amplitude.attenuation_factor = std::exp(-attenuation_exponent);
    amplitude.spreading_distance_m = spreading_distance(tube);
    amplitude.caustic = is_caustic(amplitude.spreading_distance_m, tube.length_m);
    if (amplitude.caustic) {
        amplitude.field_s = amplitude.field_p = {nan, nan};
    } else {
        const double scale = amplitude.flux_factor * amplitude.attenuation_factor / amplitude.spreading_distance_m;
        amplitude.field_s = interface_s * scale;
        amplitude.field_p = interface_p * scale;
    }
    return amplitude;
}

double mean_field_magnitude(const PathAmplitude& amplitude) {
    if (amplitude.caustic) return std::numeric_limits<double>::quiet_NaN();
    return std::sqrt(0.5 * (std::norm(amplitude.field_s) + std::norm(amplitude.field_p)));
}

}  // namespace firnray
