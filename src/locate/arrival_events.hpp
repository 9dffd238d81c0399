// Measured arrival times for source reconstruction: the ARRIVALS.csv of `firnray locate` (one row
// per measured pulse: event, channel, time_ns, optional sigma_ns) grouped into events. A bad row
// fails its own event only, with a message naming the file line; the other events are kept.
#pragma once

#include <cstddef>
#include <string>
#include <vector>

#include "station/station.hpp"

namespace firnray {

// One measured pulse. Times are on a clock common to the event's channels, origin arbitrary.
struct MeasuredPulse {
    std::size_t channel = 0;  // index of the receiver in the station
    double time_s = 0.0;
    double sigma_s = 0.0;     // 1σ timing uncertainty, > 0
    int line = 0;             // line in the arrivals file
};

struct ArrivalEvent {
    std::string name;
    int first_line = 0;                // line of the event's first row
    std::vector<MeasuredPulse> pulses; // in file order
    std::string error;                 // non-empty: the event cannot be fitted, and why
};

// Checks that an event can be fitted at all: at least 4 pulses (the unknowns are x, y, z and the
// emission time), at most two pulses per channel, and channels on more than one vertical line
// (on one string the azimuth is free). Returns the reason, or an empty string.
std::string arrival_event_problem(const ArrivalEvent& event, const Station& station);
// The line that problem is best reported at: a channel's third pulse, else the event's first row.
int problem_line(const ArrivalEvent& event, const Station& station);

// Reads ARRIVALS.csv. Events come in the order of their first row; rows of one event need not be
// adjacent. Throws DataInputError when the file cannot be read, a required column (event,
// channel, time_ns) is missing, the file has no rows, or default_sigma_ns is not a positive finite
// number. A bad row (unknown channel, a time that is not a finite number, a sigma that is not
// positive) sets its event's error, naming the line; arrival_event_problem's checks are applied
// to every event that has no error yet.
std::vector<ArrivalEvent> read_arrival_events(const std::string& path, const Station& station, double default_sigma_ns);

}  // namespace firnray
