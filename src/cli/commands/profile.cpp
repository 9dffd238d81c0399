// firnray profile: tabulate (and plot) the index profile of a model, or fit the exponential model
// to measured index or density data and write it as a model file.
#include <algorithm>
#include <cmath>
#include <filesystem>
#include <memory>
#include <optional>
#include <string>
#include <vector>

#include <fmt/format.h>

#include "cli/commands.hpp"
#include "cli/common.hpp"
#include "core/errors.hpp"
#include "io/atomic_file.hpp"
#include "io/csv_reader.hpp"
#include "io/json_writer.hpp"
#include "model/density.hpp"
#include "model/fit.hpp"
#include "model/model_file.hpp"
#include "model/profile_samples.hpp"
#include "plot/figure.hpp"

namespace firnray::cli {

namespace {

struct ProfileOptions {
    std::string model_path;
    double from_depth_m = 0.0, to_depth_m = 200.0, step_m = 1.0;
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

std::string number(double value) { return fmt::format("{:.10g}", value); }


// ---------------------------------------------------------------------------------------------
// Tabulating a model

std::string samples_csv(const std::vector<ProfileSample>& samples) {
    std::string out = "depth_m,z_m,n,dn_dz_per_m\n";
    for (const auto& s : samples)
        out += fmt::format("{},{},{},{}\n", number(s.depth_m), number(s.z_m), number(s.n), number(s.dn_dz_per_m));
    return out;
}

std::string samples_json(const FirnModel& model, const std::vector<ProfileSample>& samples) {
    JsonWriter json;
    json.begin_object();
    json.key("model").begin_object();
    json.field("name", model.name).field("origin", model.origin).field("index", model.index->describe());
    json.field("n_air", model.n_air);
    json.end_object();
    json.field("conventions", "z up, surface z = 0, ice z < 0; depth_m = -z_m; dn_dz_per_m is dn/dz with z up");
    json.key("samples").begin_array();
    for (const auto& s : samples) {
        json.begin_object();
        json.field("depth_m", s.depth_m).field("z_m", s.z_m).field("n", s.n).field("dn_dz_per_m", s.dn_dz_per_m);
        json.end_object();
    }
    json.end_array();
    json.end_object();
    return json.str() + "\n";
}

// n against depth, depth increasing downward.
plot::Figure profile_figure(const std::string& title) {
    plot::Figure figure(760, 680);
    figure.title(title).x_label("refractive index n").y_label("depth (m, increasing downward; z = -depth)");
    figure.invert_y(true);
    return figure;
}

std::vector<double> depths_of(const std::vector<ProfileSample>& samples) {
    std::vector<double> depth;
    for (const auto& s : samples) depth.push_back(s.depth_m);
    return depth;
}
std::vector<double> indexes_of(const std::vector<ProfileSample>& samples) {
    std::vector<double> n;
    for (const auto& s : samples) n.push_back(s.n);
    return n;
}

int tabulate(const ProfileOptions& o) {
    const auto shared_model = load_model_or_default(o.model_path);
    const FirnModel& model = *shared_model;
    const auto samples = sample_profile(*model.index, o.from_depth_m, o.to_depth_m, o.step_m);
    const std::string text = o.format == "json" ? samples_json(model, samples) : samples_csv(samples);
    if (!o.plot_path.empty()) {
        plot::Figure figure = profile_figure(fmt::format("Refractive index: {}", model.name));
        figure.add_line(indexes_of(samples), depths_of(samples), plot::LineStyle{},
                        fmt::format("n, {} profile", model.index->kind()));
        figure.write_svg(o.plot_path);
    }
    write_text_file(o.output, text);
    return 0;
}

// ---------------------------------------------------------------------------------------------
// Fitting data

struct FitData {
    std::vector<double> depth, value;  // value: n, or density in g/cm³
    bool density = false;
    DensityRule rule = DensityRule::kovacs;
};

FitData read_fit_data(const ProfileOptions& o) {
    const CsvTable csv = read_csv(o.fit_path, CsvErrorKind::data);
    FitData data;
    const bool use_z = !o.z_column.empty();
    const std::size_t depth_index = csv.column(use_z ? o.z_column : (o.depth_column.empty() ? "depth_m" : o.depth_column));
    data.density = !o.density_column.empty();
    const std::size_t value_index = csv.column(data.density ? o.density_column : (o.n_column.empty() ? "n" : o.n_column));
    const DensityUnit unit = *density_unit_from_name(o.density_unit);  // checked by CLI11
    if (data.density) data.rule = *density_rule_from_name(o.density_rule);
    for (const CsvRow& row : csv.rows) {
        double depth = csv.number(row, depth_index);
        if (use_z) depth = -depth;
        if (depth < 0.0)
            csv.fail(row, csv.columns[depth_index],
                     use_z ? fmt::format("z = {} m is above the surface (the ice is z <= 0)", -depth)
                           : fmt::format("depth {} m is negative (depths are positive down)", depth));
        double value = csv.number(row, value_index);
        if (data.density) {
            value = to_g_cm3(value, unit);
            if (value < lowest_plausible_density_g_cm3 || value > highest_plausible_density_g_cm3)
                csv.fail(row, csv.columns[value_index],
                         fmt::format("density {} {} is not a snow, firn or ice density; is --density-unit right?",
                                     csv.number(row, value_index), o.density_unit));
        } else if (value < 1.0) {
            csv.fail(row, csv.columns[value_index], fmt::format("n = {} is below 1", value));
        }
        data.depth.push_back(depth);
        data.value.push_back(value);
    }
    if (data.depth.empty()) throw DataInputError("the file has a header but no data rows", {o.fit_path, 0, ""});
    return data;
}

std::string fit_text(const ProfileOptions& o, const FitData& data, const ExponentialFit& fit) {
    std::string out = fmt::format("exponential fit to {} ({} points, {})\n", o.fit_path, fit.points,
                                  data.density ? fmt::format("densities converted with the {} rule",
                                                             density_rule_name(data.rule))
                                               : std::string("index values"));
    out += "model: n(z) = n_deep - (n_deep - n_surface) * exp(z / scale_depth_m), z <= 0 (z up)\n";
    if (fit.n_deep_fixed)
        out += fmt::format("n_deep        = {:.6f} (held fixed)\n", fit.n_deep);
    else
        out += fmt::format("n_deep        = {:.6f} ± {:.6f} (1 sigma)\n", fit.n_deep, fit.n_deep_sigma);
    out += fmt::format("n_surface     = {:.6f} ± {:.6f} (1 sigma)\n", fit.n_surface, fit.n_surface_sigma);
    out += fmt::format("scale_depth_m = {:.4f} ± {:.4f} (1 sigma)\n", fit.scale_depth_m, fit.scale_depth_sigma_m);
    out += fmt::format("residual rms  = {:.3g} in n ({} iterations)\n", fit.residual_rms, fit.iterations);
    return out;
}

std::string fit_json(const ProfileOptions& o, const FitData& data, const ExponentialFit& fit) {
    JsonWriter json;
    json.begin_object();
    json.field("data", o.fit_path).field("points", static_cast<unsigned long>(fit.points));
    json.key("values");
    if (data.density)
        json.value(fmt::format("density converted with the {} rule", density_rule_name(data.rule)));
    else
        json.value("index n");
    json.field("model", "n(z) = n_deep - (n_deep - n_surface) * exp(z / scale_depth_m), z <= 0 (z up)");
    auto parameter = [&](const char* name, double value, double sigma, bool fixed) {
        json.key(name).begin_object();
        json.field("value", value).field("sigma", sigma).field("fixed", fixed);
        json.end_object();
    };
    parameter("n_deep", fit.n_deep, fit.n_deep_sigma, fit.n_deep_fixed);
    parameter("n_surface", fit.n_surface, fit.n_surface_sigma, false);
    parameter("scale_depth_m", fit.scale_depth_m, fit.scale_depth_sigma_m, false);
    json.key("covariance").begin_array();
    for (int r = 0; r < 3; ++r) {
        json.begin_array();
        for (int c = 0; c < 3; ++c) json.value(fit.covariance(r, c));
        json.end_array();
    }
    json.end_array();
    json.field("residual_rms", fit.residual_rms).field("residual_sigma", fit.residual_sigma);
    json.field("iterations", fit.iterations);
    json.end_object();
    return json.str() + "\n";
}

FirnModel fitted_model(const ProfileOptions& o, const ExponentialFit& fit) {
    FirnModel model = default_model();  // air and attenuation: the built-in defaults
    model.name = o.model_name.empty() ? fmt::format("exponential fit to {}", o.fit_path) : o.model_name;
    model.origin = o.write_model_path;
    model.index = std::make_shared<ExponentialProfile>(fit.profile());
    return model;
}

int fit_data(const ProfileOptions& o) {
    const FitData data = read_fit_data(o);
    ExponentialFitOptions options;
    options.fixed_n_deep = o.fixed_n_deep;
    const ExponentialFit fit = data.density ? fit_exponential_to_density(data.depth, data.value, data.rule, options)
                                            : fit_exponential(data.depth, data.value, options);
    const std::string report = o.format == "json" ? fit_json(o, data, fit) : fit_text(o, data, fit);

    if (!o.write_model_path.empty()) {
        const std::string comment = fmt::format(
            "Written by firnray profile --fit from {} ({} points).\n"
            "1-sigma uncertainties: n_deep {}, n_surface {:.6f}, scale_depth_m {:.4f}; residual rms {:.3g}.\n"
            "[air] and [attenuation] are the built-in defaults, not fitted: edit them for your site.",
            o.fit_path, fit.points, fit.n_deep_fixed ? std::string("held fixed") : fmt::format("{:.6f}", fit.n_deep_sigma),
            fit.n_surface_sigma, fit.scale_depth_sigma_m, fit.residual_rms);
        write_text_file(o.write_model_path, model_to_toml(fitted_model(o, fit), comment));
    }
    if (!o.plot_path.empty()) {
        std::vector<double> data_n = data.value;
        if (data.density)
            for (auto& v : data_n) v = index_from_density(v, data.rule);
        const double deepest = *std::max_element(data.depth.begin(), data.depth.end());
        const double extent = std::max(deepest * 1.05, 1.0);
        const ExponentialProfile profile = fit.profile();
        const auto samples = sample_profile(profile, 0.0, extent, extent / 400.0);
        plot::Figure figure = profile_figure(
            fmt::format("Exponential fit to {}", std::filesystem::path(o.fit_path).filename().string()));
        figure.add_markers(data_n, data.depth, plot::MarkerStyle{},
                           data.density ? fmt::format("data (density by the {} rule)", density_rule_name(data.rule))
                                        : std::string("data"));
        figure.add_line(indexes_of(samples), depths_of(samples), plot::LineStyle{},
                        fmt::format("fit: n_deep {:.4f}, n_surface {:.4f}, scale depth {:.1f} m", fit.n_deep,
                                    fit.n_surface, fit.scale_depth_m));
        figure.write_svg(o.plot_path);
    }
    write_text_file(o.output, report);
    return 0;
}

void require_finite(double value, const char* option) {
    if (!std::isfinite(value)) throw CLI::ValidationError(option, "must be a finite number");
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
        "  firnray profile --model models/demo-site.toml --to-depth 150 --step 0.5 --output halvard.csv \\\n"
        "      --plot halvard.svg\n"
        "      writes depth_m,z_m,n,dn_dz_per_m rows from 0 to 150 m and an SVG of n against depth.\n"
        "  firnray profile --fit models/synthetic-density.csv --density-column density_kg_m3 \\\n"
        "      --density-rule kovacs --write-model fitted.toml --plot fit.svg\n"
        "      fits n_deep, n_surface and scale_depth_m (with 1-sigma uncertainties) to densities converted by\n"
        "      Kovacs et al. (1995), writes a model file that firnray loads back, and plots data and fit.\n"
        "\n"
        "Exit codes: 0 ok, 2 usage, 3 bad model file, 4 bad data file, 5 fit did not converge, 6 output not written.\n");

    add_model_option(cmd, o->model_path);
    CLI::Option* model = cmd->get_option("--model");
    auto* from = cmd->add_option("--from-depth", o->from_depth_m, "first depth of the table (m, >= 0)")
                     ->capture_default_str();
    auto* to = cmd->add_option("--to-depth", o->to_depth_m, "last depth of the table (m)")
                   ->capture_default_str();
    auto* step = cmd->add_option("--step", o->step_m, "depth step of the table (m, > 0)")
                     ->capture_default_str();
    cmd->add_option("--format", o->format, "output format: csv or json for a table (default csv); text or json for a "
                                           "fit (default text)")
        ->check(CLI::IsMember({"csv", "json", "text"}));
    cmd->add_option("--output,-o", o->output, "output file ('-' = standard output)")->capture_default_str();
    cmd->add_option("--plot", o->plot_path, "also write an SVG of n against depth (for a fit: data and fitted curve)");

    auto* fit = cmd->add_option("--fit", o->fit_path, "fit the exponential model to this CSV of measurements");
    auto* depth_column = cmd->add_option("--depth-column", o->depth_column, "CSV column with depth in m (default depth_m)");
    auto* z_column = cmd->add_option("--z-column", o->z_column, "CSV column with z in m, up positive (instead of depth)");
    auto* n_column = cmd->add_option("--n-column", o->n_column, "CSV column with the index n (default n)");
    auto* density_column =
        cmd->add_option("--density-column", o->density_column, "CSV column with density (instead of n)");
    auto* density_unit = cmd->add_option("--density-unit", o->density_unit, "unit of the density column")
                             ->capture_default_str()->check(CLI::IsMember({"kg/m3", "g/cm3"}));
    auto* density_rule =
        cmd->add_option("--density-rule", o->density_rule,
                        "density to index: kovacs (Kovacs, Gow & Morey 1995) or looyenga (Looyenga 1965)")
            ->check(CLI::IsMember({"kovacs", "looyenga"}));
    auto* fix = cmd->add_option("--fix-n-deep", o->fixed_n_deep, "hold n_deep at this value and fit the other two");
    auto* write_model = cmd->add_option("--write-model", o->write_model_path, "write the fitted model as a model file");
    auto* name = cmd->add_option("--name", o->model_name, "name of the written model (default: from the data file)");

    depth_column->excludes(z_column);
    n_column->excludes(density_column);
    density_rule->needs(density_column);
    density_column->needs(density_rule);
    fit->excludes(model)->excludes(from)->excludes(to)->excludes(step);
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
        require_finite(o->from_depth_m, "--from-depth");
        require_finite(o->to_depth_m, "--to-depth");
        require_finite(o->step_m, "--step");
        if (o->from_depth_m < 0.0) throw CLI::ValidationError("--from-depth", "depths are >= 0 (positive down)");
        if (o->step_m <= 0.0) throw CLI::ValidationError("--step", "must be a positive depth step in m");
        if (o->to_depth_m < o->from_depth_m)
            throw CLI::ValidationError("--to-depth", fmt::format("{} m is above --from-depth {} m", o->to_depth_m,
                                                                 o->from_depth_m));
        if ((o->to_depth_m - o->from_depth_m) / o->step_m > 1e7)
            throw CLI::ValidationError("--step", "gives more than ten million rows; use a larger step");
        if (o->fixed_n_deep && (!std::isfinite(*o->fixed_n_deep) || *o->fixed_n_deep < 1.0))
            throw CLI::ValidationError("--fix-n-deep", "must be a finite index >= 1");
        slot.run = [o] { return !o->fit_path.empty() ? fit_data(*o) : tabulate(*o); };
    });
}

}  // namespace firnray::cli
