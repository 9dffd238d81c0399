// A source position as people read a reconstruction: distance, depth, zenith and azimuth seen
// from the station centre, each with its 1σ from the 3 × 3 position covariance (linearised
// propagation σ² = gᵀ C g, docs/locate.md).
#pragma once

#include <array>
#include <optional>
#include <span>

#include "core/point.hpp"
#include "station/station.hpp"

namespace firnray {

// Covariance of (x, y, z) in m², row-major.
using PositionCovariance = std::array<std::array<double, 3>, 3>;

struct SourceView {
    double distance_m = 0.0;   // straight-line distance from the station centre
    double depth_m = 0.0;      // −z: below the surface; negative for a source in the air
    double zenith_deg = 0.0;   // direction from the centre to the source: 0 up, 90 horizontal, 180 down
    double azimuth_deg = 0.0;  // from +x toward +y, in (−180, 180]
    double sigma_distance_m = 0.0, sigma_depth_m = 0.0;
    // Empty where the direction is undefined (the source on the vertical through the centre).
    std::optional<double> sigma_zenith_deg, sigma_azimuth_deg;
};

// The mean receiver position: the origin of every view and of the resolution maps.
Point station_centre(std::span<const Receiver> receivers);

SourceView view_from_centre(const Point& centre, const Point& source, const PositionCovariance& covariance);

}  // namespace firnray
