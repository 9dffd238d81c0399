// Harness: the ARRIVALS.csv of `firnray locate` (bytes → file → read_arrival_events) against a
// fixed 12-channel station (three strings of four, as the demo's). The reader either throws a
// typed error or returns events whose pulses are usable: a channel of the station, a finite time,
// a positive finite sigma, a line inside the file; an event without an error passes
// arrival_event_problem.
#include <cmath>
#include <string>
#include <string_view>

#include "core/errors.hpp"
#include "fuzz_harness.hpp"
#include "fuzz_support.hpp"
#include "locate/arrival_events.hpp"

using namespace firnray;

int fuzz_one(const std::uint8_t* data, std::size_t size) {
    const std::string path =
        fuzz::write_scratch_file("arrivals.csv", std::string_view(reinterpret_cast<const char*>(data), size));
    const Station& station = fuzz::three_string_station();
    std::vector<ArrivalEvent> events;
    try {
        events = read_arrival_events(path, station, 0.5);
    } catch (const Error&) {
        return 0;
    }
    if (events.empty()) fuzz::fail_invariant("read_arrival_events returned no events and no error");
    for (const ArrivalEvent& e : events) {
        if (e.first_line < 1) fuzz::fail_invariant("event '" + e.name + "' has no first line");
        if (!e.error.empty()) continue;
        if (!arrival_event_problem(e, station).empty())
            fuzz::fail_invariant("event '" + e.name + "' has no error but arrival_event_problem objects to it");
        for (const MeasuredPulse& p : e.pulses) {
            if (p.channel >= station.receivers.size())
                fuzz::fail_invariant("event '" + e.name + "' has a pulse on a channel outside the station");
            if (!std::isfinite(p.time_s)) fuzz::fail_invariant("event '" + e.name + "' has a time that is not finite");
            if (!(std::isfinite(p.sigma_s) && p.sigma_s > 0.0))
                fuzz::fail_invariant("event '" + e.name + "' has a sigma that is not a positive finite number");
            if (p.line < 1) fuzz::fail_invariant("event '" + e.name + "' has a pulse without a line");
        }
    }
    return 0;
}
