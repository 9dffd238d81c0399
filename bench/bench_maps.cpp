// Benchmark: 1000 x 500 visibility maps (closed form and numeric solver) on 1 and 2 threads.
// Prints the median wall time of a few runs; see docs/performance.md.
#include <algorithm>
#include <chrono>
#include <cstdio>
#include <cstdlib>
#include <memory>
#include <vector>

#include "model/firn_model.hpp"
#include "solver/closed_form_solver.hpp"
#include "solver/numeric_solver.hpp"
#include "station/visibility_map.hpp"

using namespace firnray;

static double median_seconds(int repeats, const auto& body) {
    std::vector<double> times;
    for (int r = 0; r < repeats; ++r) {
        const auto start = std::chrono::steady_clock::now();
        body();
        times.push_back(std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count());
    }
    std::sort(times.begin(), times.end());
    return times[times.size() / 2];
}

int main(int argc, char** argv) {
    const int repeats = argc > 1 ? std::atoi(argv[1]) : 3;
    auto model = std::make_shared<FirnModel>();
    model->name = "exponential 1.78/1.35/37 m";
    model->index = std::make_shared<ExponentialProfile>(1.78, 1.35, 37.0);
    ClosedFormSolver closed(model);
    NumericSolver numeric(model);
    Receiver receiver;
    receiver.name = "R";
    receiver.z_m = -60.0;
    MapGrid grid;
    grid.distance_max_m = 2000.0;
    grid.distance_cells = 1000;
    grid.depth_max_m = 500.0;
    grid.depth_cells = 500;
    std::printf("1000 x 500 visibility map, receiver at 60 m, median of %d runs\n", repeats);
    for (const RaySolver* solver : {static_cast<const RaySolver*>(&closed), static_cast<const RaySolver*>(&numeric)}) {
        double one = 0.0;
        for (int threads : {1, 2}) {
            VisibilityOptions options;
            options.threads = threads;
            const double t = median_seconds(repeats, [&] {
                const auto map = compute_visibility_map(*solver, std::span<const Receiver>(&receiver, 1), grid, options);
                if (map.cells.empty()) std::abort();
            });
            if (threads == 1) one = t;
            std::printf("  %-8s %d thread(s): %.3f s%s\n", solver->name().c_str(), threads, t,
                        threads == 2 ? (" (speed-up " + std::to_string(one / t).substr(0, 4) + "x)").c_str() : "");
        }
    }
}
