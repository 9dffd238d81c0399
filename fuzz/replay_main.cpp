// Replays saved inputs through a harness of fuzz/, in any build (GCC too): the regression test
// of every crash that fuzzing found. Arguments are files or folders (every file in them, sorted).
// A folder may hold known-failures.txt: lines "INPUT-FILE-NAME reason" for inputs that still
// crash and wait for a fix. They are not replayed; the run then exits 77 (CTest: skipped) after
// naming them, once every other input has passed.
#include <algorithm>
#include <cstdio>
#include <filesystem>
#include <fstream>
#include <iterator>
#include <map>
#include <sstream>
#include <string>
#include <vector>

#include "fuzz_harness.hpp"

namespace fs = std::filesystem;

namespace {

constexpr int skipped_exit_code = 77;

std::map<std::string, std::string> known_failures(const fs::path& folder) {
    std::map<std::string, std::string> known;
    std::ifstream in(folder / "known-failures.txt");
    std::string line;
    while (std::getline(in, line)) {
        std::istringstream words(line);
        std::string name, reason;
        if (!(words >> name) || name.front() == '#') continue;
        std::getline(words >> std::ws, reason);
        known[name] = reason;
    }
    return known;
}

bool is_input(const fs::path& path) {
    const std::string name = path.filename().string();
    return name != "known-failures.txt" && name != "README.md" && name.front() != '.';
}

void replay(const fs::path& path) {
    std::ifstream in(path, std::ios::binary);
    const std::vector<char> bytes((std::istreambuf_iterator<char>(in)), std::istreambuf_iterator<char>());
    std::printf("replaying %s (%zu bytes)\n", path.string().c_str(), bytes.size());
    std::fflush(stdout);
    fuzz_one(reinterpret_cast<const std::uint8_t*>(bytes.data()), bytes.size());
}

}  // namespace

int main(int argc, char** argv) {
    int replayed = 0;
    std::vector<std::string> skipped;
    for (int a = 1; a < argc; ++a) {
        const fs::path argument(argv[a]);
        if (!fs::exists(argument)) {
            std::printf("%s does not exist: nothing kept there yet\n", argument.string().c_str());
            continue;
        }
        if (!fs::is_directory(argument)) {
            replay(argument);
            ++replayed;
            continue;
        }
        const auto known = known_failures(argument);
        std::vector<fs::path> inputs;
        for (const auto& entry : fs::directory_iterator(argument))
            if (entry.is_regular_file() && is_input(entry.path())) inputs.push_back(entry.path());
        std::sort(inputs.begin(), inputs.end());
        for (const auto& input : inputs) {
            const auto reason = known.find(input.filename().string());
            if (reason != known.end()) {
                skipped.push_back(input.string() + ": " + reason->second);
                continue;
            }
            replay(input);
            ++replayed;
        }
    }
    std::printf("%d inputs replayed without a finding\n", replayed);
    if (!skipped.empty()) {
        std::printf("SKIPPED %zu known failing inputs (listed in known-failures.txt, waiting for a fix):\n",
                    skipped.size());
        for (const auto& s : skipped) std::printf("  %s\n", s.c_str());
        return skipped_exit_code;
    }
    return 0;
}
