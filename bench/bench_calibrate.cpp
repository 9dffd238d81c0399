// Time of one calibration (calibrate_profile): 3 exponential parameters fitted to 200 synthetic
// pulses (made by the path finder on a slightly different profile, 0.5 ns noise, first and
// second arrivals) from 10 pulsers at the demo's fictional Kestrel Station, starting from the
// built-in model; closed-form solver. Target <= 1 s (issue 11). Figures in docs/performance.md.
// Usage: bench_calibrate [STATION.toml] [THREADS] [REPEATS]   (default demo/station.toml, 1, 5)
#include <algorithm>
#include <chrono>
#include <cstdio>
#include <cstdlib>
#include <memory>
#include <random>
#include <string>
#include <vector>

#include "../tests/calibrate/synthetic_pulser_times.hpp"
#include "calibrate/calibration.hpp"
#include "model/model_file.hpp"
#include "solver/make_solver.hpp"

using namespace firnray;

int main(int argc, char** argv) {
    const std::string station_path = argc > 1 ? argv[1] : "demo/station.toml";
    const int threads = argc > 2 ? std::max(1, std::atoi(argv[2])) : 1;
    const int repeats = argc > 3 ? std::max(1, std::atoi(argv[3])) : 5;
    const Station station = load_station_file(station_path);
    FirnModel truth = default_model();
    truth.index = std::make_shared<ExponentialProfile>(1.775, 1.365, 40.0);
    const auto solver = make_solver(std::make_shared<const FirnModel>(truth), SolverChoice::automatic);
    std::vector<test::SyntheticPulser> pulsers;
    for (double depth : {25.0, 50.0, 70.0, 90.0, 120.0, 150.0, 200.0})
        pulsers.push_back({"hole-" + std::to_string(static_cast<int>(depth)), {90.0, 60.0, -depth}});
    pulsers.push_back({"surface-north", {20.0, 70.0, -1.5}});
    pulsers.push_back({"surface-west", {-60.0, 10.0, -1.5}});
    pulsers.push_back({"surface-east", {140.0, -20.0, -1.5}});
    std::mt19937_64 rng(42);
    PulserTimes times = test::synthetic_pulser_times(*solver, station, pulsers, 0.5, rng, true);
    // Exactly 200 pulses: each pulser keeps its share, the first pulses of each.
    std::size_t total = times.pulse_count();
    while (total > 200) {
        for (Pulser& p : times.pulsers)
            if (total > 200 && p.pulses.size() > 2) {
                p.pulses.pop_back();
                --total;
            }
    }
    CalibrationOptions options;
    options.threads = threads;
    std::vector<double> seconds;
    CalibrationResult result;
    for (int r = 0; r < repeats; ++r) {
        const auto t0 = std::chrono::steady_clock::now();
        result = calibrate_profile(default_model(), station, times, CalibrationKind::exponential, options);
        seconds.push_back(std::chrono::duration<double>(std::chrono::steady_clock::now() - t0).count());
    }
    std::sort(seconds.begin(), seconds.end());
    std::printf("calibrate: %zu pulses from %zu pulsers, %zu parameters, %d threads: %d iterations, chi2 %.1f / %d; "
                "median %.3f s, fastest %.3f s over %d runs (target <= 1 s)\n",
                times.pulse_count(), times.pulsers.size(), result.free_names.size(), threads, result.iterations,
                result.chi2, result.ndof, seconds[seconds.size() / 2], seconds.front(), repeats);
}
