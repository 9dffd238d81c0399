// Physical constants and unit conversions used across firnray.
// Internally: metres, seconds, radians. At the interfaces: ns and degrees, named so.
#pragma once

#include <numbers>

namespace firnray {

inline constexpr double speed_of_light = 299'792'458.0;  // m/s, exact (SI definition)
inline constexpr double pi = std::numbers::pi;
inline constexpr double seconds_to_ns = 1e9;

constexpr double deg_to_rad(double deg) { return deg * pi / 180.0; }
constexpr double rad_to_deg(double rad) { return rad * 180.0 / pi; }

}  // namespace firnray
