// Harness: the TIMES.csv of `firnray calibrate` (bytes → file → read_pulser_times) against a fixed
// 12-channel station (three strings of four, as the demo's). The reader either throws a typed
// error or returns pulsers that the fit can use: a name, a finite position, at least two pulses,
// each on a channel of the station with a finite time, a positive finite sigma and a line inside
// the file, and at most two pulses of one pulser on one channel.
#include <cmath>
#include <map>
#include <string>
#include <string_view>

#include "calibrate/pulser_times.hpp"
#include "core/errors.hpp"
#include "fuzz_harness.hpp"
#include "fuzz_support.hpp"

using namespace firnray;

int fuzz_one(const std::uint8_t* data, std::size_t size) {
    const std::string path =
        fuzz::write_scratch_file("times.csv", std::string_view(reinterpret_cast<const char*>(data), size));
    const Station& station = fuzz::three_string_station();
    PulserTimes times;
    try {
        times = read_pulser_times(path, station, 0.5);
    } catch (const Error&) {
        return 0;
    }
    if (times.pulsers.empty()) fuzz::fail_invariant("read_pulser_times returned no pulsers and no error");
    for (const Pulser& p : times.pulsers) {
        if (p.name.empty()) fuzz::fail_invariant("a pulser has no name");
        if (p.first_line < 1) fuzz::fail_invariant("pulser '" + p.name + "' has no first line");
        if (!(std::isfinite(p.position.x) && std::isfinite(p.position.y) && std::isfinite(p.position.z)))
            fuzz::fail_invariant("pulser '" + p.name + "' has a position that is not finite");
        if (p.pulses.size() < 2) fuzz::fail_invariant("pulser '" + p.name + "' has fewer than two pulses");
        std::map<std::size_t, int> per_channel;
        for (const PulserPulse& pulse : p.pulses) {
            if (pulse.channel >= station.receivers.size())
                fuzz::fail_invariant("pulser '" + p.name + "' has a pulse on a channel outside the station");
            if (++per_channel[pulse.channel] > 2)
                fuzz::fail_invariant("pulser '" + p.name + "' has more than two pulses on one channel");
            if (!std::isfinite(pulse.time_ns)) fuzz::fail_invariant("pulser '" + p.name + "' has a time that is not finite");
            if (!(std::isfinite(pulse.sigma_ns) && pulse.sigma_ns > 0.0))
                fuzz::fail_invariant("pulser '" + p.name + "' has a sigma that is not a positive finite number");
            if (pulse.line < 1) fuzz::fail_invariant("pulser '" + p.name + "' has a pulse without a line");
        }
    }
    return 0;
}
