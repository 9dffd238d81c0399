#include "output/profile_output.hpp"

#include <algorithm>
#include <filesystem>
#include <memory>

#include <fmt/format.h>

#include "io/csv_writer.hpp"
#include "io/json_writer.hpp"
#include "model/model_file.hpp"
#include "output/model_json.hpp"
#include "output/text_sink.hpp"
#include "plot/figure.hpp"

namespace firnray {

namespace {

using output::render_to_string;

// Ten significant digits, refusing NaN and infinity with the column's name.
void put_number(output::TextSink& out, double value, std::string_view column) {
    fmt::format_to(fmt::appender(out.buffer()), "{:.10g}", require_finite(value, column));
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

// At most this many inversions are numbered on the plot; more would be unreadable labels.
constexpr std::size_t most_labelled_inversions = 20;

std::string inversion_line(std::size_t number, const IndexInversion& inversion) {
    return fmt::format("inversion {}: n falls with depth from {:.6g} at {:.6g} m to {:.6g} at {:.6g} m", number,
                       require_finite(inversion.index_top, "inversion n_top"),
                       require_finite(-inversion.z_top, "inversion top_depth_m"),
                       require_finite(inversion.index_bottom, "inversion n_bottom"),
                       require_finite(-inversion.z_bottom, "inversion bottom_depth_m"));
}

std::string duct_line(std::size_t number, const Duct& duct) {
    std::string line = fmt::format(
        "duct {}: rays with ray parameter between {:.6g} and {:.6g} are trapped around {:.6g} m deep, at most "
        "between {:.6g} and {:.6g} m",
        number, require_finite(duct.ray_parameter_low, "duct ray_parameter_low"),
        require_finite(duct.ray_parameter_high, "duct ray_parameter_high"), require_finite(-duct.axis_z, "duct axis_depth_m"),
        require_finite(-duct.z_top, "duct top_depth_m"), require_finite(-duct.z_bottom, "duct bottom_depth_m"));
    if (duct.surface_ray_parameter)
        line += fmt::format(" (below {:.6g} they reflect at the surface instead of turning above)",
                            require_finite(*duct.surface_ray_parameter, "duct surface_ray_parameter"));
    return line;
}

void write_contents_comment(output::TextSink& out, const ProfileContents& contents) {
    if (contents.inversions.empty()) return;
    out.put(fmt::format("# n falls with depth in {} interval{} of this profile, making {} duct{} "
                        "(docs/physics.md §8):",
                        contents.inversions.size(), contents.inversions.size() == 1 ? "" : "s",
                        contents.ducts.size(), contents.ducts.size() == 1 ? "" : "s"));
    out.end_row();
    for (std::size_t i = 0; i < contents.inversions.size(); ++i) {
        out.put("# " + inversion_line(i + 1, contents.inversions[i]));
        out.end_row();
    }
    for (std::size_t i = 0; i < contents.ducts.size(); ++i) {
        out.put("# " + duct_line(i + 1, contents.ducts[i]));
        out.end_row();
    }
}

void write_contents_json(JsonWriter& json, const ProfileContents& contents) {
    if (contents.inversions.empty()) return;
    json.key("inversions").begin_array();
    for (const auto& inversion : contents.inversions) {
        json.begin_object();
        json.field("top_depth_m", -inversion.z_top).field("bottom_depth_m", -inversion.z_bottom);
        json.field("n_top", inversion.index_top).field("n_bottom", inversion.index_bottom);
        json.end_object();
    }
    json.end_array();
    json.key("ducts").begin_array();
    for (const auto& duct : contents.ducts) {
        json.begin_object();
        json.field("axis_depth_m", -duct.axis_z);
        json.field("ray_parameter_low", duct.ray_parameter_low).field("ray_parameter_high", duct.ray_parameter_high);
        json.field("top_depth_m", -duct.z_top).field("bottom_depth_m", -duct.z_bottom);
        if (duct.surface_ray_parameter) json.field("surface_ray_parameter", *duct.surface_ray_parameter);
        json.end_object();
    }
    json.end_array();
}

// Shades the inversions inside the samples' depths and numbers them (when there are few enough).
void add_inversion_bands(plot::Figure& figure, const std::vector<ProfileSample>& samples,
                         const ProfileContents& contents) {
    if (samples.empty() || contents.inversions.empty()) return;
    const double shallowest = samples.front().depth_m, deepest = samples.back().depth_m;
    double lowest_n = samples.front().n;
    for (const auto& s : samples) lowest_n = std::min(lowest_n, s.n);
    const bool labelled = contents.inversions.size() <= most_labelled_inversions;
    bool in_legend = false;
    for (std::size_t i = 0; i < contents.inversions.size(); ++i) {
        const double top = -contents.inversions[i].z_top, bottom = -contents.inversions[i].z_bottom;
        if (bottom < shallowest || top > deepest) continue;
        std::string legend;
        if (!in_legend)
            legend = fmt::format("n falls with depth ({} interval{}{})", contents.inversions.size(),
                                 contents.inversions.size() == 1 ? "" : "s",
                                 labelled ? ", numbered" : "");
        in_legend = true;
        figure.add_y_band(std::max(top, shallowest), std::min(bottom, deepest), "#fcd5c0", legend);
        if (labelled) {
            plot::TextStyle style;
            style.size_px = 11.0;
            style.colour = "#b2182b";
            figure.add_text(lowest_n, 0.5 * (std::max(top, shallowest) + std::min(bottom, deepest)),
                            fmt::format("inversion {}", i + 1), style);
        }
    }
}

}  // namespace

ProfileContents profile_contents(const FirnModel& model) {
    const StratifiedProfile profile(model.index,
                                    model.bottom ? std::optional<double>(model.bottom->z_m) : std::nullopt);
    return {profile.inversions(), profile.ducts()};
}

void write_profile_samples_csv(std::ostream& stream, const std::vector<ProfileSample>& samples,
                               const ProfileContents& contents) {
    output::TextSink out(stream);
    write_contents_comment(out, contents);
    out.put("depth_m,z_m,n,dn_dz_per_m");
    out.end_row();
    for (const auto& s : samples) {
        put_number(out, s.depth_m, "depth_m");
        out.put(',');
        put_number(out, s.z_m, "z_m");
        out.put(',');
        put_number(out, s.n, "n");
        out.put(',');
        put_number(out, s.dn_dz_per_m, "dn_dz_per_m");
        out.end_row();
    }
    out.finish();
}

std::string profile_samples_csv(const std::vector<ProfileSample>& samples, const ProfileContents& contents) {
    return render_to_string([&](std::ostream& out) { write_profile_samples_csv(out, samples, contents); });
}

void write_profile_samples_json(std::ostream& out, const FirnModel& model, const std::vector<ProfileSample>& samples,
                                const ProfileContents& contents) {
    JsonWriter json(out);
    json.begin_object();
    json.key("model");
    write_model_json(json, model);
    json.field("conventions", "z up, surface z = 0, ice z < 0; depth_m = -z_m; dn_dz_per_m is dn/dz with z up");
    json.key("samples").begin_array();
    for (const auto& s : samples) {
        json.begin_object();
        json.field("depth_m", s.depth_m).field("z_m", s.z_m).field("n", s.n).field("dn_dz_per_m", s.dn_dz_per_m);
        json.end_object();
    }
    json.end_array();
    write_contents_json(json, contents);
    json.end_object();
    json.flush();
    out << '\n';
}

std::string profile_samples_json(const FirnModel& model, const std::vector<ProfileSample>& samples,
                                 const ProfileContents& contents) {
    return render_to_string([&](std::ostream& out) { write_profile_samples_json(out, model, samples, contents); });
}

void write_profile_svg(std::ostream& out, const FirnModel& model, const std::vector<ProfileSample>& samples,
                       const ProfileContents& contents) {
    plot::Figure figure = profile_figure(fmt::format("Refractive index: {}", model.name));
    add_inversion_bands(figure, samples, contents);
    figure.add_line(indexes_of(samples), depths_of(samples), plot::LineStyle{},
                    fmt::format("n, {} profile", model.index->kind()));
    out << figure.svg();
}

std::string profile_svg(const FirnModel& model, const std::vector<ProfileSample>& samples,
                        const ProfileContents& contents) {
    return render_to_string([&](std::ostream& out) { write_profile_svg(out, model, samples, contents); });
}

void write_fit_report_text(std::ostream& stream, const FitData& data, const ExponentialFit& fit) {
    // Every number of the report, checked before any of it is written.
    for (const auto& [value, name] : {std::pair{fit.n_deep, "n_deep"}, {fit.n_deep_sigma, "n_deep sigma"},
                                      {fit.n_surface, "n_surface"}, {fit.n_surface_sigma, "n_surface sigma"},
                                      {fit.scale_depth_m, "scale_depth_m"}, {fit.scale_depth_sigma_m, "scale_depth_m sigma"},
                                      {fit.residual_rms, "residual rms"}})
        require_finite(value, name);
    std::string out = fmt::format("exponential fit to {} ({} points, {})\n", data.path, fit.points,
                                  data.density_rule ? fmt::format("densities converted with the {} rule",
                                                                  density_rule_name(*data.density_rule))
                                                    : std::string("index values"));
    out += "model: n(z) = n_deep - (n_deep - n_surface) * exp(z / scale_depth_m), z <= 0 (z up)\n";
    if (fit.n_deep_fixed)
        out += fmt::format("n_deep        = {:.6f} (held fixed)\n", fit.n_deep);
    else
        out += fmt::format("n_deep        = {:.6f} ± {:.6f} (1 sigma)\n", fit.n_deep, fit.n_deep_sigma);
    out += fmt::format("n_surface     = {:.6f} ± {:.6f} (1 sigma)\n", fit.n_surface, fit.n_surface_sigma);
    out += fmt::format("scale_depth_m = {:.4f} ± {:.4f} (1 sigma)\n", fit.scale_depth_m, fit.scale_depth_sigma_m);
    out += fmt::format("residual rms  = {:.3g} in n ({} iterations)\n", fit.residual_rms, fit.iterations);
    stream << out;
}

std::string fit_report_text(const FitData& data, const ExponentialFit& fit) {
    return render_to_string([&](std::ostream& out) { write_fit_report_text(out, data, fit); });
}

void write_fit_report_json(std::ostream& out, const FitData& data, const ExponentialFit& fit) {
    JsonWriter json(out);
    json.begin_object();
    json.field("data", data.path).field("points", static_cast<unsigned long>(fit.points));
    json.key("values");
    if (data.density_rule)
        json.value(fmt::format("density converted with the {} rule", density_rule_name(*data.density_rule)));
    else
        json.value("index n");
    json.field("formula", "n(z) = n_deep - (n_deep - n_surface) * exp(z / scale_depth_m), z <= 0 (z up)");
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
    json.flush();
    out << '\n';
}

std::string fit_report_json(const FitData& data, const ExponentialFit& fit) {
    return render_to_string([&](std::ostream& out) { write_fit_report_json(out, data, fit); });
}

void write_fit_svg(std::ostream& out, const FitData& data, const ExponentialFit& fit) {
    // The curve runs a little below the deepest point, so the last points do not sit on the frame.
    const double deepest = *std::max_element(data.depth_m.begin(), data.depth_m.end());
    const double extent = std::max(deepest * 1.05, 1.0);
    const auto samples = sample_profile(fit.profile(), 0.0, extent, extent / 400.0);
    plot::Figure figure =
        profile_figure(fmt::format("Exponential fit to {}", std::filesystem::path(data.path).filename().string()));
    figure.add_markers(data.index_values(), data.depth_m, plot::MarkerStyle{},
                       data.density_rule
                           ? fmt::format("data (density by the {} rule)", density_rule_name(*data.density_rule))
                           : std::string("data"));
    figure.add_line(indexes_of(samples), depths_of(samples), plot::LineStyle{},
                    fmt::format("fit: n_deep {:.4f}, n_surface {:.4f}, scale depth {:.1f} m",
                                require_finite(fit.n_deep, "n_deep"), require_finite(fit.n_surface, "n_surface"),
                                require_finite(fit.scale_depth_m, "scale_depth_m")));
    out << figure.svg();
}

std::string fit_svg(const FitData& data, const ExponentialFit& fit) {
    return render_to_string([&](std::ostream& out) { write_fit_svg(out, data, fit); });
}

void write_fitted_model_toml(std::ostream& out, const FitData& data, const ExponentialFit& fit, const std::string& name,
                             const std::string& origin) {
    for (const auto& [value, field] : {std::pair{fit.n_deep, "n_deep"}, {fit.n_surface, "n_surface"},
                                       {fit.scale_depth_m, "scale_depth_m"}, {fit.n_deep_sigma, "n_deep sigma"},
                                       {fit.n_surface_sigma, "n_surface sigma"},
                                       {fit.scale_depth_sigma_m, "scale_depth_m sigma"}, {fit.residual_rms, "residual rms"}})
        require_finite(value, field);
    FirnModel model = default_model();  // air and attenuation: the built-in defaults
    model.name = name.empty() ? fmt::format("exponential fit to {}", data.path) : name;
    model.origin = origin;
    model.index = std::make_shared<ExponentialProfile>(fit.profile());
    const std::string comment = fmt::format(
        "Written by firnray profile --fit from {} ({} points).\n"
        "1-sigma uncertainties: n_deep {}, n_surface {:.6f}, scale_depth_m {:.4f}; residual rms {:.3g}.\n"
        "[air] and [attenuation] are the built-in defaults, not fitted: edit them for your site.",
        data.path, fit.points, fit.n_deep_fixed ? std::string("held fixed") : fmt::format("{:.6f}", fit.n_deep_sigma),
        fit.n_surface_sigma, fit.scale_depth_sigma_m, fit.residual_rms);
    out << model_to_toml(model, comment);
}

std::string fitted_model_toml(const FitData& data, const ExponentialFit& fit, const std::string& name,
                              const std::string& origin) {
    return render_to_string([&](std::ostream& out) { write_fitted_model_toml(out, data, fit, name, origin); });
}

}  // namespace firnray
