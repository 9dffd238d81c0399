// The map table for any stratified profile (docs/physics.md §8): for one receiver depth and the
// map's source depths, every path family (direct, refracted, reflected, refracted below, ducted,
// bottom-reflected) tabulated over ξ, per range of ξ in which the accessible interval keeps its
// kinds of ends, so that the paths to any source distance are found by interpolation.
//
// Per ξ sample the legs from each accessible interval's upper end down to every level of the map
// (and on to its lower end) are integrated once (solver/snell_integrals.hpp); any family between
// any two levels of one interval is a sum of those cumulative legs. Arrivals are interpolated with
// cubic Hermite polynomials in distance whose slopes are dT/dX = ξ/c, as in ArrivalTable; at folds
// of X(ξ) and where X diverges (ξ next to a local minimum of n) they are solved exactly with
// family_legs. Ranges are parametrised ξ = n(anchor) − span·v² (anchor: the range's top; the
// samples next to its low end are offsets from n there), which resolves rays near a local minimum
// of n or near n_deep without cancellation. Past the last sample of a family that diverges next to
// a local minimum, exact samples go on toward the minimum's n on that side down to where the pair
// finder stops (1e-24 of its range of ξ); cells between them are interpolated in ln|ξ − n_min|
// where X is seen to be linear in it, and solved exactly elsewhere.
#pragma once

#include <cstddef>
#include <cstdint>
#include <limits>
#include <utility>
#include <vector>

#include "core/cancel.hpp"
#include "model/firn_model.hpp"
#include "solver/path_families.hpp"
#include "station/arrival_table.hpp"

namespace firnray {

struct StratifiedTableOptions {
    int ray_parameters = 1500;  // samples of ξ over all ranges together (at least 24 per range)
    int max_bounces = 4;        // the most ends (turns and reflections, each counts one) a path may meet
    bool bottom_paths = true;   // include paths reflected at the bottom (when the profile has one)
    int threads = 1;
    RunControl control;
};

class StratifiedArrivalTable {
public:
    // An upper estimate of the memory (bytes) a table for this profile, `source_rows` source
    // depths and these options holds: the cumulative legs per depth and ξ sample, the intervals
    // per sample and each row's end points, runs and refined folds. For the commands' memory checks.
    static double memory_estimate_bytes(const StratifiedProfile& profile, std::size_t source_rows,
                                        const StratifiedTableOptions& options);

    // receiver_z and every source_z must be in the ice and above the profile's floor. The model
    // gives n_air (surface Fresnel factors), the bottom's reflectivity and the attenuation.
    StratifiedArrivalTable(const FirnModel& model, const StratifiedProfile& profile, double receiver_z,
                           std::vector<double> source_z, const StratifiedTableOptions& options = {});

    std::size_t rows() const { return source_z_.size(); }
    double receiver_z() const { return receiver_z_; }
    double source_z(std::size_t row) const { return source_z_[row]; }
    std::size_t ray_parameter_samples() const { return samples_.size(); }

    // The largest horizontal distance any path reaches at this row (+inf when a family diverges).
    double max_reach_m(std::size_t row) const { return rows_[row].max_reach_m; }
    // The distances at which a source at this row is seen, as sorted disjoint closed intervals
    // (the last may end at +inf). With ducts or a bottom they need not be one interval.
    const std::vector<std::pair<double, double>>& visible_distances(std::size_t row) const {
        return rows_[row].visible;
    }

    // Every arrival from a source at `row` and horizontal distance `distance_m`, sorted by time.
    void arrivals(std::size_t row, double distance_m, std::vector<MapArrival>& out) const;

private:
    struct Range {
        double high = 0.0, low = 0.0, anchor_z = 0.0;
        // n(low_anchor_z) = low where `low` is n at a depth (every range but the last, which ends at
        // ξ = 0): the samples next to it are offsets from n there (ξ = n(low_anchor_z) + ρ).
        bool low_anchored = false;
        double low_anchor_z = 0.0;
        std::size_t first = 0, count = 0;  // its samples: first .. first + count − 1, ξ decreasing
    };
    struct IntervalLegs {  // one accessible interval of one ξ sample
        AccessibleInterval interval;
        bool has_lower = false;
        double distance = 0.0, time = 0.0, attenuation = 0.0, length = 0.0;  // upper end to lower end
    };
    struct SampleLevel {
        double ray_parameter = 0.0, anchor_z = 0.0, offset = 0.0;
        std::size_t range = 0;
    };
    // A family's value at one ξ: distance, time, attenuation exponent, length, and its kind.
    struct Point {
        bool valid = false;
        double distance = 0.0, time = 0.0, attenuation = 0.0, length = 0.0;
        double ray_parameter = 0.0, anchor_z = 0.0, offset = 0.0;
        StratifiedPathKind kind = StratifiedPathKind::direct;
        int surface_reflections = 0, bottom_reflections = 0;
    };
    // Positions along one range for one row: p < end_samples are the row's end points (from ξ =
    // the smallest n between the ends) when that limit falls in this range, p >= end_samples the
    // range's sample first + p − end_samples (+ the samples skipped above the limit there).
    static constexpr std::size_t end_uniform_samples = 6, end_geometric_samples = 5;
    static constexpr std::size_t end_samples = 1 + end_geometric_samples + end_uniform_samples - 1;
    struct Run {
        int family = 0;
        std::size_t range = 0, first = 0, last = 0;
        bool increasing = true;
        double low_m = 0.0, high_m = 0.0;  // the distances it spans, so that a cell skips it cheaply
    };
    struct Exact {  // a fold or a divergent end, solved with family_legs
        int family = 0;
        std::size_t range = 0;
        std::size_t a = 0, b = 0;         // the bracketing positions (b: the divergent one for a tail)
        bool tail = false;                // X grows without bound from a toward b
        bool maximum = true;              // for a fold: X has a maximum (else a minimum) inside
        double sampled_m = 0.0;           // X at the sampled extremum (or at a, for a tail)
        double exact_m = 0.0;             // the refined extremum (+inf for a tail)
        double anchor_z = 0.0, u_extremum = 0.0;
        // ξ = n(anchor_z) − side·u²: side −1 for a tail approached from above n(anchor_z) (a ray
        // turning just beside a local minimum of n at the low end of a range), else +1.
        double side = 1.0;
        // For a tail: u at a and at the divergent end (0 where that end is n(anchor_z) itself).
        double u_a = 0.0, u_b = 0.0;
        // For a logarithmic tail: the closest u to the divergent end that a root is sought at, as
        // the pair finder (n − ξ = 1e-24 of the pair's range of ξ there, docs/physics.md §8.2).
        double u_floor = 0.0;
        // For a tail: exact points from a toward the divergent end, X growing (u geometric toward
        // it), so that a cell's root is bracketed by two of them and found in a few steps.
        struct TailSample {
            double u = 0.0, distance_m = 0.0;
            double time_s = 0.0, attenuation = 0.0, length_m = 0.0;
            // dX/ds, s = −ln|n − ξ|, from this sample to the next where X is that line next to a
            // double root (sample_tail): a cell between them is interpolated (add_tail_arrival),
            // not solved. NaN elsewhere.
            double slope = std::numeric_limits<double>::quiet_NaN();
        };
        std::vector<TailSample> tail_samples;
        Point first;  // the first sample whole: the path's kind and reflections along the tail
        bool logarithmic = false;  // the divergent end is u = 0 itself: solve in ln u
        // The samples reach u_floor (logarithmic tails): beyond the last one's distance there is no
        // root to find.
        bool sampled_to_end = false;
        // For the other tails, when the samples stop within a few ulps of u of the divergent end:
        // the largest X at any u left between them and that end (every such u evaluated), so
        // that a cell beyond it is known to have no root there without a search.
        double beyond_samples_max_m = std::numeric_limits<double>::quiet_NaN();
    };
    struct Row {
        std::size_t source_level = 0;
        double limit = 0.0, limit_z = 0.0;  // ξ must stay below n between the ends
        std::size_t limit_range = 0;
        // The limit is a local minimum of n strictly between the ends: X diverges toward it.
        bool limit_inside = false;
        // The ξ at which the pair finder cuts its ranges for this pair (ray_parameter_cuts, each
        // value once), from the largest: where the logarithmic tails stop (u_floor).
        std::vector<double> pair_cuts;
        std::size_t skipped = 0;            // samples of the limit range at or above the limit
        bool has_end = false;
        // Per family, end_samples points from ξ = limit (i = 0) toward the first table sample,
        // evenly in u = √(limit − ξ), where X changes like √(limit − ξ) next to a turning end.
        std::vector<std::vector<Point>> end_points;
        std::vector<double> end_u;
        std::vector<Run> runs;
        std::vector<Exact> exact;
        double max_reach_m = 0.0;
        std::vector<std::pair<double, double>> visible;
    };

    Point table_point(const Row& row, int family, std::size_t sample) const;
    // Whether point_at is valid there, and its distance, without the rest (the scan of a row for
    // runs and the binary search of a run need nothing else).
    struct Reach {
        bool exists = false;  // the family exists at that ξ (its distance may still be NaN)
        bool valid = false;
        double distance = 0.0;
    };
    Reach table_reach(const Row& row, int family, std::size_t sample) const;
    Reach reach_at(const Row& row, int family, std::size_t range, std::size_t position) const;
    Point point_at(const Row& row, int family, std::size_t range, std::size_t position) const;
    Point exact_point(const Row& row, int family, double anchor_z, double offset) const;
    // n(anchor_z) − ξ at p: signed, and clamped at 0.
    double signed_offset(double anchor_z, const Point& p) const;
    double offset_from(double anchor_z, const Point& p) const;
    // The closest ξ − n(anchor_z) (on the side of a tail) at which the pair finder seeks roots.
    double closest_offset(const Row& row, double anchor_z, double side) const;
    // Regula falsi between u_low and u_high, ξ = n(anchor_z) − side·u²; in ln u when `logarithmic`
    // (u_low is then the floor itself, the divergent end being u = 0).
    Point solve_between(const Row& row, int family, double anchor_z, double side, double u_low, double u_high,
                        double distance_m, bool increasing_in_u, bool logarithmic = false) const;
    // reference: the point before the tail's first (farther from the divergent end), if any.
    void sample_tail(const Row& row, Exact& tail, const Point& reference) const;
    Point solve_in_tail(const Row& row, const Exact& tail, std::size_t k, double distance_m) const;
    void add_arrival(const Row& row, const Point& a, const Point& b, double distance_m, std::vector<MapArrival>& out) const;
    // An arrival from an interpolated ray (kind and reflections from `named`).
    void add_interpolated(const Row& row, const Point& named, const InterpolatedArrival& at, double distance_m,
                          std::vector<MapArrival>& out) const;
    // A cell between samples k and k + 1 of a logarithmic tail where X is linear in ln u.
    void add_tail_arrival(const Row& row, const Exact& tail, std::size_t k, double distance_m,
                          std::vector<MapArrival>& out) const;
    void add_exact_arrival(const Row& row, int family, const Point& root, double anchor_z, double side,
                           double distance_m, std::vector<MapArrival>& out) const;
    void build_row(std::size_t index);

    const FirnModel* model_;
    const StratifiedProfile* profile_;
    double receiver_z_;
    std::vector<double> source_z_;
    std::vector<double> levels_;  // distinct depths, highest first
    std::size_t receiver_level_ = 0;
    std::vector<PathFamily> families_;
    int max_bounces_ = 4;
    bool bottom_paths_ = true;
    std::vector<Range> ranges_;
    std::vector<SampleLevel> samples_;
    // Per [level][sample]: the interval holding the level (−1: none) and the cumulative legs from
    // that interval's upper end down to the level.
    std::vector<std::int32_t> interval_of_;
    std::vector<double> distance_, time_, attenuation_, length_;
    std::vector<std::vector<IntervalLegs>> intervals_;  // per sample
    std::vector<Row> rows_;
    double n_surface_ = 1.0;
};

}  // namespace firnray
