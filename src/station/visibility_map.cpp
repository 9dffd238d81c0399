#include "station/visibility_map.hpp"

#include <cmath>
#include <limits>
#include <map>
#include <memory>
#include <optional>
#include <tuple>

#include <fmt/format.h>

#include "core/constants.hpp"
#include "core/errors.hpp"
#include "core/parallel.hpp"
#include "station/map_tables.hpp"

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

namespace {

std::uint8_t flag_of(ArrivalKind kind) {
    switch (kind) {
        case ArrivalKind::direct: return kind_direct;
        case ArrivalKind::refracted: return kind_refracted;
        case ArrivalKind::reflected: return kind_reflected;
        case ArrivalKind::bottom: return kind_bottom;
        case ArrivalKind::refracted_below: return kind_refracted_below;
        case ArrivalKind::ducted: return kind_ducted;
    }
    return 0;
}

bool seen_at(const std::vector<std::pair<double, double>>& visible, double distance) {
    for (const auto& [low, high] : visible)
        if (distance >= low && distance <= high) return true;
    return false;
}

}  // namespace

double station_boundary(std::span<const Receiver> receivers, std::span<const std::vector<std::pair<double, double>>> visible,
                        int min_receivers, double centre_x_m, double centre_y_m, double azimuth_deg) {
    const double azimuth = deg_to_rad(azimuth_deg);
    const double ux = std::cos(azimuth), uy = std::sin(azimuth);
    // Receiver k is at distance √((d − t_k)² + h_k²) from the point d along the line.
    std::vector<double> along(receivers.size()), across(receivers.size());
    std::vector<double> candidates{0.0};
    for (std::size_t k = 0; k < receivers.size(); ++k) {
        const double dx = receivers[k].x_m - centre_x_m, dy = receivers[k].y_m - centre_y_m;
        along[k] = dx * ux + dy * uy;
        across[k] = std::abs(-dx * uy + dy * ux);
        for (const auto& [low, high] : visible[k])
            for (const double edge : {low, high}) {
                if (!std::isfinite(edge) || edge < across[k]) continue;
                const double half = std::sqrt((edge - across[k]) * (edge + across[k]));
                for (const double d : {along[k] - half, along[k] + half})
                    if (d >= 0.0) candidates.push_back(d);
            }
    }
    std::sort(candidates.begin(), candidates.end());
    candidates.erase(std::unique(candidates.begin(), candidates.end()), candidates.end());
    auto count_at = [&](double d) {
        int seeing = 0;
        for (std::size_t k = 0; k < receivers.size(); ++k)
            seeing += seen_at(visible[k], std::hypot(d - along[k], across[k]));
        return seeing;
    };
    double boundary = std::numeric_limits<double>::quiet_NaN();
    for (std::size_t c = 0; c < candidates.size(); ++c) {
        if (count_at(candidates[c]) >= min_receivers) boundary = candidates[c];
        const bool last = c + 1 == candidates.size();
        // Between two edges the count is constant: its value in the middle holds up to the next edge.
        const double middle = last ? candidates[c] + 1.0 + candidates[c] : 0.5 * (candidates[c] + candidates[c + 1]);
        if (count_at(middle) >= min_receivers)
            boundary = last ? std::numeric_limits<double>::infinity() : candidates[c + 1];
    }
    return boundary;
}

namespace {

// The checks shared by the map and its boundary alone.
void check_map_inputs(std::span<const Receiver> receivers, const MapGrid& grid, const VisibilityOptions& options) {
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
    if (options.max_bounces < 0 || options.max_bounces > 64)
        throw DataInputError(fmt::format("max-bounces must be between 0 and 64 (got {})", options.max_bounces),
                             {"", 0, "max-bounces"});
}

// The map's distance origin: the mean receiver position.
std::pair<double, double> map_centre(std::span<const Receiver> receivers) {
    double x = 0.0, y = 0.0;
    for (const Receiver& r : receivers) {
        x += r.x_m / static_cast<double>(receivers.size());
        y += r.y_m / static_cast<double>(receivers.size());
    }
    return {x, y};
}

std::unique_ptr<MapTables> make_map_tables(const RaySolver& solver, std::span<const Receiver> receivers,
                                           const MapGrid& grid, const VisibilityOptions& options) {
    std::vector<double> source_z(grid.depth_cells);
    for (int j = 0; j < grid.depth_cells; ++j) source_z[j] = -grid.depth_at(j);
    // One table per distinct receiver depth, from the engine that is exact for this model.
    MapTableOptions table_options;
    table_options.ray_parameters = options.ray_parameters;
    table_options.max_bounces = options.max_bounces;
    table_options.bottom_paths = options.bottom_paths;
    table_options.engine = options.engine;
    table_options.threads = options.threads;
    table_options.control.cancel = options.control.cancel;
    std::vector<double> receiver_z;
    for (const Receiver& r : receivers) receiver_z.push_back(r.z_m);
    return std::make_unique<MapTables>(solver, receiver_z, source_z, table_options);
}

// Each depth row's exact boundary from the receivers' tables (see VisibilityMap::boundary_m).
std::vector<double> boundary_from_tables(std::span<const Receiver> receivers, const MapTables& tables, int depth_cells,
                                         const VisibilityOptions& options, double centre_x_m, double centre_y_m) {
    std::vector<double> boundary(depth_cells, std::numeric_limits<double>::quiet_NaN());
    for (int j = 0; j < depth_cells; ++j) {
        if (receivers.size() == 1) {
            boundary[j] = tables.at(receivers[0].z_m).max_reach_m(j);
            continue;
        }
        std::vector<std::vector<std::pair<double, double>>> visible;
        for (const Receiver& r : receivers) visible.push_back(tables.at(r.z_m).visible_distances(j));
        boundary[j] = station_boundary(receivers, visible, options.min_receivers, centre_x_m, centre_y_m,
                                       options.azimuth_deg);
    }
    return boundary;
}

}  // namespace

std::vector<double> compute_visibility_boundary(const RaySolver& solver, std::span<const Receiver> receivers,
                                                const MapGrid& grid, const VisibilityOptions& options) {
    check_map_inputs(receivers, grid, options);
    const auto [centre_x, centre_y] = map_centre(receivers);
    const auto tables = make_map_tables(solver, receivers, grid, options);
    return boundary_from_tables(receivers, *tables, grid.depth_cells, options, centre_x, centre_y);
}

VisibilityMap compute_visibility_map(const RaySolver& solver, std::span<const Receiver> receivers, const MapGrid& grid,
                                     const VisibilityOptions& options) {
    check_map_inputs(receivers, grid, options);

    VisibilityMap map;
    map.grid = grid;
    map.receivers = static_cast<int>(receivers.size());
    map.min_receivers = options.min_receivers;
    map.azimuth_deg = options.azimuth_deg;
    map.max_bounces = options.max_bounces;
    std::tie(map.centre_x_m, map.centre_y_m) = map_centre(receivers);
    const auto tables_owner = make_map_tables(solver, receivers, grid, options);
    const MapTables& tables = *tables_owner;
    map.stratified = tables.stratified();
    map.left_out = tables.left_out();
    std::vector<const ReceiverDepthTable*> table_of;
    for (const Receiver& r : receivers) table_of.push_back(&tables.at(r.z_m));

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

    map.boundary_m = boundary_from_tables(receivers, tables, grid.depth_cells, options, map.centre_x_m, map.centre_y_m);
    return map;
}

}  // namespace firnray
