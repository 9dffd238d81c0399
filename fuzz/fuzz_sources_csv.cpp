// Harness: the sources CSV of `firnray delays` (bytes → file → read_delay_sources). Every source
// read either carries its error or has a finite position.
#include <cmath>
#include <string>
#include <string_view>

#include "core/errors.hpp"
#include "fuzz_harness.hpp"
#include "fuzz_support.hpp"
#include "station/delay_table.hpp"

using namespace firnray;

int fuzz_one(const std::uint8_t* data, std::size_t size) {
    const std::string path =
        fuzz::write_scratch_file("sources.csv", std::string_view(reinterpret_cast<const char*>(data), size));
    std::vector<DelaySource> sources;
    try {
        sources = read_delay_sources(path);
    } catch (const Error&) {
        return 0;
    }
    if (sources.empty()) fuzz::fail_invariant("read_delay_sources returned no sources and no error");
    for (const DelaySource& s : sources) {
        if (!s.error.empty()) continue;
        if (!std::isfinite(s.position.x) || !std::isfinite(s.position.y) || !std::isfinite(s.position.z))
            fuzz::fail_invariant("source '" + s.name + "' was read with a position that is not finite");
    }
    return 0;
}
