// Writers of `firnray resolution`: the Cramér–Rao map of a station as a CSV table (one row per
// cell) and as an SVG of four panels (1σ of distance, depth, zenith and azimuth on log colour
// scales; unresolved cells left blank, never drawn as zero).
#pragma once

#include <ostream>

#include "locate/resolution_map.hpp"
#include "model/firn_model.hpp"

namespace firnray {

// Columns: depth_m, distance_m, pulses, resolved, sigma_distance_m, sigma_depth_m,
// sigma_zenith_deg, sigma_azimuth_deg, reason. The 1σ columns are empty where unresolved (the
// reason says why) and sigma_zenith/azimuth where the direction is undefined.
void write_resolution_csv(std::ostream& out, const ResolutionMap& map);
void write_resolution_svg(std::ostream& out, const ResolutionMap& map, const FirnModel& model,
                          const std::string& station_name);

}  // namespace firnray
