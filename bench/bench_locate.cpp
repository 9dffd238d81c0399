// Events reconstructed per second per core by SourceLocator::fit: a 12-channel station (three
// strings of four), two pulses per channel, on the exponential model (closed form) and on a
// tabulated density log (stratified solver). Events are made with the path finder plus 0.5 ns
// noise; the search table and the travel-time table are built once and timed apart. One thread;
// the fits are timed by the wall clock and by the processor time of the process (std::clock),
// which a busy shared machine disturbs less.
// Usage: bench_locate [table-model-file] [events] [exponential-only]
//        (default models/table-density.toml, 200; the log gets a quarter of the events)
// Figures recorded in docs/performance.md.
#include <algorithm>
#include <chrono>
#include <cmath>
#include <ctime>
#include <cstdio>
#include <cstdlib>
#include <memory>
#include <random>
#include <string>
#include <vector>

#include "core/errors.hpp"
#include "locate/source_fit.hpp"
#include "model/model_file.hpp"
#include "solver/make_solver.hpp"

using namespace firnray;

namespace {

Station twelve_channels() {
    Station station;
    station.name = "benchmark station (three strings of four)";
    const double strings[3][2] = {{0.0, 0.0}, {40.0, 0.0}, {20.0, 34.6}};
    for (int s = 0; s < 3; ++s)
        for (int k = 0; k < 4; ++k) {
            Receiver r;
            r.name = std::string(1, static_cast<char>('A' + s)) + std::to_string(k + 1);
            r.string_name = std::string(1, static_cast<char>('A' + s));
            r.x_m = strings[s][0];
            r.y_m = strings[s][1];
            r.z_m = -40.0 - 20.0 * k;
            station.receivers.push_back(r);
        }
    return station;
}

// Events whose every channel has two pulses at least 10 ns apart (what the target asks for).
std::vector<ArrivalEvent> make_events(const RaySolver& solver, const Station& station, std::size_t count) {
    std::mt19937_64 rng(99);
    std::uniform_real_distribution<double> distance(80.0, 500.0), azimuth(0.0, 6.283185307179586), depth(30.0, 250.0);
    std::normal_distribution<double> noise(0.0, 0.5);
    std::vector<ArrivalEvent> events;
    while (events.size() < count) {
        const double r = distance(rng), a = azimuth(rng);
        const Point source{20.0 + r * std::cos(a), 11.5 + r * std::sin(a), -depth(rng)};
        ArrivalEvent event;
        event.name = "event";
        bool complete = true;
        for (std::size_t c = 0; c < station.receivers.size() && complete; ++c) {
            const Receiver& rc = station.receivers[c];
            std::vector<ConnectedPath> paths;
            try {
                paths = find_paths(solver, source, Point{rc.x_m, rc.y_m, rc.z_m});
            } catch (const NumericalError&) {
                complete = false;  // a source the numeric solver cannot join: draw another
                break;
            }
            if (paths.size() < 2 || (paths[1].time_s - paths[0].time_s) * 1e9 < 10.0) {
                complete = false;
                break;
            }
            for (int k = 0; k < 2; ++k)
                event.pulses.push_back({c, (paths[static_cast<std::size_t>(k)].time_s * 1e9 + noise(rng)) * 1e-9, 0.5e-9, 0});
        }
        if (complete) events.push_back(std::move(event));
    }
    return events;
}

void run(const char* label, std::shared_ptr<const FirnModel> model, std::size_t count, LocateOptions::TravelTimes mode) {
    const auto solver = make_solver(model, SolverChoice::automatic);
    const Station station = twelve_channels();
    const auto events = make_events(*solver, station, count);
    LocateOptions options;
    options.travel_times = mode;
    const auto t0 = std::chrono::steady_clock::now();
    const SourceLocator locator(*solver, station, options);
    const auto t1 = std::chrono::steady_clock::now();
    const std::clock_t c1 = std::clock();
    std::size_t fitted = 0;
    for (const ArrivalEvent& e : events) fitted += locator.fit(e).best ? 1 : 0;
    const std::clock_t c2 = std::clock();
    const auto t2 = std::chrono::steady_clock::now();
    const double build = std::chrono::duration<double>(t1 - t0).count();
    const double fit = std::chrono::duration<double>(t2 - t1).count();
    const double cpu = static_cast<double>(c2 - c1) / CLOCKS_PER_SEC;
    std::printf("%-44s %-12s solver %-10s tables %.2f s; %zu events (%zu fitted): %.0f events/s wall, %.0f events/s CPU\n",
                label, mode == LocateOptions::TravelTimes::exact ? "find_paths" : "interpolated", solver->name().c_str(),
                build, events.size(), fitted, static_cast<double>(events.size()) / fit,
                static_cast<double>(events.size()) / cpu);
    std::fflush(stdout);
}

}  // namespace

int main(int argc, char** argv) {
    const std::string table_path = argc > 1 ? argv[1] : "models/table-density.toml";
    const std::size_t count = argc > 2 ? static_cast<std::size_t>(std::max(1, std::atoi(argv[2]))) : 200;
    const auto exponential = std::make_shared<const FirnModel>(default_model());
    run("exponential model (built-in default)", exponential, count, LocateOptions::TravelTimes::interpolated);
    run("exponential model (built-in default)", exponential, count, LocateOptions::TravelTimes::exact);
    if (argc > 3) return 0;
    const auto log = std::make_shared<const FirnModel>(load_model_file(table_path));
    run(("tabulated log (" + table_path + ")").c_str(), log, std::max<std::size_t>(count / 4, 1),
        LocateOptions::TravelTimes::interpolated);
}
