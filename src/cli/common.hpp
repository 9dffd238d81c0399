// Options and helpers shared by the command files: the model, the solver, threads, progress,
// points given on the command line, and writing outputs whole.
#pragma once

#include <functional>
#include <memory>
#include <optional>
#include <stdexcept>
#include <string>
#include <vector>

#include <CLI/CLI.hpp>

#include "core/cancel.hpp"
#include "model/firn_model.hpp"
#include "station/station.hpp"

namespace firnray::cli {

// A bad option value (a malformed point, list or range) found by one of the parsers below. Exit code 2.
class UsageError : public std::runtime_error {
public:
    UsageError(const std::string& option, const std::string& what)
        : std::runtime_error(option + ": " + what), detail_(what) {}
    const std::string& detail() const { return detail_; }  // the message without the option

private:
    std::string detail_;
};

// A CLI11 check made from one of the parsers below: a malformed value is then reported while the
// command line is parsed, like CLI11's own checks (exit 2, naming the option), and `shape` shows
// in --help after the option's type.
CLI::Validator parser_check(std::function<void(const std::string& text)> parse, const std::string& shape);

// --model FILE (default: the built-in generic model).
void add_model_option(CLI::App* command, std::string& path);
std::shared_ptr<const FirnModel> load_model_or_default(const std::string& path);

// --solver auto|closed|numeric (the value is parsed by parse_solver_choice).
void add_solver_option(CLI::App* command, std::string& choice);
// --ray-parameters N: samples per arrival table in maps and scans (accuracy).
void add_ray_parameters_option(CLI::App* command, int& count);

// --threads N (default: all cores) and --quiet.
struct RunOptions {
    int threads = 0;  // 0: all cores
    bool quiet = false;
    int thread_count() const;
};
void add_run_options(CLI::App* command, RunOptions& options);

// Progress on stderr when stderr is a terminal and --quiet is not given; quiet otherwise.
// The returned control also carries the Ctrl-C flag.
RunControl make_run_control(const RunOptions& options, const std::string& label);
void finish_progress(const RunOptions& options);

// A point "X,Z" or "X,Y,Z" in metres (y = 0 when not given), or only "X,Z" for commands that
// work in the vertical plane; throws UsageError naming the option.
struct Point3 {
    double x_m = 0.0, y_m = 0.0, z_m = 0.0;
};
enum class PointForm { xz, xz_or_xyz };
Point3 parse_point(const std::string& text, const std::string& option, PointForm form = PointForm::xz_or_xyz);

// A finite number; throws UsageError naming the option.
double parse_number(const std::string& text, const std::string& option);
// "MIN:MAX" with MIN < MAX.
std::pair<double, double> parse_span(const std::string& text, const std::string& option);

// A list "a,b,c"; a range "start:stop:step" (inclusive of stop within rounding); or either.
std::vector<double> parse_list(const std::string& text, const std::string& option);
std::vector<double> parse_range(const std::string& text, const std::string& option);
std::vector<double> parse_list_or_range(const std::string& text, const std::string& option);

// The receivers of a command: one point (--receiver) or a station file, optionally a subset of
// its receivers by name. Exactly one of point_text and station_path must be given.
std::vector<Receiver> select_receivers(const std::string& station_path, const std::string& point_text,
                                       const std::string& subset, const std::string& point_option);

// Writes text to `path` atomically, or to stdout when path is empty or "-".
void emit(const std::string& path, const std::string& text);

}  // namespace firnray::cli
