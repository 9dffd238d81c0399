// Runs the built firnray binary from end-to-end tests and captures what it prints.
#pragma once

#include <string>
#include <vector>

namespace firnray::test {

struct CliResult {
    int exit_code = -1;
    std::string out;  // stdout
    std::string err;  // stderr
};

// args are passed through a shell, each one single-quoted; stdin is /dev/null.
CliResult run_firnray(const std::vector<std::string>& args);

// The same with standard output sent to `stdout_path` (e.g. /dev/full); `out` is then empty.
CliResult run_firnray_with_stdout(const std::vector<std::string>& args, const std::string& stdout_path);

// Whether this test program (and so the firnray binary of the same build) runs under
// AddressSanitizer, whose shadow memory makes peak-memory figures meaningless.
constexpr bool built_with_address_sanitizer() {
#if defined(__SANITIZE_ADDRESS__)
    return true;
#elif defined(__has_feature)
#if __has_feature(address_sanitizer)
    return true;
#else
    return false;
#endif
#else
    return false;
#endif
}

// A fresh empty folder under the system temp dir, removed when the test program ends.
std::string temp_folder(const std::string& tag);

// Writes text to a file and returns its path.
std::string write_file(const std::string& path, const std::string& text);
std::string read_file(const std::string& path);

// The source tree (for models/ and demo/ files).
std::string source_path(const std::string& relative);

}  // namespace firnray::test
