#include "support/run_cli.hpp"

#include <cstdio>
#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <mutex>
#include <random>
#include <sstream>
#include <sys/wait.h>

namespace firnray::test {

namespace fs = std::filesystem;

static std::string quote(const std::string& arg) {
    std::string out = "'";
    for (char c : arg) {
        if (c == '\'') out += "'\\''";
        else out += c;
    }
    return out + "'";
}

std::string read_file(const std::string& path) {
    std::ifstream in(path);
    std::stringstream ss;
    ss << in.rdbuf();
    return ss.str();
}

std::string write_file(const std::string& path, const std::string& text) {
    std::ofstream(path) << text;
    return path;
}

namespace {

// Every folder made by temp_folder, removed (with what the test left in it) when the program ends.
class TempFolders {
public:
    ~TempFolders() {
        for (const auto& dir : folders_) {
            std::error_code ignored;
            fs::permissions(dir, fs::perms::owner_all, fs::perm_options::add, ignored);  // a read-only test folder
            fs::remove_all(dir, ignored);
        }
    }
    void add(const fs::path& dir) {
        std::lock_guard<std::mutex> lock(mutex_);
        folders_.push_back(dir);
    }

private:
    std::mutex mutex_;
    std::vector<fs::path> folders_;
};

TempFolders& temp_folders() {
    static TempFolders folders;
    return folders;
}

}  // namespace

std::string temp_folder(const std::string& tag) {
    static std::mt19937_64 rng{std::random_device{}()};
    fs::path dir = fs::temp_directory_path() / ("firnray-test-" + tag + "-" + std::to_string(rng()));
    fs::create_directories(dir);
    temp_folders().add(dir);
    return dir.string();
}

std::string source_path(const std::string& relative) {
    return (fs::path(FIRNRAY_SOURCE_DIR) / relative).string();
}

CliResult run_firnray(const std::vector<std::string>& args) { return run_firnray_with_stdout(args, ""); }

CliResult run_firnray_with_stdout(const std::vector<std::string>& args, const std::string& stdout_path) {
    const std::string dir = temp_folder("cli");
    const std::string out_path = stdout_path.empty() ? dir + "/stdout" : stdout_path, err_path = dir + "/stderr";
    std::string command = quote(FIRNRAY_EXE);
    for (const auto& a : args) command += " " + quote(a);
    command += " </dev/null >" + quote(out_path) + " 2>" + quote(err_path);
    const int status = std::system(command.c_str());
    CliResult result;
    result.exit_code = WIFEXITED(status) ? WEXITSTATUS(status) : -1;
    if (stdout_path.empty()) result.out = read_file(out_path);
    result.err = read_file(err_path);
    std::error_code ignored;
    fs::remove_all(dir, ignored);
    return result;
}

}  // namespace firnray::test
