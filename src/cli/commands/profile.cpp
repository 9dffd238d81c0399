// firnray profile: tabulate (and plot) the index profile of a model, or fit the exponential model
// to measured index or density data and write it as a model file.
#include <algorithm>
#include <cmath>
#include <memory>
#include <optional>
#include <string>

#include <fmt/format.h>

#include "cli/commands.hpp"
#include "cli/common.hpp"
#include "cli/output_set.hpp"
#include "core/text.hpp"
#include "model/density.hpp"
#include "model/fit_data.hpp"
#include "model/uncertainty_section.hpp"
#include "output/profile_output.hpp"
#include "model/profile_samples.hpp"

namespace firnray::cli {

namespace {

struct ProfileOptions {
    std::string model_path;
    std::string depths;  // START:STOP:STEP; overrides the three below (kept for the old spellings)
    double from_depth_m = 0.0, to_depth_m = 200.0, step_m = 1.0;
    double memory_limit_mb = default_memory_limit_mb;
    std::string format;  // csv | json (table); text | json (fit)
    std::string output = "-";
    std::string plot_path;
    // fit mode
    std::string fit_path;
    std::string depth_column, z_column, n_column, density_column;
    std::string density_unit = "kg/m3", density_rule;
    std::optional<double> fixed_n_deep;
    std::string write_model_path, model_name;
};

// Rough sizes of one table row, for the memory check: the sample, its CSV or JSON text and its
// share of the plot.
constexpr double sample_bytes = sizeof(ProfileSample);
constexpr double csv_row_bytes = 60.0, json_row_bytes = 130.0, svg_row_bytes = 40.0;

// The CSV and JSON tables go out through the output layer's buffer of this size
// (output/text_sink.hpp, io/json_writer.hpp), so that a long table never exists as text.
constexpr double text_buffer_bytes = 1 << 16;

int tabulate(const ProfileOptions& o) {
    OutputSet outputs;
    outputs.declare("--plot", o.plot_path, OutputFormat::svg);
    outputs.declare("--output", o.output, output_format_named(o.format));
    const double rows = std::floor((o.to_depth_m - o.from_depth_m) / o.step_m) + 1.0;
    const bool json = o.format == "json";
    const double text_bytes = rows * (json ? json_row_bytes : csv_row_bytes);
    check_memory_estimate(fmt::format("a table of {} rows", number_for_message(rows)),
                          rows * sample_bytes + text_buffer_bytes + (o.plot_path.empty() ? 0.0 : rows * svg_row_bytes),
                          text_bytes, o.memory_limit_mb);
    const auto model = load_model_or_default(o.model_path);
    const auto samples = sample_profile(*model->index, o.from_depth_m, o.to_depth_m, o.step_m);
    const ProfileContents contents = profile_contents(*model);
    outputs.set_writer(o.output, [&](std::ostream& out) {
        if (json) write_profile_samples_json(out, *model, samples, contents);
        else write_profile_samples_csv(out, samples, contents);
    });
    outputs.set_writer(o.plot_path, [&](std::ostream& out) { write_profile_svg(out, *model, samples, contents); });
    outputs.write_all();
    return 0;
}

FitColumns fit_columns(const ProfileOptions& o) {
    FitColumns columns;
    if (!o.z_column.empty()) {
        columns.depth = o.z_column;
        columns.depth_is_z = true;
    } else if (!o.depth_column.empty()) {
        columns.depth = o.depth_column;
    }
    if (!o.density_column.empty()) {
        columns.value = o.density_column;
        columns.density_rule = density_rule_from_name(o.density_rule);  // both checked by CLI11
        columns.density_unit = *density_unit_from_name(o.density_unit);
    } else if (!o.n_column.empty()) {
        columns.value = o.n_column;
    }
    return columns;
}

// The fit's covariance as a model file's [uncertainty]: the fitted parameters in the order of
// profile_parameter_names (n_deep left out when held fixed). ExponentialFit orders its matrix
// (n_deep, n_surface, scale_depth_m).
ModelUncertainty fit_uncertainty(const ExponentialFit& fit) {
    const std::pair<const char*, int> order[] = {{"n_surface", 1}, {"n_deep", 0}, {"scale_depth_m", 2}};
    std::vector<int> rows;
    ParameterCovariance covariance;
    for (const auto& [name, row] : order) {
        if (fit.n_deep_fixed && row == 0) continue;
        covariance.names.push_back(name);
        rows.push_back(row);
    }
    for (int a : rows) {
        covariance.matrix.emplace_back();
        for (int b : rows) covariance.matrix.back().push_back(0.5 * (fit.covariance(a, b) + fit.covariance(b, a)));
    }
    ModelUncertainty uncertainty;
    uncertainty.parameters = std::move(covariance);
    return uncertainty;
}

int fit_data(const ProfileOptions& o) {
    OutputSet outputs;
    outputs.declare("--write-model", o.write_model_path, OutputFormat::toml);
    outputs.declare("--plot", o.plot_path, OutputFormat::svg);
    outputs.declare("--output", o.output, output_format_named(o.format));
    const FitData data = read_fit_data(o.fit_path, fit_columns(o));
    ExponentialFitOptions options;
    options.fixed_n_deep = o.fixed_n_deep;
    const ExponentialFit fit = fit_exponential(data, options);

    outputs.set_writer(o.output, [&](std::ostream& out) {
        if (o.format == "json") write_fit_report_json(out, data, fit);
        else write_fit_report_text(out, data, fit);
    });
    outputs.set_writer(o.write_model_path, [&](std::ostream& out) {
        write_fitted_model_toml(out, data, fit, o.model_name, o.write_model_path);
        // [uncertainty] is the last table of a model file (model_to_toml puts it there too).
        TomlWriter section;
        write_uncertainty_section(fit_uncertainty(fit), section);
        out << section.text();
    });
    outputs.set_writer(o.plot_path, [&](std::ostream& out) { write_fit_svg(out, data, fit); });
    outputs.write_all();
    return 0;
}

void require_finite(double value, const char* option) {
    if (!std::isfinite(value)) throw CLI::ValidationError(option, "must be a finite number");
}

// --depths START:STOP:STEP into the three numbers the table is made from.
void split_depth_range(ProfileOptions& o) {
    const auto colon = o.depths.find(':'), second = o.depths.find(':', colon == std::string::npos ? 0 : colon + 1);
    if (colon == std::string::npos || second == std::string::npos || o.depths.find(':', second + 1) != std::string::npos)
        throw UsageError("--depths", fmt::format("'{}' is not a range: give START:STOP:STEP", printable_excerpt(o.depths)));
    o.from_depth_m = parse_number(o.depths.substr(0, colon), "--depths");
    o.to_depth_m = parse_number(o.depths.substr(colon + 1, second - colon - 1), "--depths");
    o.step_m = parse_number(o.depths.substr(second + 1), "--depths");
}

}  // namespace

void add_profile_command(CLI::App& app, CommandSlot& slot) {
    auto o = std::make_shared<ProfileOptions>();
    CLI::App* cmd = app.add_subcommand(
        "profile",
        "Tabulate the refractive index n and dn/dz of a model against depth, or fit the exponential model to "
        "measured index or density data.");
    cmd->footer(
        "Conventions: depth is positive down, z = -depth is up positive (surface z = 0); dn_dz_per_m is dn/dz with\n"
        "z up, so it is negative where n grows with depth. Without --model the built-in generic polar firn is used.\n"
        "\n"
        "Examples:\n"
        "  firnray profile --model models/demo-site.toml --depths 0:150:0.5 --output halvard.csv \\\n"
        "      --plot halvard.svg\n"
        "      writes depth_m,z_m,n,dn_dz_per_m rows from 0 to 150 m and an SVG of n against depth.\n"
        "  firnray profile --model models/halvard-log.toml --depths 0:200:0.25 --plot log.svg\n"
        "      a measured-style log: # lines before the CSV header (and \"inversions\", \"ducts\" in the JSON)\n"
        "      list the depths where n falls with depth and the ray parameters each duct traps; the plot\n"
        "      shades them. Unusual values in the log are reported as warnings on stderr.\n"
        "  firnray profile --fit models/synthetic-density.csv --density-column density_kg_m3 \\\n"
        "      --density-rule kovacs --write-model fitted.toml --plot fit.svg\n"
        "      fits n_deep, n_surface and scale_depth_m (with 1-sigma uncertainties) to densities converted by\n"
        "      Kovacs et al. (1995), writes a model file that firnray loads back, and plots data and fit.\n"
        "\n"
        "Exit codes: 0 ok, 2 usage, 3 bad model file, 4 bad data file, 5 fit did not converge, 6 output not written.\n");

    add_model_option(cmd, o->model_path);
    CLI::Option* model = cmd->get_option("--model");
    auto* depths = cmd->add_option("--depths", o->depths,
                                   "depths of the table START:STOP:STEP (m, positive down; STOP included); default 0:200:1")
                       ->type_name("START:STOP:STEP");
    const auto old_number = [o](const std::string& option, double ProfileOptions::*field) {
        return [o, option, field](const std::string& value) { o.get()->*field = parse_number(value, option); };
    };
    add_deprecated_option(cmd, "--from-depth", depths, old_number("--from-depth", &ProfileOptions::from_depth_m),
                          "START:STOP:STEP");
    add_deprecated_option(cmd, "--to-depth", depths, old_number("--to-depth", &ProfileOptions::to_depth_m),
                          "START:STOP:STEP");
    add_deprecated_option(cmd, "--step", depths, old_number("--step", &ProfileOptions::step_m), "START:STOP:STEP");
    CLI::Option* from = cmd->get_option("--from-depth");
    CLI::Option* to = cmd->get_option("--to-depth");
    CLI::Option* step = cmd->get_option("--step");
    cmd->add_option("--format", o->format, "output format: csv or json for a table (default csv); text or json for a "
                                           "fit (default text)")
        ->check(one_of({"csv", "json", "text"}));
    cmd->add_option("--output,-o", o->output, "output file, written whole or not at all ('-' = standard output)")
        ->capture_default_str();
    cmd->add_option("--plot", o->plot_path, "also write an SVG of n against depth (for a fit: data and fitted curve)")
        ->type_name("FILE.svg");
    add_memory_limit_option(cmd, o->memory_limit_mb);

    auto* fit = cmd->add_option("--fit", o->fit_path, "fit the exponential model to this CSV of measurements");
    auto* depth_column = cmd->add_option("--depth-column", o->depth_column, "CSV column with depth in m (default depth_m)");
    auto* z_column = cmd->add_option("--z-column", o->z_column, "CSV column with z in m, up positive (instead of depth)");
    auto* n_column = cmd->add_option("--n-column", o->n_column, "CSV column with the index n (default n)");
    auto* density_column =
        cmd->add_option("--density-column", o->density_column, "CSV column with density (instead of n)");
    auto* density_unit = cmd->add_option("--density-unit", o->density_unit, "unit of the density column")
                             ->capture_default_str()->check(one_of({"kg/m3", "g/cm3"}));
    auto* density_rule =
        cmd->add_option("--density-rule", o->density_rule,
                        "density to index: kovacs (Kovacs, Gow & Morey 1995) or looyenga (Looyenga 1965)")
            ->check(one_of({"kovacs", "looyenga"}));
    auto* fix = cmd->add_option("--fix-n-deep", o->fixed_n_deep, "hold n_deep at this value and fit the other two");
    auto* write_model = cmd->add_option("--write-model", o->write_model_path, "write the fitted model as a model file");
    auto* name = cmd->add_option("--name", o->model_name, "name of the written model (default: from the data file)");

    depth_column->excludes(z_column);
    n_column->excludes(density_column);
    density_rule->needs(density_column);
    density_column->needs(density_rule);
    fit->excludes(model)->excludes(depths)->excludes(from)->excludes(to)->excludes(step);
    for (CLI::Option* fit_only : {depth_column, z_column, n_column, density_column, density_unit, density_rule, fix,
                                  write_model, name})
        fit_only->needs(fit);

    cmd->callback([o, &slot] {
        const bool fitting = !o->fit_path.empty();
        if (o->format.empty()) o->format = fitting ? "text" : "csv";
        if (fitting && o->format == "csv")
            throw CLI::ValidationError("--format", "a fit is reported as text or json, not csv");
        if (!fitting && o->format == "text")
            throw CLI::ValidationError("--format", "a profile table is written as csv or json, not text");
        const bool range = !o->depths.empty();
        if (range) split_depth_range(*o);
        const char* start = range ? "--depths" : "--from-depth";
        const char* stop = range ? "--depths" : "--to-depth";
        const char* step = range ? "--depths" : "--step";
        require_finite(o->from_depth_m, start);
        require_finite(o->to_depth_m, stop);
        require_finite(o->step_m, step);
        if (o->from_depth_m < 0.0) throw CLI::ValidationError(start, "depths are >= 0 (positive down)");
        if (o->step_m <= 0.0) throw CLI::ValidationError(step, "the step must be a positive depth step in m");
        if (o->to_depth_m < o->from_depth_m)
            throw CLI::ValidationError(stop, fmt::format("the last depth {} m is above the first {} m",
                                                         number_for_message(o->to_depth_m),
                                                         number_for_message(o->from_depth_m)));
        if (o->fixed_n_deep && (!std::isfinite(*o->fixed_n_deep) || *o->fixed_n_deep < 1.0))
            throw CLI::ValidationError("--fix-n-deep", "must be a finite index >= 1");
        slot.run = [o] { return !o->fit_path.empty() ? fit_data(*o) : tabulate(*o); };
    });
}

}  // namespace firnray::cli
