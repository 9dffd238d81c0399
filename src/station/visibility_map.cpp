#include "station/visibility_map.hpp"

#include <cmath>
#include <limits>
#include <map>
#include <memory>

#include <fmt/format.h>

#include "core/constants.hpp"
#include "core/errors.hpp"
#include "core/parallel.hpp"
#include "station/arrival_table.hpp"

namespace firnray {

void MapGrid::validate() const {
    auto bad = [](const char* what, const char* key) { throw DataInputError(what, {"", 0, key}); };
    if (!std::isfinite(distance_min_m) || !std::isfinite(distance_max_m) || distance_min_m < 0.0 ||
        distance_max_m <= distance_min_m)
        bad("the distance range must satisfy 0 <= min < max", "distance");
    if (!std::isfinite(depth_min_m) || !std::isfinite(depth_max_m) || depth_min_m < 0.0 || depth_max_m <= depth_min_m)
        bad("the depth range must satisfy 0 <= min < max (depths are positive, down)", "depth");
    if (distance_cells < 1 || distance_cells > 20000) bad("the number of distance cells must be 1 to 20000", "distance");
    if (depth_cells < 1 || depth_cells > 20000) bad("the number of depth cells must be 1 to 20000", "depth");
}

static std::uint8_t flag_of(ArrivalKind kind) {
    switch (kind) {
        case ArrivalKind::direct: return kind_direct;
        case ArrivalKind::refracted: return kind_refracted;
        case ArrivalKind::reflected: return kind_reflected;
    }
    return 0;
}

VisibilityMap compute_visibility_map(const RaySolver& solver, std::span<const Receiver> receivers, const MapGrid& grid,
                                     const VisibilityOptions& options) {
    grid.validate();
    if (receivers.empty()) throw DataInputError("a map needs at least one receiver");
    for (const Receiver& r : receivers)
        if (r.z_m > 0.0)
            throw DataInputError(fmt::format("receiver '{}' is in the air (z = {} m); maps need receivers in the ice",
                                             r.name, r.z_m));
    if (options.min_receivers < 1 || options.min_receivers > static_cast<int>(receivers.size()))
        throw DataInputError(fmt::format("min-receivers must be between 1 and the number of receivers ({})",
                                         receivers.size()),
                             {"", 0, "min-receivers"});

    VisibilityMap map;
    map.grid = grid;
    map.receivers = static_cast<int>(receivers.size());
    map.min_receivers = options.min_receivers;
    map.azimuth_deg = options.azimuth_deg;
    for (const Receiver& r : receivers) {
        map.centre_x_m += r.x_m / static_cast<double>(receivers.size());
        map.centre_y_m += r.y_m / static_cast<double>(receivers.size());
    }

    std::vector<double> source_z(grid.depth_cells);
    for (int j = 0; j < grid.depth_cells; ++j) source_z[j] = -grid.depth_at(j);

    // One table per distinct receiver depth: receivers in a ring at one depth share it.
    ArrivalTableOptions table_options;
    table_options.ray_parameters = options.ray_parameters;
    table_options.threads = options.threads;
    table_options.control.cancel = options.control.cancel;
    std::map<double, std::unique_ptr<ArrivalTable>> tables;
    for (const Receiver& r : receivers)
        if (!tables.count(r.z_m)) tables[r.z_m] = std::make_unique<ArrivalTable>(solver, r.z_m, source_z, table_options);
    std::vector<const ArrivalTable*> table_of;
    for (const Receiver& r : receivers) table_of.push_back(tables.at(r.z_m).get());

    const double azimuth = deg_to_rad(options.azimuth_deg);
    const double ux = std::cos(azimuth), uy = std::sin(azimuth);
    map.cells.assign(grid.cells(), MapCell{});
    parallel_for(static_cast<std::size_t>(grid.depth_cells), options.threads, options.control, [&](std::size_t j) {
        std::vector<MapArrival> found;
        for (int i = 0; i < grid.distance_cells; ++i) {
            const double r = grid.distance_at(i);
            const double xs = map.centre_x_m + r * ux, ys = map.centre_y_m + r * uy;
            MapCell& cell = map.cells[j * grid.distance_cells + i];
            for (std::size_t k = 0; k < receivers.size(); ++k) {
                const double distance = std::hypot(xs - receivers[k].x_m, ys - receivers[k].y_m);
                table_of[k]->arrivals(j, distance, found);
                if (found.empty()) continue;
                ++cell.receivers_seeing;
                if (found.size() >= 2) ++cell.receivers_with_two;
                for (const MapArrival& a : found) {
                    cell.kinds |= flag_of(a.kind);
                    if (std::isfinite(a.amplitude_per_m) &&
                        !(a.amplitude_per_m <= cell.amplitude_per_m))  // NaN-aware max
                        cell.amplitude_per_m = static_cast<float>(a.amplitude_per_m);
                }
                const float first = static_cast<float>(found[0].time_s * seconds_to_ns);
                if (!(first >= cell.first_time_ns)) {
                    cell.first_time_ns = first;
                    cell.paths = static_cast<std::uint8_t>(std::min<std::size_t>(found.size(), 255));
                    cell.time_between_ns = found.size() >= 2
                                               ? static_cast<float>((found[1].time_s - found[0].time_s) * seconds_to_ns)
                                               : NAN;
                }
            }
        }
    });

    map.boundary_m.assign(grid.depth_cells, std::numeric_limits<double>::quiet_NaN());
    for (int j = 0; j < grid.depth_cells; ++j) {
        if (receivers.size() == 1) {
            map.boundary_m[j] = table_of[0]->max_reach_m(j);
            continue;
        }
        for (int i = grid.distance_cells - 1; i >= 0; --i)
            if (map.visible(map.at(j, i))) {
                map.boundary_m[j] = grid.distance_at(i);
                break;
            }
    }
    return map;
}

}  // namespace firnray
