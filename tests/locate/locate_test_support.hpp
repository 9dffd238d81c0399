// Shared by the locate tests: a three-string, twelve-channel station (the layout of the demo's
// fictional Kestrel Station), a small search grid that keeps the tests fast, and synthetic
// events made with the path finder plus Gaussian timing noise.
#pragma once

#include <random>
#include <string>
#include <vector>

#include "locate/arrival_events.hpp"
#include "locate/source_fit.hpp"
#include "paths/find_paths.hpp"
#include "station/station.hpp"

namespace firnray::test {

inline Station three_string_station() {
    Station station;
    station.name = "test station";
    const struct {
        const char* name;
        double x, y;
    } strings[] = {{"A", 0.0, 0.0}, {"B", 40.0, 0.0}, {"C", 20.0, 34.6}};
    for (const auto& s : strings)
        for (int k = 0; k < 4; ++k) {
            Receiver r;
            r.name = std::string(s.name) + std::to_string(k + 1);
            r.string_name = s.name;
            r.x_m = s.x;
            r.y_m = s.y;
            r.z_m = -40.0 - 20.0 * k;
            station.receivers.push_back(r);
        }
    return station;
}

inline LocateOptions small_search_options() {
    LocateOptions options;
    options.search.max_distance_m = 1500.0;
    options.search.distance_steps = 14;
    options.search.azimuth_steps = 18;
    options.search.depths_m = {5, 20, 45, 80, 120, 170, 230, 300, 400, 520};
    options.search.heights_m = {5, 60};
    options.threads = 2;
    return options;
}

// Which pulses of a channel a synthetic event keeps: both first paths, or only one of them.
enum class KeepPulses { first_two, first_only, second_only };

// The first two paths at every receiver (one pulse when they are closer than pulse_width_ns),
// with Gaussian noise of sigma_ns and an emission time t0_ns. keep(channel) chooses per channel.
template <class Keep>
ArrivalEvent synthetic_event(const RaySolver& solver, const Station& station, const Point& source, double sigma_ns,
                             double t0_ns, std::mt19937_64& rng, Keep&& keep, double pulse_width_ns = 10.0) {
    std::normal_distribution<double> noise(0.0, sigma_ns);
    ArrivalEvent event;
    event.name = "synthetic";
    int line = 2;
    event.first_line = line;
    for (std::size_t c = 0; c < station.receivers.size(); ++c) {
        const Receiver& r = station.receivers[c];
        const auto paths = find_paths(solver, source, Point{r.x_m, r.y_m, r.z_m});
        std::vector<double> times;
        for (const ConnectedPath& p : paths) {
            if (times.size() == 2) break;
            const double t = p.time_s * 1e9;
            if (!times.empty() && t - times.back() < pulse_width_ns) continue;
            times.push_back(t);
        }
        const KeepPulses which = keep(c);
        for (std::size_t k = 0; k < times.size(); ++k) {
            if (which == KeepPulses::first_only && k != 0) continue;
            if (which == KeepPulses::second_only && k != 1) continue;
            MeasuredPulse pulse;
            pulse.channel = c;
            pulse.time_s = (t0_ns + times[k] + noise(rng)) * 1e-9;
            pulse.sigma_s = (sigma_ns > 0.0 ? sigma_ns : 1.0) * 1e-9;  // noise-free events still carry a weight
            pulse.line = line++;
            event.pulses.push_back(pulse);
        }
    }
    return event;
}

inline ArrivalEvent synthetic_event(const RaySolver& solver, const Station& station, const Point& source, double sigma_ns,
                                    double t0_ns, std::mt19937_64& rng) {
    return synthetic_event(solver, station, source, sigma_ns, t0_ns, rng, [](std::size_t) { return KeepPulses::first_two; });
}

}  // namespace firnray::test
