// Interpolated travel times for the source fit (docs/locate.md, "Travel times at the trial
// positions"): per distinct receiver depth of a station, the arrivals of the map tables
// (station/map_tables.hpp) on a grid of horizontal distances × source depths, dense near the
// receiver, interpolated by cubic Hermite polynomials whose slopes are the slownesses of Fermat's
// principle, ∂T/∂r = ξ/c across and ∂T/∂z = ∓√(n² − ξ²)/c down. A trial position of the
// Levenberg–Marquardt refinement then costs about a microsecond per channel, not a path search.
#pragma once

#include <cstddef>
#include <memory>
#include <span>
#include <vector>

#include "core/cancel.hpp"
#include "paths/find_paths.hpp"
#include "station/delay_table.hpp"
#include "station/station.hpp"

namespace firnray {

class MapTables;

// One path from a source to a receiver as the table gives it.
struct TabulatedPath {
    PathKind kind = PathKind::direct;
    double time_s = 0.0;
    double ray_parameter = 0.0;
    ReceiverArrivals::Gradient gradient;  // ∂T/∂(source x, y, z), s/m, as compute_delays gives it
};

struct TravelTimeTableOptions {
    PathOptions paths;          // max_bounces and bottom paths: the paths find_paths would give
    double deepest_m = 1800.0;  // source depths are tabulated down to this depth (m, positive)
    // Samples of ξ per map table. With 2000 the times agree with find_paths within 0.01 ns
    // on the built-in model and on models/table-density.toml (tests/locate/test_travel_time_table.cpp).
    int ray_parameters = 2000;
    double max_distance_m = 3500.0;  // horizontal distances are tabulated up to this (m)
    // Spacing of the source depths: this fraction of the vertical distance from the receiver's
    // depth, at least min_spacing_m and at most max_spacing_m; the same for the horizontal
    // distances (the fraction of the distance), at most max_distance_spacing_m.
    double spacing_fraction = 0.04;
    double min_spacing_m = 0.5, max_spacing_m = 8.0, max_distance_spacing_m = 8.0;
    // Sources closer to a receiver than this (m) are left to find_paths: there T changes too fast
    // with depth for the ladder.
    double near_receiver_m = 6.0;
    int threads = 1;
    RunControl control;
};

class TravelTimeTable {
public:
    // Builds the map tables of every distinct receiver depth in the ice (receivers in the air get
    // none). Throws DataInputError for bad options, Cancelled on request.
    TravelTimeTable(const RaySolver& solver, std::span<const Receiver> receivers, const TravelTimeTableOptions& options);
    ~TravelTimeTable();
    TravelTimeTable(const TravelTimeTable&) = delete;
    TravelTimeTable& operator=(const TravelTimeTable&) = delete;

    // The paths from `source` to receiver `receiver`, sorted by time, with their ∂T/∂source.
    // false when the table does not answer there to its accuracy, and the caller should ask
    // find_paths: a source in the air or below the deepest tabulated depth, near the receiver,
    // between two tabulated depths whose paths differ in number (a path appears or vanishes at a
    // fold or a shadow boundary), next to a fold, or with paths of kinds the ladder does not
    // interpolate (ducted).
    bool paths(std::size_t receiver, const Point& source, std::vector<TabulatedPath>& out) const;

    // The tabulated source depths (z, m, highest first) and horizontal distances (m, increasing)
    // for a receiver (empty: none), for tests and the docs.
    std::span<const double> source_levels(std::size_t receiver) const;
    std::span<const double> distances(std::size_t receiver) const;

private:
    struct Ladder;
    const RaySolver& solver_;
    std::vector<Receiver> receivers_;
    TravelTimeTableOptions options_;
    std::vector<std::shared_ptr<const Ladder>> ladder_of_;  // per receiver (null: in the air)
};

}  // namespace firnray
