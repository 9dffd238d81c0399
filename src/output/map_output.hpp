// Writers for maps and scans: CSV tables, JSON and SVG figures. Each renders to a std::ostream
// (a million-cell grid goes out in blocks); the std::string wrappers of the same name let the
// front end render everything first and write files only once all of it succeeded.
#pragma once

#include <cstdint>
#include <ostream>
#include <string>
#include <vector>

#include "locate/resolution_map.hpp"
#include "model/firn_model.hpp"
#include "station/depth_scan.hpp"
#include "station/station.hpp"
#include "station/visibility_map.hpp"
#include "uncertainty/map_uncertainty.hpp"

namespace firnray {

enum class MapColouring { kinds, receivers, time_between, first_time, amplitude };
// "kinds", "receivers", "time-between", "first-time", "amplitude"; DataInputError otherwise.
MapColouring parse_map_colouring(const std::string& text);

// "direct+refracted", or "none".
std::string kinds_label(std::uint8_t kinds);

// One row per cell: depth_m, distance_m, paths, kinds, receivers_seeing, visible,
// first_time_ns, time_between_ns, amplitude_per_m. Empty fields where not defined: no time
// where no receiver sees the cell, no time between where the first receiver has one path, no
// amplitude where every arrival is at a caustic.
void write_visibility_grid_csv(std::ostream& out, const VisibilityMap& map);
std::string visibility_grid_csv(const VisibilityMap& map);
// One row per source depth: depth_m, max_visible_distance_m ("inf" where unbounded, empty if none).
// With an uncertainty (`shadow --uncertainty`, one row per depth of the map), a '# uncertainty:'
// line (method, models, seed, what the uncertainty is) goes before the header and three columns
// follow: max_visible_distance_sigma_m (empty where it cannot be given), models_without_boundary
// and models_unbounded (BoundaryUncertainty).
void write_visibility_boundary_csv(std::ostream& out, const VisibilityMap& map,
                                   const BoundaryUncertainty* uncertainty = nullptr);
std::string visibility_boundary_csv(const VisibilityMap& map, const BoundaryUncertainty* uncertainty = nullptr);
// With an uncertainty the boundary is drawn inside a band of ± 1σ.
void write_visibility_map_svg(std::ostream& out, const VisibilityMap& map, const FirnModel& model,
                              const std::vector<Receiver>& receivers, MapColouring colouring,
                              const BoundaryUncertainty* uncertainty = nullptr);
std::string visibility_map_svg(const VisibilityMap& map, const FirnModel& model, const std::vector<Receiver>& receivers,
                               MapColouring colouring, const BoundaryUncertainty* uncertainty = nullptr);

// "Monte Carlo, 100 draws, seed 20261203 (2 made no valid profile), 101 models; 3 parameters
// (n_surface, n_deep, scale_depth_m)": how a propagation was made, for the outputs to state it.
std::string propagation_summary_text(const PropagationSummary& summary);

// One row per candidate depth with every metric of DepthScanRow, and the best depth flagged. The
// times between paths are empty (JSON: null) for a depth with no two-path cell. With a
// resolution scan (`depths --resolution`, one row per depth of the scan) the resolution columns
// follow (JSON: a "resolution" member per depth and one describing the scan); medians are empty
// (null) at a depth where no cell is resolved. With an uncertainty (`depths --uncertainty`, one
// row per depth of the scan) a '# uncertainty:' line goes before the header and the 1σ columns
// come last: visible_volume_sigma_m3, visible_fraction_sigma, two_path_volume_sigma_m3,
// strong_volume_sigma_m3 (empty without a threshold), ducted_only_volume_sigma_m3,
// bottom_only_volume_sigma_m3 (JSON: an "uncertainty" member and a "sigma" member per depth).
void write_depth_scan_csv(std::ostream& out, const DepthScan& scan, const DepthResolutionScan* resolution = nullptr,
                          const DepthScanUncertainty* uncertainty = nullptr);
std::string depth_scan_csv(const DepthScan& scan, const DepthResolutionScan* resolution = nullptr,
                           const DepthScanUncertainty* uncertainty = nullptr);
void write_depth_scan_json(std::ostream& out, const DepthScan& scan, const FirnModel& model, const MapGrid& region,
                           const DepthResolutionScan* resolution = nullptr,
                           const DepthScanUncertainty* uncertainty = nullptr);
std::string depth_scan_json(const DepthScan& scan, const FirnModel& model, const MapGrid& region,
                            const DepthResolutionScan* resolution = nullptr,
                            const DepthScanUncertainty* uncertainty = nullptr);
// With an uncertainty the visible and two-path shares are drawn with ± 1σ bands.
// With `resolution` (depths --resolution) a third panel shows the station's median 1σ of
// distance and depth against the candidate depth (log scale of the values is not needed: both
// in m) and the unresolved share.
void write_depth_scan_svg(std::ostream& out, const DepthScan& scan, const FirnModel& model, const MapGrid& region,
                          const DepthScanUncertainty* uncertainty = nullptr,
                          const DepthResolutionScan* resolution = nullptr);
std::string depth_scan_svg(const DepthScan& scan, const FirnModel& model, const MapGrid& region,
                           const DepthScanUncertainty* uncertainty = nullptr,
                           const DepthResolutionScan* resolution = nullptr);

}  // namespace firnray
