// Benchmark: a Monte Carlo shadow boundary with 100 samples (issue 11: <= 10 s on 2 cores,
// exponential model): the boundary of each of the 200 depth rows of shadow's default grid
// (0-500 m) with its 1σ, for one receiver at 60 m and for a 4-receiver station (at least 2
// receivers), on 1 and 2 threads; and, for scale, the linearised propagation (7 models) and one
// whole map of the same grid. Prints the median wall and processor times; see docs/performance.md.
#include <algorithm>
#include <chrono>
#include <cstdio>
#include <cstdlib>
#include <ctime>
#include <memory>
#include <string>
#include <vector>

#include "model/model_file.hpp"
#include "solver/make_solver.hpp"
#include "station/visibility_map.hpp"
#include "uncertainty/map_uncertainty.hpp"

#include "bench_timing.hpp"

using namespace firnray;

int main(int argc, char** argv) {
    const int repeats = argc > 1 ? std::atoi(argv[1]) : 1;
    // The exponential model with a covariance of the size a fit to a density log gives.
    const FirnModel model = parse_model("[index]\nkind = \"exponential\"\nn_deep = 1.78\nn_surface = 1.35\n"
                                        "scale_depth_m = 37\n[uncertainty]\n"
                                        "parameters = [\"n_surface\", \"scale_depth_m\", \"n_deep\"]\n"
                                        "covariance = [[4e-4, 0.012, 0], [0.012, 4.0, 0], [0, 0, 1e-6]]\n",
                                        "bench.toml");
    const ModelPerturbation perturbation(model);
    const MapGrid grid;  // shadow's default: 0-2000 m x 0-500 m, 400 x 200 cells
    const VisibilityOptions options;  // 1500 ray parameters

    std::vector<Receiver> one(1);
    one[0].name = "rx";
    one[0].z_m = -60.0;
    std::vector<Receiver> station(4);
    const double xs[] = {0.0, 40.0, -30.0, 10.0}, ys[] = {0.0, 20.0, 25.0, -35.0}, zs[] = {-40.0, -60.0, -80.0, -100.0};
    for (int k = 0; k < 4; ++k) {
        station[k].name = "R" + std::to_string(k + 1);
        station[k].x_m = xs[k];
        station[k].y_m = ys[k];
        station[k].z_m = zs[k];
    }

    std::printf("%d depth rows, %d ray parameters, %s\n", grid.depth_cells, options.ray_parameters,
                perturbation.describe().c_str());
    for (const auto* receivers : {&one, &station}) {
        VisibilityOptions map_options = options;
        map_options.min_receivers = receivers->size() == 1 ? 1 : 2;
        const char* who = receivers->size() == 1 ? "one receiver at 60 m" : "4-receiver station, >= 2 receivers";
        for (int threads : {1, 2}) {
            PropagationOptions propagation;
            propagation.method = PropagationMethod::monte_carlo;
            propagation.samples = 100;
            propagation.threads = threads;
            double cpu = 0.0;
            const double wall = median_seconds(repeats, [&] {
                propagate_boundary_uncertainty(perturbation, SolverChoice::automatic, *receivers, grid, map_options,
                                               propagation);
            }, &cpu);
            std::printf("%s: Monte Carlo, 100 samples, %d thread(s): %.2f s wall, %.2f s processor\n", who, threads,
                        wall, cpu);
        }
        PropagationOptions linear;
        linear.threads = 2;
        double cpu = 0.0;
        const double wall = median_seconds(repeats, [&] {
            propagate_boundary_uncertainty(perturbation, SolverChoice::automatic, *receivers, grid, map_options, linear);
        }, &cpu);
        std::printf("%s: linearised (7 models), 2 threads: %.2f s wall, %.2f s processor\n", who, wall, cpu);
        const auto solver = make_solver(std::make_shared<const FirnModel>(model), SolverChoice::automatic);
        const double boundary_only = median_seconds(3, [&] {
            compute_visibility_boundary(*solver, *receivers, grid, map_options);
        }, &cpu);
        std::printf("%s: one boundary alone, 1 thread: %.3f s wall, %.3f s processor\n", who, boundary_only, cpu);
        const double whole = median_seconds(3, [&] { compute_visibility_map(*solver, *receivers, grid, map_options); }, &cpu);
        std::printf("%s: one whole 400 x 200 map, 1 thread: %.3f s wall, %.3f s processor\n", who, whole, cpu);
    }
    return 0;
}
