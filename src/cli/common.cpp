#include "cli/common.hpp"

#include <cmath>
#include <cstdio>
#include <iostream>
#include <sstream>
#include <thread>

#include <fmt/format.h>

#include "cli/interrupt.hpp"
#include "core/errors.hpp"
#include "core/text.hpp"
#include "model/model_file.hpp"

namespace firnray::cli {

void add_model_option(CLI::App* command, std::string& path) {
    command->add_option("--model", path, "model file (TOML, see docs/model-files.md); default: built-in generic polar firn")
        ->type_name("FILE");
}

std::shared_ptr<const FirnModel> load_model_or_default(const std::string& path) {
    auto model = std::make_shared<const FirnModel>(path.empty() ? default_model() : load_model_file(path));
    // Shown even with --quiet: --quiet silences progress, not what the user should know about
    // the input (docs/model-files.md, "Warnings").
    for (const auto& warning : model->warnings) std::cerr << "warning: " << warning.describe() << '\n';
    return model;
}

void add_solver_option(CLI::App* command, std::string& choice) {
    command->add_option("--solver", choice,
                        "auto (closed form for exponential and constant models, stratified for the others), closed, "
                        "numeric or stratified")
        ->capture_default_str()
        ->check(one_of({"auto", "closed", "numeric", "stratified"}));
}

void add_ray_parameters_option(CLI::App* command, int& count) {
    command->add_option("--ray-parameters", count, "ray parameters tabulated per receiver depth (accuracy)")
        ->capture_default_str()
        ->check(CLI::Range(16, 200000));
}

void add_map_path_options(CLI::App* command, int& max_bounces, bool& no_bottom) {
    command->add_option("--max-bounces", max_bounces,
                        "most turns back per path, as in connect: every turning point, surface reflection and bottom "
                        "reflection counts one (default 4 here; ducted paths need 2 or more; only profiles with ducts "
                        "or a bottom have such paths, and the outputs say when longer ones are left out)")
        ->check(CLI::Range(0, 32));
    command->add_flag("--no-bottom", no_bottom,
                      "leave out paths reflected at the model's bottom (faster; the outputs say so)");
}

int RunOptions::thread_count() const {
    if (threads > 0) return threads;
    const unsigned cores = std::thread::hardware_concurrency();
    return cores == 0 ? 1 : static_cast<int>(cores);
}

void add_run_options(CLI::App* command, RunOptions& options) {
    command->add_option("--threads", options.threads, "worker threads (default: all cores); results do not depend on it")
        ->check(CLI::Range(1, 1024));
    command->add_flag("--quiet,-q", options.quiet, "no progress display on stderr");
}

void add_uncertainty_options(CLI::App* command, UncertaintyArguments& arguments) {
    auto* linear = command->add_flag(
        "--uncertainty", arguments.linearised,
        "carry the model's [uncertainty] into the results, linearised (central differences along each component of "
        "the covariance; docs/uncertainty.md)");
    auto* samples = command->add_option("--uncertainty-samples", arguments.samples,
                                        "carry the model's [uncertainty] into the results by Monte Carlo over N "
                                        "profiles drawn from it")
                        ->type_name("N")
                        ->check(CLI::Range(2, 100000));
    linear->excludes(samples);
    command->add_option("--seed", arguments.seed,
                        fmt::format("seed of the Monte Carlo draws (default {}); the same seed gives the same output "
                                    "for any --threads",
                                    PropagationOptions{}.seed))
        ->needs(samples);
}

std::optional<PropagationOptions> propagation_options(const UncertaintyArguments& arguments, const RunOptions& run) {
    if (!arguments.requested()) return std::nullopt;
    PropagationOptions options;
    options.method = arguments.linearised ? PropagationMethod::linearised : PropagationMethod::monte_carlo;
    options.samples = arguments.samples;
    options.seed = arguments.seed;
    options.threads = run.thread_count();
    return options;
}

RunControl make_run_control(const RunOptions& options, const std::string& label) {
    RunControl control;
    control.cancel = install_interrupt_flag();
    if (!options.quiet && stderr_is_terminal()) {
        auto last_percent = std::make_shared<std::atomic<int>>(-1);
        control.progress = [label, last_percent](std::size_t done, std::size_t total) {
            const int percent = total == 0 ? 100 : static_cast<int>(100.0 * done / total);
            if (last_percent->exchange(percent) == percent) return;
            std::fprintf(stderr, "\r%s: %3d%% (%zu/%zu)", label.c_str(), percent, done, total);
            std::fflush(stderr);
        };
    }
    return control;
}

void finish_progress(const RunOptions& options) {
    if (!options.quiet && stderr_is_terminal()) std::fprintf(stderr, "\r\033[K");
}

CLI::Validator parser_check(std::function<void(const std::string& text)> parse, const std::string& shape) {
    return CLI::Validator(
        [parse](std::string& text) {
            try {
                parse(text);
                return std::string();
            } catch (const UsageError& e) {
                return e.detail();  // CLI11 puts the option's name in front
            }
        },
        shape);
}

static double parse_number(const std::string& text, const std::string& option, const std::string& whole);

double parse_number(const std::string& text, const std::string& option) { return parse_number(text, option, text); }

static double parse_number(const std::string& text, const std::string& option, const std::string& whole) {
    std::size_t used = 0;
    double value = 0.0;
    try {
        value = std::stod(text, &used);
    } catch (const std::exception&) {
        used = 0;
    }
    if (used == 0 || used != text.size() || !std::isfinite(value))
        throw UsageError(option, fmt::format("'{}' is not a finite number (in '{}')", printable_excerpt(text),
                                             printable_excerpt(whole)));
    return value;
}

static std::vector<std::string> split(const std::string& text, char separator) {
    std::vector<std::string> parts;
    std::stringstream in(text);
    std::string part;
    while (std::getline(in, part, separator)) {
        const auto a = part.find_first_not_of(" \t"), b = part.find_last_not_of(" \t");
        parts.push_back(a == std::string::npos ? "" : part.substr(a, b - a + 1));
    }
    if (!text.empty() && text.back() == separator) parts.emplace_back();
    return parts;
}

Point parse_point(const std::string& text, const std::string& option, PointForm form) {
    const auto parts = split(text, ',');
    const bool with_y = form == PointForm::xz_or_xyz;
    if (parts.size() != 2 && !(with_y && parts.size() == 3))
        throw UsageError(option, fmt::format("'{}' is not a point: give {} in metres (z up, ice z < 0)", printable_excerpt(text),
                                             with_y ? "X,Z or X,Y,Z" : "X,Z"));
    Point p;
    p.x = parse_number(parts[0], option, text);
    if (parts.size() == 3) p.y = parse_number(parts[1], option, text);
    p.z = parse_number(parts.back(), option, text);
    return p;
}

std::vector<double> parse_range(const std::string& text, const std::string& option) {
    const auto parts = split(text, ':');
    if (parts.size() != 3)
        throw UsageError(option, fmt::format("'{}' is not a range: give START:STOP:STEP", printable_excerpt(text)));
    const double start = parse_number(parts[0], option, text), stop = parse_number(parts[1], option, text),
                 step = parse_number(parts[2], option, text);
    if (step == 0.0 || (stop - start) / step < 0.0)
        throw UsageError(option, fmt::format("range '{}' never reaches its stop value from its start with that step",
                                             printable_excerpt(text)));
    const double count = std::floor((stop - start) / step + 1e-9);
    if (!(count <= 1e6))
        throw UsageError(option, fmt::format("range '{}' has more than a million values", printable_excerpt(text)));
    std::vector<double> values;
    for (int k = 0; k <= static_cast<int>(count); ++k) values.push_back(start + k * step);
    return values;
}

std::vector<double> parse_list(const std::string& text, const std::string& option) {
    std::vector<double> values;
    for (const auto& part : split(text, ',')) values.push_back(parse_number(part, option, text));
    if (values.empty()) throw UsageError(option, "an empty list");
    return values;
}

std::vector<double> parse_list_or_range(const std::string& text, const std::string& option) {
    return text.find(':') != std::string::npos ? parse_range(text, option) : parse_list(text, option);
}

std::pair<double, double> parse_span(const std::string& text, const std::string& option) {
    const auto parts = split(text, ':');
    if (parts.size() != 2)
        throw UsageError(option, fmt::format("'{}' is not a range: give MIN:MAX", printable_excerpt(text)));
    const double low = parse_number(parts[0], option, text), high = parse_number(parts[1], option, text);
    if (!(low < high)) throw UsageError(option, fmt::format("'{}': MIN must be below MAX", printable_excerpt(text)));
    return {low, high};
}

MapGrid parse_source_region(const std::string& distance_range, const std::string& depth_range, int distance_cells,
                            int depth_cells, const std::string& distance_origin) {
    MapGrid grid;
    std::tie(grid.distance_min_m, grid.distance_max_m) = parse_span(distance_range, "--source-distance");
    std::tie(grid.depth_min_m, grid.depth_max_m) = parse_span(depth_range, "--source-depth");
    if (grid.distance_min_m < 0.0)
        throw UsageError("--source-distance", fmt::format("distances are >= 0 (m from {}), not {}", distance_origin,
                                                          number_for_message(grid.distance_min_m)));
    if (grid.depth_min_m < 0.0)
        throw UsageError("--source-depth", fmt::format("depths are >= 0 (m, positive down), not {}",
                                                       number_for_message(grid.depth_min_m)));
    grid.distance_cells = distance_cells;
    grid.depth_cells = depth_cells;
    return grid;
}

std::vector<Receiver> select_receivers(const std::string& station_path, const std::string& point_text,
                                       const std::string& subset, const std::string& point_option) {
    if (station_path.empty() == point_text.empty())
        throw UsageError(point_option, "give either " + point_option + " POINT or --station FILE");
    if (!point_text.empty()) {
        const Point p = parse_point(point_text, point_option);
        Receiver r;
        r.name = "receiver";
        r.x_m = p.x;
        r.y_m = p.y;
        r.z_m = p.z;
        if (r.z_m > 0.0)
            throw UsageError(point_option, fmt::format("the receiver at z = {} m is above the surface; "
                                                       "it must be in the ice (z <= 0)", number_for_message(r.z_m)));
        return {r};
    }
    const Station station = load_station_file(station_path);
    if (subset.empty()) return station.receivers;
    std::vector<Receiver> chosen;
    for (const auto& name : split(subset, ',')) chosen.push_back(receiver_named(station, name, "--receivers"));
    return chosen;
}

const Receiver& receiver_named(const Station& station, const std::string& name, const std::string& option) {
    std::vector<std::string> names;
    for (const Receiver& r : station.receivers) {
        if (r.name == name) return r;
        names.push_back(r.name);
    }
    throw UsageError(option, fmt::format("the station has no receiver named '{}'{}", printable_excerpt(name),
                                         did_you_mean(name, names)));
}

void require_in_range(double value, double low, double high, const std::string& option, const std::string& what) {
    if (!std::isfinite(value))
        throw UsageError(option, fmt::format("{} must be a finite number, not {}", what, number_for_message(value)));
    if (value < low || value > high)
        throw UsageError(option, fmt::format("{} must be between {} and {}, not {}", what, number_for_message(low),
                                             number_for_message(high), number_for_message(value)));
}

// The number of a CLI11 check: the reason it is not a finite number, or "" with `value` set.
static std::string read_option_number(const std::string& text, double& value) {
    std::size_t used = 0;
    try {
        value = std::stod(text, &used);
    } catch (const std::exception&) {
        used = 0;
    }
    if (used == 0 || used != text.size()) return fmt::format("'{}' is not a number", printable_excerpt(text));
    if (!std::isfinite(value)) return fmt::format("must be a finite number, not {}", printable_excerpt(text));
    return std::string();
}

CLI::Validator finite_in_range(double low, double high) {
    return CLI::Validator(
        [low, high](std::string& text) -> std::string {
            double value = 0.0;
            if (const std::string problem = read_option_number(text, value); !problem.empty()) return problem;
            if (value < low || value > high)
                return fmt::format("{} is outside {} to {}", number_for_message(value), number_for_message(low),
                                   number_for_message(high));
            return std::string();
        },
        fmt::format("{} to {}", number_for_message(low), number_for_message(high)));
}

CLI::Validator one_of(std::vector<std::string> names) {
    std::string shown;
    for (const auto& name : names) shown += (shown.empty() ? "" : "|") + name;
    return CLI::Validator(
        [names, shown](std::string& text) -> std::string {
            for (const auto& name : names)
                if (text == name) return std::string();
            return fmt::format("'{}' is not one of {}{}", printable_excerpt(text), shown, did_you_mean(text, names));
        },
        "{" + shown + "}");
}

CLI::Validator finite_positive() {
    return CLI::Validator(
        [](std::string& text) -> std::string {
            double value = 0.0;
            if (const std::string problem = read_option_number(text, value); !problem.empty()) return problem;
            if (!(value > 0.0)) return fmt::format("must be above 0, not {}", number_for_message(value));
            return std::string();
        },
        "> 0");
}

void add_memory_limit_option(CLI::App* command, double& limit_mb) {
    limit_mb = default_memory_limit_mb;
    command->add_option("--memory-limit-mb", limit_mb,
                        "refuse a run estimated to need more memory than this (MB); the estimate and the output size "
                        "are given when it is refused")
        ->type_name("MB")
        ->capture_default_str()
        ->check(finite_in_range(1.0, 1e9));
}

static std::string bytes_for_message(double bytes) {
    if (bytes >= 1e9) return fmt::format("{:.1f} GB", bytes / 1e9);
    if (bytes >= 1e6) return fmt::format("{:.0f} MB", bytes / 1e6);
    return fmt::format("{:.0f} kB", std::max(1.0, bytes / 1e3));
}

void check_memory_estimate(const std::string& what, double memory_bytes, double output_bytes, double limit_mb) {
    if (memory_bytes <= limit_mb * 1e6) return;
    throw UsageError("--memory-limit-mb",
                     fmt::format("{} would need about {} of memory and write about {}, above the limit of {} MB; "
                                 "make it smaller or raise the limit with --memory-limit-mb",
                                 what, bytes_for_message(memory_bytes), bytes_for_message(output_bytes),
                                 number_for_message(limit_mb)));
}

void add_deprecated_option(CLI::App* command, const std::string& old_name, CLI::Option* replacement,
                           std::function<void(const std::string& value)> apply, const std::string& how) {
    const std::string new_name = replacement->get_name();
    CLI::Option* old = command->add_option_function<std::string>(
        old_name,
        [old_name, new_name, how, apply, replacement](const std::string& value) {
            if (replacement->count() > 0)  // checked here rather than with excludes(), which --help would show
                throw UsageError(old_name, "give " + new_name + " or its old spelling " + old_name + ", not both");
            fmt::print(stderr, "firnray: warning: {} is deprecated and will be removed in the next release; use {}{}\n",
                       old_name, new_name, how.empty() ? "" : " " + how);
            apply(value);
        },
        "deprecated: use " + new_name);
    old->group("");  // hidden from --help
}

}  // namespace firnray::cli
