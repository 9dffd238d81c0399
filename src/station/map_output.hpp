// Writers for maps and scans: CSV tables and SVG figures. Pure functions from results to text,
// so the front end can render everything first and write files only once all of it succeeded.
#pragma once

#include <string>
#include <vector>

#include "model/firn_model.hpp"
#include "station/depth_scan.hpp"
#include "station/station.hpp"
#include "station/visibility_map.hpp"

namespace firnray {

enum class MapColouring { kinds, receivers, time_between, first_time, amplitude };
// "kinds", "receivers", "time-between", "first-time", "amplitude"; DataInputError otherwise.
MapColouring parse_map_colouring(const std::string& text);

// "direct+refracted", or "none".
std::string kinds_label(std::uint8_t kinds);

// One row per cell: depth_m, distance_m, paths, kinds, receivers_seeing, visible,
// first_time_ns, time_between_ns, amplitude_per_m (empty fields where not defined).
std::string visibility_grid_csv(const VisibilityMap& map);
// One row per source depth: depth_m, max_visible_distance_m ("inf" where unbounded, empty if none).
std::string visibility_boundary_csv(const VisibilityMap& map);
std::string visibility_map_svg(const VisibilityMap& map, const FirnModel& model, const std::vector<Receiver>& receivers,
                               MapColouring colouring);

// One row per candidate depth with every metric of DepthScanRow, and the best depth flagged.
std::string depth_scan_csv(const DepthScan& scan);
std::string depth_scan_json(const DepthScan& scan, const FirnModel& model, const MapGrid& region);
std::string depth_scan_svg(const DepthScan& scan, const FirnModel& model, const MapGrid& region);

}  // namespace firnray
