// How well a station can reconstruct a source, before any event is recorded: the Cramér–Rao
// bound (the inverse of the Fisher information of the arrival times of every path each receiver
// sees) at one position or on a distance × depth grid like the shadow maps (docs/locate.md).
#pragma once

#include <cstddef>
#include <optional>
#include <span>
#include <string>
#include <vector>

#include "core/cancel.hpp"
#include "locate/source_view.hpp"
#include "paths/find_paths.hpp"
#include "station/station.hpp"
#include "station/visibility_map.hpp"

namespace firnray {

struct FisherOptions {
    PathOptions paths;
    double timing_sigma_ns = 0.5;   // 1σ of every arrival time
    int pulses_per_channel = 2;     // a channel records at most this many pulses (the first paths)
    // Two paths closer than this arrive as one pulse (docs/locate.md): the later one adds nothing.
    double pulse_width_ns = 10.0;
    void validate() const;  // DataInputError naming the bad field
};

struct CramerRao {
    int pulses = 0;          // arrival times that carry information
    bool resolved = false;   // false: fewer than 4 pulses, or the pulses leave a direction free
    std::string reason;      // why it is not resolved
    PositionCovariance covariance_m2{};  // marginal over the emission time (when resolved)
    SourceView view;         // from the station centre (when resolved)
};

// The bound at one source position, seen from `centre` (station_centre of the receivers).
// A receiver that cannot be joined to the source (the shadow, the source at the receiver) adds no
// pulse. Throws DataInputError for bad options or a source below the model's bottom.
CramerRao cramer_rao_bound(const RaySolver& solver, std::span<const Receiver> receivers, const Point& source,
                           const Point& centre, const FisherOptions& options);

struct ResolutionOptions {
    FisherOptions fisher;
    double azimuth_deg = 0.0;  // direction of the map plane from the station centre (0 = +x, 90 = +y)
    int threads = 1;
    RunControl control;
};

struct ResolutionMap {
    MapGrid grid;                  // horizontal distance from the centre × depth, cell centres
    double azimuth_deg = 0.0;
    Point centre;
    double timing_sigma_ns = 0.0;
    std::vector<CramerRao> cells;  // row-major: depth row * distance_cells + column

    const CramerRao& at(int row, int column) const {
        return cells[static_cast<std::size_t>(row) * static_cast<std::size_t>(grid.distance_cells) +
                     static_cast<std::size_t>(column)];
    }
};

// The bound at every cell of the grid (sources in the ice, at the cell centres).
ResolutionMap compute_resolution_map(const RaySolver& solver, std::span<const Receiver> receivers, const MapGrid& grid,
                                     const ResolutionOptions& options);

// A resolution map in three figures: what `depths --resolution` reports per candidate depth.
struct ResolutionSummary {
    std::size_t cells = 0, resolved_cells = 0;
    double unresolved_fraction = 1.0;  // share of the map's cells (by count) that are not resolved
    // Medians of the 1σ over the resolved cells; empty when no cell is resolved.
    std::optional<double> median_sigma_distance_m, median_sigma_depth_m;
};

ResolutionSummary summarize_resolution(const ResolutionMap& map);

// The receivers moved vertically, together, so that the shallowest sits top_depth_m (>= 0) below
// the surface: the strings keep their layout and spacing. Throws DataInputError for no receivers
// or a depth that is negative or not finite.
std::vector<Receiver> receivers_at_depth(std::span<const Receiver> receivers, double top_depth_m);

// The resolution of a station lowered to each candidate depth (its shallowest receiver there), on
// one distance × depth grid seen from the station centre: the `--resolution` option of `depths`.
struct DepthResolutionScan {
    std::string station;  // the station's name
    MapGrid grid;
    double azimuth_deg = 0.0, timing_sigma_ns = 0.0;
    std::vector<ResolutionSummary> rows;  // one per candidate depth, in the order given
};

DepthResolutionScan scan_resolution_by_depth(const RaySolver& solver, const Station& station,
                                             std::span<const double> top_depths_m, const MapGrid& grid,
                                             const ResolutionOptions& options);

}  // namespace firnray
