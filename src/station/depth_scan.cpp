#include "station/depth_scan.hpp"

#include <algorithm>
#include <cmath>
#include <limits>

#include <fmt/format.h>

#include "core/constants.hpp"
#include "core/errors.hpp"

namespace firnray {

double ring_cell_volume(const MapGrid& grid, int column) {
    const double r1 = grid.distance_min_m + column * grid.distance_step();
    const double r2 = r1 + grid.distance_step();
    return pi * (r2 * r2 - r1 * r1) * grid.depth_step();
}

DepthScan scan_receiver_depths(const RaySolver& solver, const DepthScanOptions& options) {
    if (options.receiver_depths_m.empty()) throw DataInputError("no receiver depths to scan", {"", 0, "depths"});
    for (double d : options.receiver_depths_m)
        if (!std::isfinite(d) || d < 0.0)
            throw DataInputError(fmt::format("receiver depth {} m is not a depth (>= 0, positive down)", d), {"", 0, "depths"});
    options.region.validate();

    DepthScan scan;
    scan.max_bounces = options.max_bounces;
    for (double depth : options.receiver_depths_m) {
        Receiver receiver;
        receiver.name = fmt::format("scan at {} m", depth);
        receiver.z_m = -depth;
        VisibilityOptions map_options;
        map_options.ray_parameters = options.ray_parameters;
        map_options.max_bounces = options.max_bounces;
        map_options.bottom_paths = options.bottom_paths;
        map_options.threads = options.threads;
        map_options.control.cancel = options.control.cancel;
        const VisibilityMap map = compute_visibility_map(solver, std::span<const Receiver>(&receiver, 1),
                                                         options.region, map_options);
        DepthScanRow row;
        row.receiver_depth_m = depth;
        if (options.amplitude_threshold_per_m) row.strong_volume_m3 = 0.0;
        std::vector<std::pair<double, double>> between;  // (time between, volume)
        for (int j = 0; j < map.grid.depth_cells; ++j)
            for (int i = 0; i < map.grid.distance_cells; ++i) {
                const double volume = ring_cell_volume(map.grid, i);
                row.region_volume_m3 += volume;
                const MapCell& cell = map.at(j, i);
                if (!map.visible(cell)) continue;
                row.visible_volume_m3 += volume;
                if (cell.kinds == kind_ducted) row.ducted_only_volume_m3 += volume;
                if (cell.kinds == kind_bottom) row.bottom_only_volume_m3 += volume;
                if (cell.paths >= 2 && (cell.kinds & kind_direct)) {
                    row.two_path_volume_m3 += volume;
                    between.emplace_back(cell.time_between_ns, volume);
                }
                if (options.amplitude_threshold_per_m && cell.amplitude_per_m > *options.amplitude_threshold_per_m)
                    *row.strong_volume_m3 += volume;
            }
        const double nan = std::numeric_limits<double>::quiet_NaN();
        row.median_time_between_ns = row.min_time_between_ns = row.max_time_between_ns = nan;
        if (!between.empty()) {
            std::sort(between.begin(), between.end());
            row.min_time_between_ns = between.front().first;
            row.max_time_between_ns = between.back().first;
            double half = 0.5 * row.two_path_volume_m3, running = 0.0;
            for (const auto& [dt, volume] : between) {
                running += volume;
                if (running >= half) {
                    row.median_time_between_ns = dt;
                    break;
                }
            }
        }
        scan.rows.push_back(row);
        for (const std::string& what : map.left_out)
            if (std::find(scan.left_out.begin(), scan.left_out.end(), what) == scan.left_out.end())
                scan.left_out.push_back(what);
        if (options.control.progress) options.control.progress(scan.rows.size(), options.receiver_depths_m.size());
    }
    for (std::size_t k = 1; k < scan.rows.size(); ++k) {
        const auto& best = scan.rows[scan.best];
        const auto& candidate = scan.rows[k];
        if (candidate.visible_volume_m3 > best.visible_volume_m3 * (1 + 1e-12) ||
            (std::abs(candidate.visible_volume_m3 - best.visible_volume_m3) <= best.visible_volume_m3 * 1e-12 &&
             candidate.receiver_depth_m < best.receiver_depth_m))
            scan.best = k;
    }
    return scan;
}

}  // namespace firnray
