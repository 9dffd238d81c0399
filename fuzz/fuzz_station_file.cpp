// Harness: a station file (bytes → file → load_station_file). A station that loads has at least
// one receiver, unique names, finite positions, and finds each receiver by its name.
#include <cmath>
#include <string>
#include <string_view>

#include "core/errors.hpp"
#include "fuzz_harness.hpp"
#include "fuzz_support.hpp"
#include "station/station.hpp"

using namespace firnray;

int fuzz_one(const std::uint8_t* data, std::size_t size) {
    const std::string path =
        fuzz::write_scratch_file("station.toml", std::string_view(reinterpret_cast<const char*>(data), size));
    Station station;
    try {
        station = load_station_file(path);
    } catch (const Error&) {
        return 0;
    }
    if (station.receivers.empty()) fuzz::fail_invariant("a station loaded without receivers");
    for (std::size_t i = 0; i < station.receivers.size(); ++i) {
        const Receiver& r = station.receivers[i];
        if (!std::isfinite(r.x_m) || !std::isfinite(r.y_m) || !std::isfinite(r.z_m))
            fuzz::fail_invariant("receiver '" + r.name + "' loaded with a position that is not finite");
        if (station.index_of(r.name) != i) fuzz::fail_invariant("receiver '" + r.name + "' is not found by its name");
    }
    try {
        station.receiver(std::string("\x01no such receiver"));
        fuzz::fail_invariant("a receiver name that is not in the station was found");
    } catch (const Error&) {
    }
    return 0;
}
