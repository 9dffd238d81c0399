// Benchmark of map-scale work on the numeric solver with a tabulated profile: an ArrivalTable
// (receiver at z = −60 m, 500 source depths 1..500 m, 1500 ray parameters) on 1 and 2 threads,
// the same table through the default RaySolver::segments_from (segment() level to level) for
// comparison, and a whole 1000 × 500 visibility map on 2 threads. Prints medians of a few runs
// (the machine is shared), and the cost of single legs; docs/performance.md has
// the figures.
//
// Usage: bench_numeric_table [model-file] [repetitions]
// (default models/table-density.toml, relative to the working directory, and 3).
#include <algorithm>
#include <chrono>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <memory>
#include <string>
#include <vector>

#include "model/model_file.hpp"
#include "model/table_profile.hpp"
#include "solver/numeric_solver.hpp"
#include "station/arrival_table.hpp"
#include "station/visibility_map.hpp"

using namespace firnray;

namespace {

template <class Body>
double median_seconds(int repetitions, const Body& body) {
    std::vector<double> times;
    for (int r = 0; r < repetitions; ++r) {
        const auto start = std::chrono::steady_clock::now();
        body();
        times.push_back(std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count());
    }
    std::sort(times.begin(), times.end());
    return times[times.size() / 2];
}

// The numeric solver without its segments_from: what every table cost before it had one.
class LevelByLevel final : public RaySolver {
public:
    explicit LevelByLevel(const NumericSolver& inner)
        : RaySolver(std::shared_ptr<const FirnModel>(&inner.model(), [](const FirnModel*) {})), inner_(&inner) {}
    std::string name() const override { return "numeric, level by level"; }
    Segment segment(double xi, double z_a, double z_b) const override { return inner_->segment(xi, z_a, z_b); }
    std::optional<double> turning_z(double xi, double z_start) const override { return inner_->turning_z(xi, z_start); }

private:
    const NumericSolver* inner_;
};

// Median time of one call in µs, over `batches` batches of `per_batch` calls.
template <class Call>
double median_us(const Call& call, int batches = 21, int per_batch = 200) {
    std::vector<double> times;
    for (int b = 0; b < batches; ++b) {
        const auto start = std::chrono::steady_clock::now();
        for (int i = 0; i < per_batch; ++i) call();
        times.push_back(std::chrono::duration<double, std::micro>(std::chrono::steady_clock::now() - start).count() /
                        per_batch);
    }
    std::sort(times.begin(), times.end());
    return times[times.size() / 2];
}

// Single legs, as in bench_trace (exponential 1.78/1.35/40 m), with and without ∂x/∂ξ, and one
// ray with 500 levels.
void time_legs() {
    auto exponential = std::make_shared<FirnModel>();
    exponential->name = "bench";
    exponential->index = std::make_shared<ExponentialProfile>(1.78, 1.35, 40.0);
    const NumericSolver computed(exponential), not_computed(exponential, {}, DistanceDerivative::not_computed);
    volatile double sink = 0.0;
    std::printf("single legs, exponential firn (n 1.78/1.35, 40 m), default tolerances, median per call:\n");
    for (const NumericSolver* solver : {&computed, &not_computed}) {
        const char* what = solver == &computed ? "with d(distance)/d(xi)" : "without d(distance)/d(xi)";
        const double us = median_us([&] { sink = sink + solver->segment(1.5, -500.0, -30.0).distance_m; });
        std::printf("  segment(xi 1.5, z -500 -> -30 m) %s: %.2f us\n", what, us);
    }
    const double z_t = *computed.turning_z(1.6, -500.0);
    const double turn_us = median_us([&] { sink = sink + computed.segment(1.6, -500.0, z_t).distance_m; });
    std::printf("  segment(xi 1.6, z -500 m -> turning point %.3f m): %.2f us\n", z_t, turn_us);
    std::vector<double> levels;
    for (int depth = 35; depth <= 534; ++depth) levels.push_back(-static_cast<double>(depth));
    std::vector<Segment> out(levels.size());
    const double from_us = median_us([&] { computed.segments_from(1.6, z_t, levels, out); }, 21, 20);
    std::printf("  segments_from(xi 1.6, turning point -> 500 levels, 35..534 m): %.2f us\n", from_us);
    const double by_level_us = median_us([&] { computed.RaySolver::segments_from(1.6, z_t, levels, out); }, 5, 4);
    std::printf("  the same through the default (segment() level to level): %.2f us\n", by_level_us);
}

}  // namespace

int main(int argc, char** argv) {
    const std::string model_path = argc > 1 ? argv[1] : "models/table-density.toml";
    const int repetitions = argc > 2 ? std::max(1, std::atoi(argv[2])) : 3;
    const auto model = std::make_shared<const FirnModel>(load_model_file(model_path));
    std::printf("model: %s (%s: %s)\n", model->name.c_str(), model_path.c_str(), model->index->describe().c_str());

    time_legs();

    const double receiver_z = -60.0;
    std::vector<double> sources;
    for (int depth = 1; depth <= 500; ++depth) sources.push_back(-static_cast<double>(depth));
    ArrivalTableOptions options;
    options.ray_parameters = 1500;

    const NumericSolver plain(model, {}, DistanceDerivative::not_computed);
    const NumericSolver with_derivative(model);
    std::printf("ArrivalTable, receiver z = %.0f m, %zu source depths 1..500 m, %d ray parameters, median of %d:\n",
                receiver_z, sources.size(), options.ray_parameters, repetitions);
    double one_thread = 0.0, two_threads = 0.0;
    for (int threads : {1, 2}) {
        options.threads = threads;
        const double t = median_seconds(repetitions, [&] {
            const ArrivalTable table(plain, receiver_z, sources, options);
            if (table.rows() != sources.size()) std::abort();
        });
        (threads == 1 ? one_thread : two_threads) = t;
        std::printf("  numeric (no ∂x/∂ξ), %d thread(s): %.3f s\n", threads, t);
    }
    std::printf("  1 -> 2 threads: %.2fx faster\n", one_thread / two_threads);
    options.threads = 1;
    const double derivative_t = median_seconds(repetitions, [&] {
        const ArrivalTable table(with_derivative, receiver_z, sources, options);
    });
    std::printf("  numeric (∂x/∂ξ computed in segment()), 1 thread: %.3f s\n", derivative_t);
    const LevelByLevel level_by_level(plain);
    const double old_t =
        median_seconds(1, [&] { const ArrivalTable table(level_by_level, receiver_z, sources, options); });
    std::printf("  default segments_from (segment() level to level), 1 thread, one run: %.3f s\n", old_t);

    Receiver receiver;
    receiver.name = "R";
    receiver.z_m = receiver_z;
    MapGrid grid;
    grid.distance_max_m = 2000.0;
    grid.distance_cells = 1000;
    grid.depth_max_m = 500.0;
    grid.depth_cells = 500;
    VisibilityOptions map_options;
    map_options.threads = 2;
    auto time_map = [&](const RaySolver& solver, const char* what) {
        std::size_t visible = 0;
        const double t = median_seconds(repetitions, [&] {
            const VisibilityMap map =
                compute_visibility_map(solver, std::span<const Receiver>(&receiver, 1), grid, map_options);
            visible = static_cast<std::size_t>(std::count_if(map.cells.begin(), map.cells.end(),
                                                             [&](const MapCell& c) { return map.visible(c); }));
        });
        std::printf("visibility map 1000 x 500 (distance 0..2000 m, depth 0..500 m), one receiver, 2 threads, %s: "
                    "%.3f s (%zu of %zu cells visible)\n",
                    what, t, visible, grid.cells());
    };
    time_map(plain, "this model");

    // A dense table: the density law of the synthetic log without its noise, every 0.5 m down to
    // 600 m (1201 points), through the Kovacs relation n = 1 + 0.845 ρ (g/cm³; from memory).
    std::vector<double> depth, n;
    for (int i = 0; i <= 1200; ++i) {
        const double d = 0.5 * i;
        depth.push_back(d);
        n.push_back(1.0 + 0.845 * (0.917 - (0.917 - 0.380) * std::exp(-d / 36.0)));
    }
    auto dense = std::make_shared<FirnModel>(*model);
    dense->name = "dense synthetic table";
    dense->index = std::make_shared<TableProfile>(depth, n);
    const NumericSolver dense_solver(dense, {}, DistanceDerivative::not_computed);
    options.threads = 1;
    const double dense_t =
        median_seconds(repetitions, [&] { const ArrivalTable t(dense_solver, receiver_z, sources, options); });
    std::printf("ArrivalTable as above on a dense table (1201 points every 0.5 m to 600 m), 1 thread: %.3f s\n", dense_t);
    time_map(dense_solver, "dense table");
    return 0;
}
