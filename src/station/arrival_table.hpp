// Map-scale path finding: for one receiver depth and many source depths, the ray families are
// tabulated once over a dense grid of ray parameters, so that the paths to any source distance
// are found by interpolation instead of per-cell root finding. By reciprocity the table is the
// same whether rays are thought of as leaving the source or the receiver.
//
// Two families of paths join a source and a receiver in the ice. The direct family: paths
// monotone in z between the two ends. The rising family: paths that rise from both ends to one
// upper apex, a turning point (refracted, ξ > n_surface) or a surface reflection (reflected,
// ξ <= n_surface), and whose distance is the sum of the two legs up from the ends.
//
// Accuracy: times are interpolated with cubic Hermite polynomials in distance whose slopes are
// the horizontal slowness ξ/c (dT/dX = ξ/c along a family), so with the default 1500 ray
// parameters they agree with find_paths to well below 0.1 ns for distances up to a few km
// (tests/station/test_arrival_table.cpp).
#pragma once

#include <cstddef>
#include <span>
#include <vector>

#include "core/cancel.hpp"
#include "solver/ray_solver.hpp"

namespace firnray {

// The kinds of solver/path_families.hpp (StratifiedPathKind); the first three are all that a
// profile growing with depth without a bottom has (the only ones ArrivalTable finds).
enum class ArrivalKind : unsigned char { direct = 0, refracted = 1, reflected = 2, bottom = 3, refracted_below = 4, ducted = 5 };
const char* to_string(ArrivalKind kind);

struct MapArrival {
    ArrivalKind kind = ArrivalKind::direct;
    double time_s = 0.0;
    double ray_parameter = 0.0;
    // The field for a unit source at 1 m, averaged over the polarisations (mean_field_magnitude
    // of paths/amplitude.hpp: the same computation and caustic test as find_paths). NaN at a caustic.
    double amplitude_per_m = 0.0;
    bool caustic = false;          // L_eff <= caustic_fraction × the path length (paths/amplitude.hpp)
};

// One arrival between two samples of a family that bracket distance_m (both map tables): the
// time by a cubic Hermite polynomial in distance with slopes dT/dX = ξ/c, and ξ, the attenuation
// exponent and the length linearly; ∂X/∂ξ from the two samples (infinite when their ξ is equal).
struct TableSample {
    double distance_m = 0.0, time_s = 0.0, ray_parameter = 0.0, attenuation = 0.0, length_m = 0.0;
};
struct InterpolatedArrival {
    double time_s = 0.0, ray_parameter = 0.0, attenuation = 0.0, length_m = 0.0;
    double distance_derivative = 0.0;  // (X_b − X_a) / (ξ_b − ξ_a)
};
InterpolatedArrival interpolate_arrival(const TableSample& a, const TableSample& b, double distance_m);

struct ArrivalTableOptions {
    int ray_parameters = 1500;  // samples of ξ; denser near grazing
    int threads = 1;
    RunControl control;
};

class ArrivalTable {
public:
    // receiver_z and every source_z must be <= 0 (in the ice).
    ArrivalTable(const RaySolver& solver, double receiver_z, std::vector<double> source_z,
                 const ArrivalTableOptions& options = {});

    std::size_t rows() const { return source_z_.size(); }
    double receiver_z() const { return receiver_z_; }
    double source_z(std::size_t row) const { return source_z_[row]; }

    // The largest horizontal distance any path reaches for a source at this row (the shadow
    // boundary); beyond it a source cannot be seen.
    double max_reach_m(std::size_t row) const { return rows_[row].max_reach_m; }

    // Every arrival from a source at `row` and horizontal distance `distance_m`, sorted by time.
    void arrivals(std::size_t row, double distance_m, std::vector<MapArrival>& out) const;

private:
    struct MonotoneRun {  // a run of samples over which the distance is monotone
        std::size_t first, last;
        bool increasing;
    };
    struct Row {
        std::size_t index = 0, source_level = 0;
        std::size_t count;  // samples with ξ below the shallower end's index, plus the end point
        std::vector<MonotoneRun> rising_runs;
        double max_reach_m = 0.0;
        double end_distance_m = 0.0, end_time_s = 0.0, end_attenuation = 0.0, end_length_m = 0.0,
               end_ray_parameter = 0.0;
        // An interior maximum of the rising family, refined on the solver: between the largest
        // sampled distance and the true maximum, arrivals are solved exactly.
        bool has_peak = false;
        double peak_ray_parameter = 0.0, peak_low = 0.0, peak_high = 0.0, sampled_peak_m = 0.0;
    };
    struct Sample {
        double distance_m, time_s, attenuation, ray_parameter, length_m;
    };

    Sample direct_sample(const Row& row, std::size_t k) const;
    Sample rising_sample(const Row& row, std::size_t k) const;
    Sample exact_at(const Row& row, ArrivalKind family, double ray_parameter) const;
    Sample exact_sample(const Row& row, ArrivalKind family, double ray_parameter_low, double distance_m) const;
    void add_exact_peak_arrivals(const Row& row, double distance_m, std::vector<MapArrival>& out) const;
    void add_arrival(const Row& row, ArrivalKind family, const Sample& a, const Sample& b, double distance_m,
                     std::vector<MapArrival>& out) const;
    void build_row(std::size_t index);

    const RaySolver* solver_;
    double receiver_z_;
    std::vector<double> source_z_;
    std::vector<double> levels_;  // distinct depths, highest first
    std::size_t receiver_level_ = 0;
    std::vector<double> ray_parameters_;      // ray-parameter samples, increasing
    // Cumulative legs from the highest point of each ray (the surface or its turning point) down to each level,
    // stored [level][sample]; NaN where the ray does not reach the level.
    std::vector<double> distance_, time_, attenuation_, length_;
    std::vector<Row> rows_;
    double n_surface_ = 1.0, n_air_ = 1.0;
};

}  // namespace firnray
