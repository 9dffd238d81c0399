#include "fuzz_support.hpp"

#include <unistd.h>

#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <system_error>

namespace firnray::fuzz {

namespace fs = std::filesystem;

namespace {

struct ScratchFolder {
    std::string path;
    ScratchFolder() {
        std::string pattern = (fs::temp_directory_path() / "firnray-fuzz-XXXXXX").string();
        if (mkdtemp(pattern.data()) == nullptr) fail_invariant("cannot make a scratch folder under " + pattern);
        path = pattern;
    }
    ~ScratchFolder() {
        std::error_code ignored;
        fs::remove_all(path, ignored);
    }
};

}  // namespace

const std::string& scratch_folder() {
    static const ScratchFolder folder;
    return folder.path;
}

std::string write_scratch_file(const std::string& name, std::string_view bytes) {
    const std::string path = (fs::path(scratch_folder()) / name).string();
    std::ofstream out(path, std::ios::binary | std::ios::trunc);
    out.write(bytes.data(), static_cast<std::streamsize>(bytes.size()));
    out.close();
    if (!out) fail_invariant("cannot write the scratch file " + path);
    return path;
}

void fail_invariant(const std::string& what) {
    std::fprintf(stderr, "firnray fuzz harness: %s\n", what.c_str());
    std::fflush(stderr);
    std::abort();
}

std::uint64_t ByteReader::bits(int count) {
    std::uint64_t value = 0;
    for (int k = 0; k < count; ++k, ++bit_) {
        const std::size_t byte = bit_ / 8;
        if (byte < size_ && ((data_[byte] >> (bit_ % 8)) & 1u)) value |= std::uint64_t{1} << k;
    }
    return value;
}

int ByteReader::integer(int lowest, int highest) {
    const auto span = static_cast<std::uint64_t>(static_cast<std::int64_t>(highest) - lowest) + 1;
    return static_cast<int>(lowest + static_cast<std::int64_t>(bits(16) % span));
}

double ByteReader::uniform(double lowest, double highest) {
    const double fraction = static_cast<double>(bits(32)) / 4294967295.0;
    return lowest + (highest - lowest) * fraction;
}

double ByteReader::log_uniform(double lowest, double highest) {
    const double value = std::exp(uniform(std::log(lowest), std::log(highest)));
    return std::fmin(highest, std::fmax(lowest, value));
}

double ByteReader::signed_log_uniform(double smallest, double largest) {
    const int form = integer(0, 15);
    if (form == 0) return 0.0;
    const double magnitude = log_uniform(smallest, largest);
    return form % 2 == 0 ? magnitude : -magnitude;
}

const Station& three_string_station() {
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

}  // namespace firnray::fuzz
