// Receiver-depth scan: for candidate receiver depths, how much of a cylindrical source region a
// single receiver sees, how much of it is seen by two paths, and how far apart those arrive.
// This is what a station designer compares before choosing a drilling depth.
#pragma once

#include <optional>
#include <string>
#include <vector>

#include "station/visibility_map.hpp"

namespace firnray {

struct DepthScanOptions {
    std::vector<double> receiver_depths_m;  // positive, down
    MapGrid region;                          // the source region: distance 0..R and a depth range
    std::optional<double> amplitude_threshold_per_m;  // also report the volume above this factor
    int ray_parameters = 1500;
    int max_bounces = 4;       // as VisibilityOptions::max_bounces
    bool bottom_paths = true;  // include paths reflected at the model's bottom
    int threads = 1;
    RunControl control;
};

struct DepthScanRow {
    double receiver_depth_m = 0.0;
    double region_volume_m3 = 0.0;       // the whole cylinder (annulus) of the region
    double visible_volume_m3 = 0.0;      // cells joined to the receiver by at least one path
    double two_path_volume_m3 = 0.0;     // cells with a direct path and a second path
    double median_time_between_ns = 0.0; // volume-weighted median over two-path cells (NaN if none)
    double min_time_between_ns = 0.0, max_time_between_ns = 0.0;
    std::optional<double> strong_volume_m3;  // cells whose amplitude factor exceeds the threshold
    double ducted_only_volume_m3 = 0.0;  // visible cells seen only through ducted paths
    double bottom_only_volume_m3 = 0.0;  // visible cells seen only through bottom-reflected paths
};

struct DepthScan {
    std::vector<DepthScanRow> rows;
    std::size_t best = 0;  // the row with the largest visible volume (the shallower one on a tie)
    int max_bounces = 4;
    std::vector<std::string> left_out;  // as VisibilityMap::left_out (the same for every depth)
};

// Volume of the cell's ring: π (r2² − r1²) · Δdepth; exact for the cylindrical integral.
double ring_cell_volume(const MapGrid& grid, int column);

DepthScan scan_receiver_depths(const RaySolver& solver, const DepthScanOptions& options);

}  // namespace firnray
