// Benchmark: a 1000 x 500 beam coverage map for an 8-antenna phased array (1 m spacing, top
// antenna 180 m deep) with 16 beams from 30° to 150°, exponential model, closed-form solver, on 1
// and 2 threads; and the parts of its cost (the arrival tables alone, the best-beam search).
// Prints the median wall time of a few runs; see docs/performance.md.
#include <algorithm>
#include <chrono>
#include <ctime>
#include <cstdio>
#include <cstdlib>
#include <memory>
#include <string>
#include <vector>

#include "beams/beam_coverage.hpp"
#include "model/firn_model.hpp"
#include "solver/closed_form_solver.hpp"
#include "station/arrival_table.hpp"

#include "bench_timing.hpp"

using namespace firnray;

int main(int argc, char** argv) {
    const int repeats = argc > 1 ? std::atoi(argv[1]) : 3;
    auto model = std::make_shared<FirnModel>();
    model->name = "exponential 1.78/1.35/37 m";
    model->index = std::make_shared<ExponentialProfile>(1.78, 1.35, 37.0);
    ClosedFormSolver solver(model);
    const StratifiedProfile profile(model->index);

    Station station;
    station.origin = "bench";
    for (int k = 0; k < 8; ++k) {
        Receiver r;
        r.name = "P" + std::to_string(k + 1);
        r.string_name = "P";
        r.z_m = -180.0 - k;
        station.receivers.push_back(r);
    }
    const PhasedArray array = make_phased_array(station, "P");
    std::vector<PlaneWaveOffsets> beams;
    for (double zenith : evenly_spaced_zeniths(16, 30.0, 150.0)) beams.push_back(plane_wave_offsets(profile, array, zenith));

    MapGrid grid;
    grid.distance_max_m = 2000.0;
    grid.distance_cells = 1000;
    grid.depth_max_m = 500.0;
    grid.depth_cells = 500;
    std::vector<double> source_z;
    for (int j = 0; j < grid.depth_cells; ++j) source_z.push_back(-grid.depth_at(j));

    std::printf("1000 x 500 beam coverage map, 8 antennas, 16 beams, median of %d runs\n", repeats);
    double one = 0.0;
    for (int threads : {1, 2}) {
        ArrivalTableOptions table_options;
        table_options.threads = threads;
        double tables_cpu = 0.0, map_cpu = 0.0;
        const double tables = median_seconds(
            repeats, [&] { for (const Receiver& r : array.antennas) ArrivalTable table(solver, r.z_m, source_z, table_options); },
            &tables_cpu);
        CoverageOptions options;
        options.threads = threads;
        options.threshold = 0.7;
        const double t = median_seconds(
            repeats,
            [&] {
                const auto coverage = compute_beam_coverage(solver, array, beams, grid, options);
                if (coverage.cells.empty()) std::abort();
            },
            &map_cpu);
        if (threads == 1) one = t;
        std::printf("  %d thread(s): %.3f s wall, %.3f s processor (8 arrival tables alone: %.3f s wall, %.3f s processor)%s\n",
                    threads, t, map_cpu, tables, tables_cpu,
                    threads == 2 ? (" (speed-up " + std::to_string(one / t).substr(0, 4) + "x)").c_str() : "");
    }
}
