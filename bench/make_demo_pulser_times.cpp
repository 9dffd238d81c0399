// Writes demo/pulser-times.csv: SYNTHETIC pulser arrival times at the FICTIONAL Kestrel Station
// (demo/station.toml), made by the path finder from an exponential profile a little off the
// demo's built-in model, plus Gaussian timing noise with a fixed seed (docs/calibrate.md, Demo).
// Not a benchmark: it lives in bench/ because every file here becomes a program of its own.
// Usage: make_demo_pulser_times STATION.toml > demo/pulser-times.csv
#include <cstdio>
#include <iostream>
#include <memory>
#include <random>

#include "../tests/calibrate/synthetic_pulser_times.hpp"
#include "core/errors.hpp"
#include "model/model_file.hpp"
#include "solver/make_solver.hpp"

using namespace firnray;

int main(int argc, char** argv) {
    if (argc != 2) {
        std::fprintf(stderr, "usage: make_demo_pulser_times STATION.toml > pulser-times.csv\n");
        return 2;
    }
    try {
        const Station station = load_station_file(argv[1]);
        // The "true" site: n_surface 1.365, n_deep 1.775, scale depth 40 m, against the built-in
        // 1.35, 1.78 and 37 m; all inside the published ranges for polar firn (from memory).
        FirnModel truth = default_model();
        truth.index = std::make_shared<ExponentialProfile>(1.775, 1.365, 40.0);
        const auto solver = make_solver(std::make_shared<const FirnModel>(truth), SolverChoice::automatic);
        // A deep borehole 110 m from string A with a pulser lowered through seven depths (none at a
        // receiver's depth), and near-surface pulsers 1.5 m deep at a few distances.
        std::vector<test::SyntheticPulser> pulsers;
        for (double depth : {25.0, 50.0, 70.0, 90.0, 120.0, 150.0, 200.0})
            pulsers.push_back({fmt::format("hole-{:.0f}m", depth), {90.0, 60.0, -depth}});
        pulsers.push_back({"surface-north", {20.0, 70.0, -1.5}});
        pulsers.push_back({"surface-west", {-60.0, 10.0, -1.5}});
        pulsers.push_back({"surface-east", {140.0, -20.0, -1.5}});
        std::mt19937_64 rng(20261203);
        const PulserTimes times = test::synthetic_pulser_times(*solver, station, pulsers, 0.5, rng, true);
        std::cout << "# SYNTHETIC pulser arrival times at the FICTIONAL Kestrel Station (demo/station.toml): not a\n"
                     "# measurement. Made by the path finder from an exponential profile with n_surface 1.365,\n"
                     "# n_deep 1.775, scale depth 40 m (the demo's built-in model has 1.35, 1.78, 37 m), first and\n"
                     "# second arrivals (the second where it comes more than 10 ns later), a random emission time\n"
                     "# per pulser and Gaussian noise of 0.5 ns (std::mt19937_64, seed 20261203).\n"
                     "# Regenerate: build/make_demo_pulser_times demo/station.toml > demo/pulser-times.csv\n";
        test::write_pulser_times_csv(std::cout, times, station);
        return 0;
    } catch (const Error& e) {
        std::fprintf(stderr, "make_demo_pulser_times: %s\n", e.what());
        return 1;
    }
}
