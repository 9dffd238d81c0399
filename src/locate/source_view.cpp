#include "locate/source_view.hpp"

#include <algorithm>
#include <cmath>

#include "core/constants.hpp"
#include "core/errors.hpp"

namespace firnray {

namespace {

double propagated_sigma(const std::array<double, 3>& g, const PositionCovariance& c) {
    double variance = 0.0;
    for (int i = 0; i < 3; ++i)
        for (int j = 0; j < 3; ++j) variance += g[i] * c[i][j] * g[j];
    return std::sqrt(std::max(variance, 0.0));
}

}  // namespace

Point station_centre(std::span<const Receiver> receivers) {
    if (receivers.empty()) throw DataInputError("a station needs at least one receiver");
    Point c;
    for (const Receiver& r : receivers) {
        c.x += r.x_m;
        c.y += r.y_m;
        c.z += r.z_m;
    }
    const double n = static_cast<double>(receivers.size());
    return {c.x / n, c.y / n, c.z / n};
}

SourceView view_from_centre(const Point& centre, const Point& source, const PositionCovariance& covariance) {
    const double dx = source.x - centre.x, dy = source.y - centre.y, dz = source.z - centre.z;
    const double horizontal = std::hypot(dx, dy), distance = std::hypot(horizontal, dz);
    SourceView view;
    view.distance_m = distance;
    view.depth_m = -source.z;
    view.sigma_depth_m = std::sqrt(std::max(covariance[2][2], 0.0));
    if (distance > 0.0) {
        view.zenith_deg = rad_to_deg(std::acos(std::clamp(dz / distance, -1.0, 1.0)));
        view.sigma_distance_m = propagated_sigma({dx / distance, dy / distance, dz / distance}, covariance);
    } else {
        view.sigma_distance_m = std::sqrt(std::max(covariance[0][0] + covariance[1][1] + covariance[2][2], 0.0));
    }
    view.azimuth_deg = horizontal > 0.0 ? rad_to_deg(std::atan2(dy, dx)) : 0.0;
    if (horizontal > 0.0) {
        // θ = acos(dz / R), φ = atan2(dy, dx): their gradients with respect to the source.
        const double r2 = distance * distance;
        view.sigma_zenith_deg = rad_to_deg(propagated_sigma(
            {dx * dz / (r2 * horizontal), dy * dz / (r2 * horizontal), -horizontal / r2}, covariance));
        view.sigma_azimuth_deg = rad_to_deg(propagated_sigma(
            {-dy / (horizontal * horizontal), dx / (horizontal * horizontal), 0.0}, covariance));
    }
    return view;
}

}  // namespace firnray
