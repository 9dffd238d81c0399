// Synthetic pulser arrival times for the calibration tests, the benchmark and the demo's times
// file: the path finder's times on a known model plus Gaussian noise and a random emission time
// per pulser, and the same written as a TIMES.csv.
#pragma once

#include <ostream>
#include <random>
#include <string>
#include <vector>

#include <fmt/format.h>

#include "calibrate/pulser_times.hpp"
#include "paths/find_paths.hpp"
#include "station/station.hpp"

namespace firnray::test {

struct SyntheticPulser {
    std::string name;
    Point position;
};

// The first arrival at every channel the pulser reaches and, with second_arrivals, the second one
// too where it comes more than pulse_width_ns later (closer paths make one recorded pulse).
// Emission times are uniform in 0..1000 ns. Pulsers that reach fewer than two channels are left out.
inline PulserTimes synthetic_pulser_times(const RaySolver& solver, const Station& station,
                                          const std::vector<SyntheticPulser>& pulsers, double sigma_ns,
                                          std::mt19937_64& rng, bool second_arrivals = false,
                                          double pulse_width_ns = 10.0) {
    std::normal_distribution<double> noise(0.0, sigma_ns);
    std::uniform_real_distribution<double> emission(0.0, 1000.0);
    PulserTimes times;
    times.path = "synthetic";
    int line = 2;
    for (const SyntheticPulser& s : pulsers) {
        Pulser pulser{s.name, s.position, line, {}};
        const double emitted_ns = emission(rng);
        for (std::size_t c = 0; c < station.receivers.size(); ++c) {
            const Receiver& r = station.receivers[c];
            const auto paths = find_paths(solver, s.position, Point{r.x_m, r.y_m, r.z_m});
            for (std::size_t j = 0; j < paths.size() && j < 2; ++j) {
                if (j == 1 && (!second_arrivals || (paths[1].time_s - paths[0].time_s) * 1e9 < pulse_width_ns)) break;
                pulser.pulses.push_back({c, emitted_ns + paths[j].time_s * 1e9 + noise(rng), sigma_ns, line++});
            }
        }
        if (pulser.pulses.size() >= 2) times.pulsers.push_back(std::move(pulser));
    }
    return times;
}

// The times as a TIMES.csv (header pulser,pulser_x_m,pulser_y_m,pulser_z_m,channel,time_ns,sigma_ns).
inline void write_pulser_times_csv(std::ostream& out, const PulserTimes& times, const Station& station) {
    out << "pulser,pulser_x_m,pulser_y_m,pulser_z_m,channel,time_ns,sigma_ns\n";
    for (const Pulser& p : times.pulsers)
        for (const PulserPulse& pulse : p.pulses)
            out << fmt::format("{},{:.3f},{:.3f},{:.3f},{},{:.3f},{:.3g}\n", p.name, p.position.x, p.position.y,
                               p.position.z, station.receivers[pulse.channel].name, pulse.time_ns, pulse.sigma_ns);
}

}  // namespace firnray::test
