// The one point type of the library: a position in the site's frame. Path finding, stations
// and batch inputs all speak of positions in it, so they share it rather than converting.
#pragma once

namespace firnray {

// A position: x, y horizontal, z up (surface z = 0, ice z < 0, air z > 0), metres. For x,z
// points leave y = 0. Only the horizontal distance hypot(Δx, Δy) and the azimuth matter.
struct Point {
    double x = 0.0, y = 0.0, z = 0.0;
};

}  // namespace firnray
