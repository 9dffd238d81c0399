// Measured pulser arrival times for calibrating the index profile (docs/calibrate.md): the
// TIMES.csv of `firnray calibrate`, one row per measured pulse (pulser, pulser_x_m, pulser_y_m,
// pulser_z_m, channel, time_ns, optional sigma_ns), grouped into pulsers.
#pragma once

#include <cstddef>
#include <string>
#include <vector>

#include "core/point.hpp"
#include "station/station.hpp"

namespace firnray {

// One measured pulse. Times are on a clock common to the pulser's channels; the emission time is
// unknown (fitted as one offset per pulser), so only differences between a pulser's pulses count.
struct PulserPulse {
    std::size_t channel = 0;  // index of the receiver in the station
    double time_ns = 0.0;
    double sigma_ns = 0.0;    // 1σ timing uncertainty, > 0
    int line = 0;             // line in the times file
};

struct Pulser {
    std::string name;
    Point position;                   // m, z up
    int first_line = 0;               // line of the pulser's first row
    std::vector<PulserPulse> pulses;  // in file order, at least two
};

struct PulserTimes {
    std::string path;              // the file, as given
    std::vector<Pulser> pulsers;   // in the order of their first row
    std::size_t pulse_count() const;
};

// Reads TIMES.csv. Rows of one pulser need not be adjacent. Throws DataInputError, naming the
// file, the line, the column and the character column, for: a missing required column, a file
// without rows, an empty pulser name, a coordinate or time that is not a finite number, a sigma
// that is not above 0, a channel that is not a receiver of the station (with "did you mean"), a
// pulser whose position differs between its rows, a channel with more than two pulses of one
// pulser (a channel records the first and perhaps the second path), and a pulser with one pulse
// only (its emission time is free, so one pulse constrains nothing). default_sigma_ns (for rows
// without sigma_ns) must be a positive finite number.
PulserTimes read_pulser_times(const std::string& path, const Station& station, double default_sigma_ns);

}  // namespace firnray
