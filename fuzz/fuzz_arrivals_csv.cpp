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

namespace {

const Station& three_strings() {
    static const Station station = [] {
        Station s;
        s.name = "fuzz station";
        const double strings[3][2] = {{0.0, 0.0}, {40.0, 0.0}, {20.0, 34.6}};
        for (int k = 0; k < 3; ++k)
            for (int level = 0; level < 4; ++level) {
                Receiver r;
                r.string_name = std::string(1, static_cast<char>('A' + k));
                r.name = r.string_name + std::to_string(level + 1);
                r.x_m = strings[k][0];
                r.y_m = strings[k][1];
                r.z_m = -40.0 - 20.0 * level;
                s.receivers.push_back(r);
            }
        return s;
    }();
    return station;
}

}  // namespace

int fuzz_one(const std::uint8_t* data, std::size_t size) {
    const std::string path =
        fuzz::write_scratch_file("arrivals.csv", std::string_view(reinterpret_cast<const char*>(data), size));
    const Station& station = three_strings();
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
