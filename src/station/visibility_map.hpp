// Shadow and visibility maps: for a receiver or a whole station, which source positions on a
// grid of horizontal distance × depth are joined to the receivers by at least one path, by which
// kinds of path, when the first arrives and how far apart the first two are.
#pragma once

#include <cmath>
#include <cstdint>
#include <span>
#include <vector>

#include "core/cancel.hpp"
#include "solver/ray_solver.hpp"
#include "station/station.hpp"

namespace firnray {

// Source positions at cell centres: distances from distance_min_m to distance_max_m in
// distance_cells columns, depths (positive, down) from depth_min_m to depth_max_m in depth_cells rows.
struct MapGrid {
    double distance_min_m = 0.0, distance_max_m = 2000.0;
    int distance_cells = 400;
    double depth_min_m = 0.0, depth_max_m = 500.0;
    int depth_cells = 200;

    double distance_step() const { return (distance_max_m - distance_min_m) / distance_cells; }
    double depth_step() const { return (depth_max_m - depth_min_m) / depth_cells; }
    double distance_at(int column) const { return distance_min_m + (column + 0.5) * distance_step(); }
    double depth_at(int row) const { return depth_min_m + (row + 0.5) * depth_step(); }
    std::size_t cells() const { return static_cast<std::size_t>(distance_cells) * depth_cells; }
    void validate() const;  // throws DataInputError naming the bad field
};

// Path-kind flags of a cell.
enum PathKindFlag : std::uint8_t { kind_direct = 1, kind_refracted = 2, kind_reflected = 4 };

struct MapCell {
    std::uint8_t paths = 0;             // paths to the (first seeing) receiver
    std::uint8_t kinds = 0;             // PathKindFlag bits over all receivers
    std::uint16_t receivers_seeing = 0; // receivers joined to this cell by at least one path
    std::uint16_t receivers_with_two = 0;  // receivers with two or more paths
    float first_time_ns = NAN;          // earliest arrival over the receivers
    float time_between_ns = NAN;        // first two paths at the receiver with the earliest arrival
    float amplitude_per_m = NAN;        // largest received amplitude factor over paths and receivers
};

struct VisibilityOptions {
    int min_receivers = 1;          // a cell is visible when at least this many receivers see it
    double azimuth_deg = 0.0;       // direction of the map plane from the station centre (0 = +x, 90 = +y)
    int ray_parameters = 1500;      // samples per arrival table (see ArrivalTable)
    int threads = 1;
    RunControl control;
};

struct VisibilityMap {
    MapGrid grid;
    std::vector<MapCell> cells;      // row-major: depth row * distance_cells + column
    std::vector<double> boundary_m;  // per depth row: largest visible distance (NaN: none visible); +inf: unbounded
    int receivers = 0;
    int min_receivers = 1;
    double centre_x_m = 0.0, centre_y_m = 0.0;  // the map's distance origin
    double azimuth_deg = 0.0;                   // direction of the map plane from the origin

    const MapCell& at(int row, int column) const { return cells[static_cast<std::size_t>(row) * grid.distance_cells + column]; }
    bool visible(const MapCell& cell) const { return cell.receivers_seeing >= min_receivers; }
};

// Receivers must lie in the ice. For one receiver, distances are measured from it and the
// boundary is the exact largest reach of its arrival table; for several, distances are measured
// from the mean receiver position along the azimuth and the boundary is read from the grid.
VisibilityMap compute_visibility_map(const RaySolver& solver, std::span<const Receiver> receivers, const MapGrid& grid,
                                     const VisibilityOptions& options);

}  // namespace firnray
