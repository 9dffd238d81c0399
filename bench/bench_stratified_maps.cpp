// Benchmark of maps on any stratified profile (station/stratified_arrival_table.hpp): a
// 1000 x 500 visibility map of a synthetic 200-point log with inversions (the log of
// bench_stratified.cpp: an exponential trend, ±0.013 seasonal layering, an ice lens at 60 m),
// every path up to --max-bounces 4, on 2 threads; and from the same run, the monotone exponential
// map of bench_maps.cpp with the fast table (ArrivalTable, what maps use there) and with the
// stratified table forced, so that the two engines can be compared. See docs/performance.md.
//
// Wall time and the process's CPU time (all threads) of each map: on a shared machine the CPU
// time is the steadier figure.
//
// Usage: bench_stratified_maps [distance cells] [depth cells] (default 1000 500)
#include <chrono>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <ctime>
#include <memory>
#include <vector>

#include "model/firn_model.hpp"
#include "model/table_profile.hpp"
#include "solver/closed_form_solver.hpp"
#include "solver/stratified_solver.hpp"
#include "station/visibility_map.hpp"

using namespace firnray;

namespace {

std::shared_ptr<const IndexProfile> synthetic_log() {
    std::vector<double> depth, n;
    unsigned state = 12345u;
    auto next_uniform = [&]() {
        state = state * 1664525u + 1013904223u;
        return (state >> 8) / 16777216.0;
    };
    for (int i = 0; i < 200; ++i) {
        const double d = i;
        double value = 1.78 - 0.43 * std::exp(-d / 37.0) + 0.013 * std::sin(2.0 * 3.14159265358979 * d / 7.3) +
                       0.004 * (next_uniform() - 0.5);
        if (i == 60) value += 0.05;  // the ice lens
        depth.push_back(d);
        n.push_back(value);
    }
    return std::make_shared<TableProfile>(depth, n);
}

void run(const char* name, const RaySolver& solver, const MapGrid& grid, double receiver_z,
         VisibilityOptions::Engine engine, int threads) {
    Receiver receiver;
    receiver.name = "R";
    receiver.z_m = receiver_z;
    VisibilityOptions options;
    options.threads = threads;
    options.engine = engine;
    const auto start = std::chrono::steady_clock::now();
    const std::clock_t cpu_start = std::clock();
    const VisibilityMap map = compute_visibility_map(solver, std::span<const Receiver>(&receiver, 1), grid, options);
    const double seconds = std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
    const double cpu_seconds = static_cast<double>(std::clock() - cpu_start) / CLOCKS_PER_SEC;
    std::size_t visible = 0, ducted_only = 0;
    for (const MapCell& cell : map.cells) {
        visible += map.visible(cell);
        ducted_only += cell.kinds == kind_ducted;
    }
    std::printf("  %-44s %s table, %d thread(s): %.2f s wall, %.2f s CPU; %zu of %zu cells visible, %zu ducted only\n",
                name, map.stratified ? "stratified" : "fast      ", threads, seconds, cpu_seconds, visible, map.cells.size(),
                ducted_only);
}

}  // namespace

int main(int argc, char** argv) {
    const int columns = argc > 1 ? std::atoi(argv[1]) : 1000, rows = argc > 2 ? std::atoi(argv[2]) : 500;
    std::printf("%d x %d visibility maps, receiver at 60 m, 1500 ray parameters, max_bounces 4 (wall time, one run)\n",
                columns, rows);

    auto log_model = std::make_shared<FirnModel>();
    log_model->name = "synthetic 200-point log";
    log_model->index = synthetic_log();
    const StratifiedSolver log_solver(log_model);
    MapGrid log_grid;
    log_grid.distance_max_m = 1000.0, log_grid.distance_cells = columns;
    log_grid.depth_max_m = 190.0, log_grid.depth_cells = rows;
    std::printf("synthetic log: %zu inversions, %zu ducts\n", log_solver.stratified_profile().inversions().size(),
                log_solver.stratified_profile().ducts().size());
    run("log with inversions, 1 km x 190 m", log_solver, log_grid, -60.0, VisibilityOptions::Engine::automatic, 2);

    auto exponential = std::make_shared<FirnModel>();
    exponential->name = "exponential 1.78/1.35/37 m";
    exponential->index = std::make_shared<ExponentialProfile>(1.78, 1.35, 37.0);
    const ClosedFormSolver closed(exponential);
    MapGrid grid;
    grid.distance_max_m = 2000.0, grid.distance_cells = columns;
    grid.depth_max_m = 500.0, grid.depth_cells = rows;
    for (int threads : {1, 2}) {
        run("exponential, 2 km x 500 m", closed, grid, -60.0, VisibilityOptions::Engine::automatic, threads);
        run("exponential, 2 km x 500 m", closed, grid, -60.0, VisibilityOptions::Engine::stratified, threads);
    }
}
