// Shadow and visibility maps: for a receiver or a whole station, which source positions on a
// grid of horizontal distance × depth are joined to the receivers by at least one path, by which
// kinds of path, when the first arrives and how far apart the first two are.
#pragma once

#include <cmath>
#include <cstdint>
#include <span>
#include <string>
#include <utility>
#include <vector>

#include "core/cancel.hpp"
#include "solver/ray_solver.hpp"
#include "station/map_tables.hpp"
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

// Path-kind flags of a cell, one per ArrivalKind (StratifiedPathKind of solver/path_families.hpp).
enum PathKindFlag : std::uint8_t {
    kind_direct = 1,
    kind_refracted = 2,
    kind_reflected = 4,
    kind_bottom = 8,
    kind_refracted_below = 16,
    kind_ducted = 32,
};

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
    // The most ends (turning points, surface and bottom reflections, each counting one) a path
    // may meet: the meaning of connect's --max-bounces. Only profiles with ducts or a bottom have
    // paths with more than one end.
    int max_bounces = 4;
    bool bottom_paths = true;       // include paths reflected at the model's bottom
    // automatic: the fast table (ArrivalTable) where it is exact (a profile growing with depth, no
    // bottom wanted, every depth above deep_table_limit_m), the stratified table otherwise.
    using Engine = MapTableOptions::Engine;
    Engine engine = Engine::automatic;
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
    bool stratified = false;                    // made with StratifiedArrivalTable (else ArrivalTable)
    int max_bounces = 4;
    // What was left out on purpose, one plain sentence each (empty: every path was computed).
    std::vector<std::string> left_out;

    const MapCell& at(int row, int column) const { return cells[static_cast<std::size_t>(row) * grid.distance_cells + column]; }
    bool visible(const MapCell& cell) const { return cell.receivers_seeing >= min_receivers; }
};

// Receivers must lie in the ice. For one receiver, distances are measured from it; for several,
// from the mean receiver position along the azimuth. The boundary of each depth row is exact: the
// largest distance along the map line at which at least min_receivers receivers see the source,
// from each receiver's visible distances (its table's exact reach, and the gaps between ducts).
VisibilityMap compute_visibility_map(const RaySolver& solver, std::span<const Receiver> receivers, const MapGrid& grid,
                                     const VisibilityOptions& options);

// The boundary alone (VisibilityMap::boundary_m, the same numbers), from the receivers' tables
// without filling the grid of cells: what a propagation of the model's uncertainty computes per
// model (uncertainty/map_uncertainty.hpp). Same checks and errors as compute_visibility_map.
std::vector<double> compute_visibility_boundary(const RaySolver& solver, std::span<const Receiver> receivers,
                                                const MapGrid& grid, const VisibilityOptions& options);

// The largest distance d >= 0 along the line from (centre_x_m, centre_y_m) at azimuth_deg at
// which at least min_receivers receivers see a source: receiver k sees it when its horizontal
// distance lies in one of visible[k] (sorted disjoint closed intervals). Solves
// |centre + d·u − receiver_k| = each interval edge, so the result is exact, not a grid cell.
// NaN when no point qualifies, +inf when every far enough point does.
double station_boundary(std::span<const Receiver> receivers, std::span<const std::vector<std::pair<double, double>>> visible,
                        int min_receivers, double centre_x_m, double centre_y_m, double azimuth_deg);

}  // namespace firnray
