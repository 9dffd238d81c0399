// Source reconstruction from measured arrival times (docs/locate.md): the source position and
// emission time that minimise the χ² of the arrival times, over every assignment of the
// unlabelled pulses to the paths the model predicts; a coarse search over positions the station
// sees, then Levenberg–Marquardt with the analytic ∂T/∂source (on interpolated travel-time tables,
// locate/travel_time_table.hpp, finished with exact paths where they are cheap); the covariance
// (Jᵀ W J)⁻¹ at the minimum and the other minima that fit almost as well.
#pragma once

#include <cstddef>
#include <memory>
#include <optional>
#include <string>
#include <vector>

#include "core/cancel.hpp"
#include "locate/arrival_events.hpp"
#include "locate/source_view.hpp"
#include "locate/travel_time_table.hpp"
#include "paths/find_paths.hpp"
#include "station/station.hpp"

namespace firnray {

// The coarse search: source positions on cylinders around the station centre (docs/locate.md).
// Its arrival times are computed once per locator and reused for every event.
struct LocateSearchGrid {
    double min_distance_m = 5.0, max_distance_m = 3000.0;  // horizontal, from the station centre
    int distance_steps = 18;                                // spaced geometrically
    int azimuth_steps = 24;
    // Source depths below the surface (m, positive) and heights above it (m, positive). Depths
    // below the model's bottom are skipped.
    std::vector<double> depths_m = {2, 10, 25, 50, 80, 120, 170, 230, 300, 400, 520, 670, 850, 1100, 1400, 1800};
    std::vector<double> heights_m = {3, 30, 300};
    void validate() const;  // DataInputError naming the bad field
};

// On the closed form a fit costs about 1 ms less on the travel-time table than with find_paths,
// and the table takes about 3 s to build: below this many events it does not pay.
inline constexpr std::size_t interpolation_pays_events = 3000;

struct LocateOptions {
    PathOptions paths;
    LocateSearchGrid search;
    // Local minima of the coarse search that may be refined per event: the best one always; the
    // next ones when the fit so far is poor or their coarse χ² rivals the best (docs/locate.md).
    int candidates = 10;
    double alternative_chi2_margin = 10.0; // other minima with χ² within this of the best are reported
    int max_iterations = 60;               // Levenberg–Marquardt steps per candidate
    int threads = 1;                       // for building the search table
    RunControl control;
    // How the refinement predicts arrival times at its trial positions (docs/locate.md):
    // interpolated: from a TravelTimeTable built once per locator (a few seconds), then, on a
    //   closed-form solver, a final Levenberg–Marquardt with find_paths from the table's minimum;
    // exact: find_paths at every trial position;
    // automatic: interpolated, except on a closed-form solver for fewer than
    //   interpolation_pays_events expected events, where building the table costs more than it
    //   saves, and on a profile whose index falls with depth somewhere (ducts: a slow table).
    enum class TravelTimes { automatic, interpolated, exact } travel_times = TravelTimes::automatic;
    std::size_t expected_events = 0;  // events the caller will fit (0: unknown, many)
    TravelTimeTableOptions table;     // its paths, threads and control are those above
};

// A measured pulse with the path the fit assigned to it.
struct AssignedPulse {
    std::size_t channel = 0;
    int line = 0;
    double time_ns = 0.0, sigma_ns = 0.0;
    // false: no predicted path at the fitted position explains this pulse (it adds
    // unmatched_pulse_chi2 = 25 to χ², docs/locate.md); kind, rank and residual are then meaningless.
    bool matched = true;
    PathKind kind = PathKind::direct;
    int path_rank = 1;         // 1 = the first path to arrive at this channel, 2 the second, … (0 unmatched)
    double residual_ns = 0.0;  // measured − (emission time + predicted travel time)
};

struct SourceFit {
    Point position;
    double emission_time_ns = 0.0;  // on the clock of the arrival times
    double chi2 = 0.0;
    int ndof = 0;                   // pulses − 4
    PositionCovariance covariance_m2{};  // (Jᵀ W J)⁻¹ marginal over the emission time, not rescaled
    SourceView view;                // from the station centre
    std::vector<AssignedPulse> pulses;  // in the event's order
    int iterations = 0;
    int unmatched_pulses = 0;       // pulses no path explains (each adds 25 to χ²)
};

struct EventFit {
    std::string event;
    int first_line = 0;
    std::optional<SourceFit> best;       // empty when the event failed
    std::vector<SourceFit> alternatives; // other minima within the χ² margin, best first
    std::string error;                   // non-empty: why the event could not be fitted
};

class SourceLocator {
public:
    // Builds the search table (arrival times of every receiver at every search position); throws
    // DataInputError for an empty station or a bad grid, Cancelled on request.
    SourceLocator(const RaySolver& solver, const Station& station, LocateOptions options);
    ~SourceLocator();
    SourceLocator(const SourceLocator&) = delete;
    SourceLocator& operator=(const SourceLocator&) = delete;

    // Fits one event. Never throws for a bad event: its error is set instead (an event with an
    // error already set is returned with it).
    EventFit fit(const ArrivalEvent& event) const;

    const Station& station() const { return station_; }
    const Point& centre() const { return centre_; }
    const LocateOptions& options() const { return options_; }
    std::size_t search_positions() const;

private:
    struct SearchTable;
    const RaySolver& solver_;
    Station station_;
    LocateOptions options_;
    Point centre_;
    std::unique_ptr<SearchTable> table_;
    std::unique_ptr<TravelTimeTable> travel_times_;  // null: find_paths at every trial position
    bool polish_exactly_ = false;                    // find_paths is cheap: finish every fit with it
};

// Every event, in order, on `threads` threads (the results do not depend on the thread count).
std::vector<EventFit> locate_events(const SourceLocator& locator, const std::vector<ArrivalEvent>& events, int threads,
                                    const RunControl& control);

}  // namespace firnray
