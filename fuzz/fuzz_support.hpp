// Small tools the harnesses share: writing the input to a file (the readers take paths) and
// turning bytes into numbers inside a documented range.
#pragma once

#include <cstddef>
#include <cstdint>
#include <string>
#include <string_view>

#include "station/station.hpp"

namespace firnray::fuzz {

// A fixed 12-channel station for the harnesses of station-based CSV files: three strings of four
// receivers (A1..C4, 40 to 100 m deep) on a triangle 40 m across, as the demo's.
const Station& three_string_station();

// A folder of this process's own under the system's temporary folder, made on first use and
// removed at exit. Harness files go there, so relative paths in a fuzzed model file stay inside.
const std::string& scratch_folder();

// Writes `bytes` to scratch_folder()/name and returns the path.
std::string write_scratch_file(const std::string& name, std::string_view bytes);

// Aborts with a message on stderr: a broken invariant, reported to libFuzzer as a crash.
[[noreturn]] void fail_invariant(const std::string& what);

// Reads numbers from the input bytes; past the end every read gives zero bits, so any input,
// even an empty one, decodes to something.
class ByteReader {
public:
    ByteReader(const std::uint8_t* data, std::size_t size) : data_(data), size_(size) {}

    std::uint64_t bits(int count);                 // the next `count` bits (1..64), little-endian
    bool flag() { return bits(1) != 0; }
    int integer(int lowest, int highest);          // uniform-ish in [lowest, highest]
    double uniform(double lowest, double highest); // in [lowest, highest]
    // log-uniform in [lowest, highest] (both > 0): reaches the extremes as often as the middle.
    double log_uniform(double lowest, double highest);
    // Magnitude log-uniform in [smallest, largest], random sign; zero now and then.
    double signed_log_uniform(double smallest, double largest);

private:
    const std::uint8_t* data_;
    std::size_t size_;
    std::size_t bit_ = 0;
};

}  // namespace firnray::fuzz
