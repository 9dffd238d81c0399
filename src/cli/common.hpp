// Options and helpers shared by the command files: the model, the solver, threads, progress,
// points given on the command line, the memory limit, and old option spellings kept for a release.
#pragma once

#include <functional>
#include <memory>
#include <optional>
#include <stdexcept>
#include <string>
#include <vector>

#include <CLI/CLI.hpp>

#include "core/cancel.hpp"
#include "uncertainty/propagation.hpp"
#include "model/firn_model.hpp"
#include "paths/find_paths.hpp"  // Point (moving to core/point.hpp)
#include "station/station.hpp"
#include "station/visibility_map.hpp"

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
// The model, with each of its warnings (model/firn_model.hpp) printed on stderr as
// "warning: FILE:LINE:COLUMN: ...", also under --quiet (which only silences progress).
std::shared_ptr<const FirnModel> load_model_or_default(const std::string& path);

// --solver auto|closed|numeric|stratified (the value is parsed by parse_solver_choice).
void add_solver_option(CLI::App* command, std::string& choice);
// --ray-parameters N: samples per arrival table in maps and scans (accuracy).
void add_ray_parameters_option(CLI::App* command, int& count);
// --max-bounces (connect's meaning) and --no-bottom for the map commands (shadow, depths).
void add_map_path_options(CLI::App* command, int& max_bounces, bool& no_bottom);

// --threads N (default: all cores) and --quiet.
struct RunOptions {
    int threads = 0;  // 0: all cores
    bool quiet = false;
    int thread_count() const;
};
void add_run_options(CLI::App* command, RunOptions& options);

// --uncertainty, --uncertainty-samples N and --seed S (docs/uncertainty.md): how the model's
// [uncertainty] is carried into a command's results. Neither option: no propagation.
struct UncertaintyArguments {
    bool linearised = false;
    int samples = 0;                                       // Monte Carlo draws; 0: none
    std::uint64_t seed = PropagationOptions{}.seed;
    bool requested() const { return linearised || samples > 0; }
};
void add_uncertainty_options(CLI::App* command, UncertaintyArguments& arguments);
// The propagation the options ask for (threads from --threads), or nothing when none is asked.
std::optional<PropagationOptions> propagation_options(const UncertaintyArguments& arguments, const RunOptions& run);

// Progress on stderr when stderr is a terminal and --quiet is not given; quiet otherwise.
// The returned control also carries the Ctrl-C flag.
RunControl make_run_control(const RunOptions& options, const std::string& label);
void finish_progress(const RunOptions& options);

// A point "X,Z" or "X,Y,Z" in metres, z up (y = 0 when not given), or only "X,Z" for commands
// that work in the vertical plane; throws UsageError naming the option.
enum class PointForm { xz, xz_or_xyz };
Point parse_point(const std::string& text, const std::string& option, PointForm form = PointForm::xz_or_xyz);

// A finite number; throws UsageError naming the option.
double parse_number(const std::string& text, const std::string& option);
// Throws UsageError unless value is finite and within [low, high] (the message gives the bounds).
void require_in_range(double value, double low, double high, const std::string& option, const std::string& what);
// "MIN:MAX" with MIN < MAX.
std::pair<double, double> parse_span(const std::string& text, const std::string& option);
// The source region of a map from --source-distance MIN:MAX, --source-depth MIN:MAX and the cell
// counts; `distance_origin` says what distances are measured from ("the receiver", "the string").
MapGrid parse_source_region(const std::string& distance_range, const std::string& depth_range, int distance_cells,
                            int depth_cells, const std::string& distance_origin);

// A list "a,b,c"; a range "start:stop:step" (inclusive of stop within rounding); or either.
std::vector<double> parse_list(const std::string& text, const std::string& option);
std::vector<double> parse_range(const std::string& text, const std::string& option);
std::vector<double> parse_list_or_range(const std::string& text, const std::string& option);

// The receivers of a command: one point (--receiver) or a station file, optionally a subset of
// its receivers by name. Exactly one of point_text and station_path must be given.
std::vector<Receiver> select_receivers(const std::string& station_path, const std::string& point_text,
                                       const std::string& subset, const std::string& point_option);
// A receiver of the station by name; an unknown name is a usage error of `option` (with a "did you mean").
const Receiver& receiver_named(const Station& station, const std::string& name, const std::string& option);

// A CLI11 check that a number option is finite and within [low, high] (NaN and inf refused).
CLI::Validator finite_in_range(double low, double high);
// A CLI11 check that a word option is one of `names`, with a "did you mean" for a near miss.
CLI::Validator one_of(std::vector<std::string> names);
// A CLI11 check that a number option is finite and above zero.
CLI::Validator finite_positive();

// --memory-limit-mb MB: the one limit on what a run may hold in memory (every command that builds
// a grid or a table). Default 2048 MB.
constexpr double default_memory_limit_mb = 2048.0;
void add_memory_limit_option(CLI::App* command, double& limit_mb);
// Refuses a run whose estimated memory exceeds the limit, before anything is computed: the message
// gives the estimated memory, the estimated output size and the option that raises the limit.
void check_memory_estimate(const std::string& what, double memory_bytes, double output_bytes, double limit_mb);

// An old spelling of an option, still accepted for one release: hidden from --help, it warns on
// stderr and hands its value to `apply` (which usually stores it in the new option's variable).
// It may not be given together with the new spelling.
void add_deprecated_option(CLI::App* command, const std::string& old_name, CLI::Option* replacement,
                           std::function<void(const std::string& value)> apply, const std::string& how = "");

}  // namespace firnray::cli
