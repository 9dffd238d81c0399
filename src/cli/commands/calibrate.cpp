// firnray calibrate: fit the index profile of a model to measured pulser arrival times at a
// station, optionally together with a density or index log (docs/calibrate.md).
#include <memory>
#include <optional>
#include <set>
#include <string>
#include <vector>

#include <fmt/format.h>

#include "calibrate/calibration.hpp"
#include "calibrate/pulser_times.hpp"
#include "cli/commands.hpp"
#include "cli/common.hpp"
#include "cli/exit_codes.hpp"
#include "cli/output_set.hpp"
#include "core/errors.hpp"
#include "core/text.hpp"
#include "io/csv_reader.hpp"  // parse_number of a whole field
#include "model/density.hpp"
#include "model/fit_data.hpp"
#include "output/calibrate_output.hpp"

namespace firnray::cli {

namespace {

struct CalibrateArguments {
    std::string station_path, times_path, fit_kind, model_path;
    std::vector<std::string> fixes;
    double timing_sigma_ns = 0.5, pulse_width_ns = 10.0;
    int max_bounces = 1;
    // the log
    std::string log_path, depth_column, z_column, n_column, density_column;
    std::string density_unit = "kg/m3", density_rule;
    double log_sigma_n = 0.01;
    std::string format = "text", output = "-", write_model_path, model_name, plot_path;
    RunOptions run;
};

// --fix NAME=VALUE or --fix NAME.
FixedParameter parse_fix(const std::string& text) {
    const auto equals = text.find('=');
    FixedParameter fixed;
    fixed.name = text.substr(0, equals);
    if (fixed.name.empty())
        throw UsageError("--fix", fmt::format("'{}' names no parameter: give NAME=VALUE or NAME (e.g. n_deep=1.78)",
                                              printable_excerpt(text)));
    if (fixed.name.find_first_of(" \t") != std::string::npos)
        throw UsageError("--fix", fmt::format("'{}' is not a parameter name: give NAME=VALUE or NAME (e.g. n_deep=1.78)",
                                              printable_excerpt(fixed.name)));
    if (equals != std::string::npos) {
        const std::string value = text.substr(equals + 1);
        fixed.value = firnray::parse_number(value);
        if (!fixed.value)
            throw UsageError("--fix", fmt::format("in '{}', '{}' is not a finite number: give NAME=VALUE or NAME",
                                                  printable_excerpt(text), printable_excerpt(value)));
    }
    return fixed;
}

std::vector<FixedParameter> parse_fixes(const std::vector<std::string>& texts) {
    std::vector<FixedParameter> fixed;
    std::set<std::string> seen;
    for (const std::string& text : texts) {
        fixed.push_back(parse_fix(text));
        if (!seen.insert(fixed.back().name).second)
            throw UsageError("--fix", fmt::format("{} is fixed twice", printable_excerpt(fixed.back().name)));
    }
    return fixed;
}

FitColumns log_columns(const CalibrateArguments& a) {
    FitColumns columns;
    if (!a.z_column.empty()) {
        columns.depth = a.z_column;
        columns.depth_is_z = true;
    } else if (!a.depth_column.empty()) {
        columns.depth = a.depth_column;
    }
    if (!a.density_column.empty()) {
        columns.value = a.density_column;
        columns.density_rule = density_rule_from_name(a.density_rule);  // both checked by CLI11
        columns.density_unit = *density_unit_from_name(a.density_unit);
    } else if (!a.n_column.empty()) {
        columns.value = a.n_column;
    }
    return columns;
}

int run_calibrate(const CalibrateArguments& a) {
    OutputSet outputs;
    outputs.declare("--write-model", a.write_model_path, OutputFormat::toml);
    outputs.declare("--plot", a.plot_path, OutputFormat::svg);
    outputs.declare("--output", a.output, output_format_named(a.format));
    const CalibrationKind kind = parse_calibration_kind(a.fit_kind);
    CalibrationOptions options;
    options.fixed = parse_fixes(a.fixes);
    options.pulse_width_ns = a.pulse_width_ns;
    options.paths.max_bounces = a.max_bounces;
    options.threads = a.run.thread_count();
    const Station station = load_station_file(a.station_path);
    const PulserTimes times = read_pulser_times(a.times_path, station, a.timing_sigma_ns);
    if (!a.log_path.empty()) options.density_log = DensityLogTerm{read_fit_data(a.log_path, log_columns(a)), a.log_sigma_n};
    const auto model = load_model_or_default(a.model_path);
    options.control = make_run_control(a.run, "calibrate");
    options.control.progress = nullptr;  // the iterations are short; Ctrl-C still stops them
    const CalibrationResult result = [&] {
        try {
            return calibrate_profile(*model, station, times, kind, options);
        } catch (const DataInputError& e) {
            // A --fix naming no parameter of the profile is a bad option value (exit 2), like a
            // malformed one; the library finds it before any path is computed.
            if (e.where().key == "--fix") throw UsageError("--fix", e.reason());
            throw;
        }
    }();

    outputs.set_writer(a.output, [&](std::ostream& out) {
        if (a.format == "json") write_calibration_json(out, result, station);
        else write_calibration_text(out, result, station);
    });
    outputs.set_writer(a.write_model_path, [&](std::ostream& out) {
        write_calibrated_model_toml(out, result, a.model_name, a.write_model_path);
    });
    outputs.set_writer(a.plot_path, [&](std::ostream& out) { write_calibration_svg(out, result); });
    outputs.write_all();
    return exit_ok;
}

}  // namespace

void add_calibrate_command(CLI::App& app, CommandSlot& slot) {
    auto a = std::make_shared<CalibrateArguments>();
    CLI::App* cmd = app.add_subcommand(
        "calibrate", "Fit the index profile to measured pulser arrival times at a station (with 1-sigma covariance)");
    cmd->add_option("--station", a->station_path, "station file (TOML, docs/station-files.md)")
        ->required()
        ->type_name("FILE");
    cmd->add_option("--times", a->times_path,
                    "CSV of measured pulses: columns pulser, pulser_x_m, pulser_y_m, pulser_z_m, channel (a receiver "
                    "name), time_ns, optional sigma_ns")
        ->required()
        ->type_name("FILE.csv");
    cmd->add_option("--fit", a->fit_kind, "profile kind to fit: exponential (n_surface, n_deep, scale_depth_m) or "
                                          "layered (the layer parameters of the start model)")
        ->required()
        ->check(one_of({"exponential", "layered"}));
    add_model_option(cmd, a->model_path);
    cmd->get_option("--model")->description("start model (default: the built-in exponential model)");
    cmd->add_option("--fix", a->fixes,
                    "hold a parameter: NAME=VALUE, or NAME at its start value (repeatable), e.g. --fix n_deep=1.78")
        ->type_name("NAME[=VALUE]")
        ->check(parser_check([](const std::string& text) { (void)parse_fix(text); }, ""));
    cmd->add_option("--timing-sigma-ns", a->timing_sigma_ns, "1σ timing uncertainty of a pulse without sigma_ns (ns)")
        ->capture_default_str()
        ->check(finite_positive());
    cmd->add_option("--pulse-width-ns", a->pulse_width_ns,
                    "paths closer in time than this make one recorded pulse: it is matched to the earlier, flagged "
                    "unresolved (ns)")
        ->capture_default_str()
        ->check(finite_in_range(0.0, 1e4));
    cmd->add_option("--max-bounces", a->max_bounces, "most surface/bottom bounces per path (default 1)")
        ->check(CLI::Range(0, 32));

    auto* log = cmd->add_option("--density-log", a->log_path,
                                "also fit this CSV log of n or density (columns as profile --fit), with its own chi2 "
                                "term")
                    ->type_name("FILE.csv");
    auto* depth_column = cmd->add_option("--depth-column", a->depth_column, "log column with depth in m (default depth_m)");
    auto* z_column = cmd->add_option("--z-column", a->z_column, "log column with z in m, up positive (instead of depth)");
    auto* n_column = cmd->add_option("--n-column", a->n_column, "log column with the index n (default n)");
    auto* density_column = cmd->add_option("--density-column", a->density_column, "log column with density (instead of n)");
    auto* density_unit = cmd->add_option("--density-unit", a->density_unit, "unit of the density column")
                             ->capture_default_str()
                             ->check(one_of({"kg/m3", "g/cm3"}));
    auto* density_rule =
        cmd->add_option("--density-rule", a->density_rule,
                        "density to index: kovacs (Kovacs, Gow & Morey 1995) or looyenga (Looyenga 1965)")
            ->check(one_of({"kovacs", "looyenga"}));
    auto* log_sigma = cmd->add_option("--log-sigma-n", a->log_sigma_n, "1σ of each index value of the log")
                          ->capture_default_str()
                          ->check(finite_positive());
    depth_column->excludes(z_column);
    n_column->excludes(density_column);
    density_rule->needs(density_column);
    density_column->needs(density_rule);
    for (CLI::Option* log_only : {depth_column, z_column, n_column, density_column, density_unit, density_rule, log_sigma})
        log_only->needs(log);

    cmd->add_option("--format", a->format, "text or json")->capture_default_str()->check(one_of({"text", "json"}));
    cmd->add_option("--output,-o", a->output, "output file, written whole or not at all (default: stdout)")
        ->type_name("FILE");
    auto* write_model = cmd->add_option("--write-model", a->write_model_path,
                                        "write the calibrated model, with the covariance in [uncertainty]")
                            ->type_name("FILE.toml");
    cmd->add_option("--name", a->model_name, "name of the written model (default: the start model's, calibrated on TIMES)")
        ->needs(write_model);
    cmd->add_option("--plot", a->plot_path,
                    "SVG: residuals against depth and distance, fitted profile with its 1σ band over the start profile")
        ->type_name("FILE.svg");
    add_run_options(cmd, a->run);
    cmd->footer(R"(
Each pulser's emission time is unknown: it is fitted as one offset per pulser name, so a pulser
constrains the profile through the differences between its pulses (a pulser lowered down a hole
gives each depth its own name). Every pulse is matched to the predicted path that fits it best
(first or second arrival; direct, refracted, reflected ...), again at every iteration; two paths
closer than --pulse-width-ns make one pulse, matched to the earlier and flagged "unresolved".
The fit is weighted least squares (Levenberg-Marquardt); the covariance is (J^T W J)^-1 of the
free parameters with the offsets marginalised, not rescaled by chi2/ndof; ndof = pulses (+ log
points) - free parameters - pulsers. A fixed parameter stays in "parameters" with "fixed": true
and sigma 0, and is left out of "parameter_names" and "covariance". docs/calibrate.md.

Examples:
  firnray calibrate --station demo/station.toml --times demo/pulser-times.csv --fit exponential \
      --format json -o calibration.json --write-model calibrated.toml --plot calibration.svg
      fits n_surface, n_deep and scale_depth_m of the built-in model to the demo's pulser times.
  firnray calibrate --station demo/station.toml --times demo/pulser-times.csv --fit exponential \
      --fix n_deep=1.78 --density-log models/synthetic-density.csv --density-column density_kg_m3 \
      --density-rule kovacs --log-sigma-n 0.01
      holds n_deep (deep ice is known better than the firn) and adds a density log to the fit.

Exit codes: 0 ok, 2 usage (a malformed --fix, or one naming no parameter of the profile), 3 bad
model or station file (or a start model of another kind than --fit), 4 bad times or log file
(unknown channel, a pulser with one pulse), 5 the fit did not converge or cannot determine a
parameter, 6 output not written, 130 interrupted.)");
    cmd->callback([a, &slot] { slot.run = [a] { return run_calibrate(*a); }; });
}

}  // namespace firnray::cli
