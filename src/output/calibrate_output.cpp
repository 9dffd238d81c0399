#include "output/calibrate_output.hpp"

#include <algorithm>
#include <cmath>
#include <filesystem>

#include <fmt/format.h>
#include <fmt/ranges.h>

#include "core/errors.hpp"
#include "io/json_writer.hpp"
#include "model/model_file.hpp"
#include "plot/figure.hpp"

namespace firnray {

namespace {

std::string file_name(const std::string& path) { return std::filesystem::path(path).filename().string(); }

double finite_or_throw(double value, const std::string& what) {
    if (!std::isfinite(value)) throw NumericalError(fmt::format("the calibration's {} is not a finite number", what));
    return value;
}

std::string pulse_flags(const PulseResidual& r) { return r.unresolved ? "unresolved" : ""; }

}  // namespace

void write_calibration_text(std::ostream& out, const CalibrationResult& result, const Station& station) {
    std::size_t pulses = result.residuals.size();
    out << fmt::format("Calibration of the {} profile of '{}' on {} pulses from {} pulsers ({})\n",
                       to_string(result.kind), result.start_model.name, pulses, result.pulsers.size(),
                       result.times_path);
    if (!result.log_path.empty())
        out << fmt::format("together with the log {} ({} points)\n", result.log_path, result.log_residuals.size());
    out << fmt::format("\n{:<28} {:>12} {:>12} {:>12}\n", "parameter", "start", "fitted", "1 sigma");
    for (const CalibratedParameter& p : result.parameters)
        out << fmt::format("{:<28} {:>12.6g} {:>12.6g} {:>12}\n", p.name, finite_or_throw(p.start, p.name),
                           finite_or_throw(p.value, p.name),
                           p.fixed ? std::string("fixed") : fmt::format("{:.3g}", finite_or_throw(p.sigma, p.name)));
    out << fmt::format("\nchi2 {:.4g} for {} degrees of freedom", finite_or_throw(result.chi2, "chi2"), result.ndof);
    if (result.ndof > 0) out << fmt::format(" (chi2/ndof {:.3g})", result.chi2 / result.ndof);
    out << "\n";
    if (!result.log_path.empty())
        out << fmt::format("  times {:.4g}, log {:.4g}\n", result.chi2_times, result.chi2_log);
    out << fmt::format("{} iterations; {} pulse{} unresolved (two paths within the pulse width of {} ns: matched to "
                       "the earlier)\n",
                       result.iterations, result.unresolved_pulses, result.unresolved_pulses == 1 ? "" : "s",
                       result.pulse_width_ns);
    out << "\ncovariance of " << fmt::format("{}", fmt::join(result.free_names, ", ")) << ":\n";
    for (const auto& row : result.covariance) {
        for (double v : row) out << fmt::format(" {:>13.5g}", finite_or_throw(v, "covariance"));
        out << "\n";
    }
    out << fmt::format("\n{:<20} {:>10} {:>10} {:>10} {:>12} {:>10}\n", "pulser", "x_m", "y_m", "z_m", "offset_ns",
                       "1 sigma");
    for (const PulserFit& p : result.pulsers)
        out << fmt::format("{:<20} {:>10.2f} {:>10.2f} {:>10.2f} {:>12.3f} {:>10.3f}\n", p.name, p.position.x,
                           p.position.y, p.position.z, finite_or_throw(p.offset_ns, "offset"), p.offset_sigma_ns);
    out << fmt::format("\n{:<20} {:<8} {:>12} {:>12} {:>10} {:>7} {:<16} {:>5}  {}\n", "pulser", "channel",
                       "measured_ns", "predicted_ns", "residual", "sigma", "path", "order", "flags");
    for (const PulseResidual& r : result.residuals)
        out << fmt::format("{:<20} {:<8} {:>12.3f} {:>12.3f} {:>10.3f} {:>7.3g} {:<16} {:>5}  {}\n",
                           result.pulsers[r.pulser].name, station.receivers[r.channel].name, r.measured_ns,
                           finite_or_throw(r.predicted_ns, "prediction"), r.residual_ns, r.sigma_ns,
                           to_string(r.path_kind), r.arrival_order, pulse_flags(r));
}

void write_calibration_json(std::ostream& out, const CalibrationResult& result, const Station& station) {
    JsonWriter json(out);
    json.begin_object();
    json.field("fit", to_string(result.kind));
    json.field("start_model", result.start_model.name);
    json.field("times_file", result.times_path);
    json.field("station", station.name);
    json.key("parameters").begin_object();
    for (const CalibratedParameter& p : result.parameters) {
        json.key(p.name).begin_object();
        json.field("value", p.value).field("sigma", p.sigma).field("start", p.start);
        if (p.fixed) json.field("fixed", true);
        json.end_object();
    }
    json.end_object();
    json.key("parameter_names").begin_array();
    for (const std::string& name : result.free_names) json.value(name);
    json.end_array();
    json.key("covariance").begin_array();
    for (const auto& row : result.covariance) {
        json.begin_array();
        for (double v : row) json.value(v);
        json.end_array();
    }
    json.end_array();
    json.field("chi2", result.chi2).field("ndof", result.ndof);
    json.field("chi2_times", result.chi2_times);
    json.field("iterations", result.iterations);
    json.field("pulse_width_ns", result.pulse_width_ns);
    json.field("unresolved_pulses", static_cast<unsigned long>(result.unresolved_pulses));
    json.key("pulsers").begin_array();
    for (const PulserFit& p : result.pulsers) {
        json.begin_object();
        json.field("name", p.name).field("x_m", p.position.x).field("y_m", p.position.y).field("z_m", p.position.z);
        json.field("offset_ns", p.offset_ns).field("offset_sigma_ns", p.offset_sigma_ns);
        json.field("pulses", static_cast<unsigned long>(p.pulses));
        json.end_object();
    }
    json.end_array();
    json.key("residuals").begin_array();
    for (const PulseResidual& r : result.residuals) {
        json.begin_object();
        json.field("pulser", result.pulsers[r.pulser].name).field("channel", station.receivers[r.channel].name);
        json.field("line", r.line);
        json.field("measured", r.measured_ns).field("predicted", r.predicted_ns).field("residual_ns", r.residual_ns);
        json.field("sigma_ns", r.sigma_ns);
        json.field("path_kind", to_string(r.path_kind)).field("arrival_order", r.arrival_order);
        json.field("paths_found", r.paths_found);
        json.key("flags").begin_array();
        if (r.unresolved) json.value("unresolved");
        json.end_array();
        json.field("pulser_depth_m", r.pulser_depth_m).field("horizontal_distance_m", r.horizontal_distance_m);
        json.end_object();
    }
    json.end_array();
    if (!result.log_path.empty()) {
        json.key("density_log").begin_object();
        json.field("file", result.log_path).field("chi2", result.chi2_log);
        json.field("points", static_cast<unsigned long>(result.log_residuals.size()));
        json.key("residuals").begin_array();
        for (const LogResidual& r : result.log_residuals) {
            json.begin_object();
            json.field("depth_m", r.depth_m).field("measured_n", r.measured_n).field("predicted_n", r.predicted_n);
            json.field("residual", r.residual);
            json.end_object();
        }
        json.end_array();
        json.end_object();
    }
    json.end_object();
    json.flush();
    out << "\n";
}

void write_calibration_svg(std::ostream& out, const CalibrationResult& result) {
    std::vector<double> depth, distance, residual, depth_unresolved, distance_unresolved, residual_unresolved;
    double deepest = 1.0;
    for (const PulseResidual& r : result.residuals) {
        auto& d = r.unresolved ? depth_unresolved : depth;
        auto& x = r.unresolved ? distance_unresolved : distance;
        auto& y = r.unresolved ? residual_unresolved : residual;
        d.push_back(r.pulser_depth_m);
        x.push_back(r.horizontal_distance_m);
        y.push_back(finite_or_throw(r.residual_ns, "residual"));
        deepest = std::max(deepest, r.pulser_depth_m);
    }
    const plot::MarkerStyle resolved_style{}, unresolved_style{"#7f7f7f", 3.5, "diamond"};
    const plot::LineStyle zero{"#444444", 1.0, "4 3", 1.0};
    plot::Figure against_depth(640, 420), against_distance(640, 420);
    against_depth.title("Residuals against pulser depth").x_label("pulser depth (m)").y_label("measured − predicted (ns)");
    against_distance.title("Residuals against distance")
        .x_label("horizontal distance pulser to channel (m)")
        .y_label("measured − predicted (ns)");
    for (plot::Figure* f : {&against_depth, &against_distance}) f->add_hline(0.0, zero);
    against_depth.add_markers(depth, residual, resolved_style, "pulse");
    against_distance.add_markers(distance, residual, resolved_style, "pulse");
    if (!residual_unresolved.empty()) {
        against_depth.add_markers(depth_unresolved, residual_unresolved, unresolved_style, "unresolved pulse");
        against_distance.add_markers(distance_unresolved, residual_unresolved, unresolved_style, "unresolved pulse");
    }

    for (const LogResidual& r : result.log_residuals) deepest = std::max(deepest, r.depth_m);
    const double extent = deepest * 1.1;
    const int samples = 300;
    // The band is a few 1e-3 of n wide: drawn on n it would vanish in the line, so a second panel
    // shows the change from the start profile, where it can be seen.
    std::vector<double> z, start_n, fitted_n, low_n, high_n, change, change_low, change_high;
    for (int i = 0; i <= samples; ++i) {
        const double d = extent * i / samples;
        z.push_back(d);
        const double start = result.start_model.index->index(-d);
        const double n = result.fitted_model.index->index(-d), sigma = fitted_index_sigma(result, d);
        start_n.push_back(start);
        fitted_n.push_back(n);
        low_n.push_back(n - sigma);
        high_n.push_back(n + sigma);
        change.push_back(finite_or_throw(n - start, "fitted profile"));
        change_low.push_back(n - sigma - start);
        change_high.push_back(n + sigma - start);
    }
    const plot::LineStyle band_style{"#e69f00", 1.0, "", 1.0};
    plot::Figure profile(640, 520), difference(640, 520);
    profile.title(fmt::format("Fitted {} profile", to_string(result.kind)))
        .x_label("refractive index n")
        .y_label("depth (m, increasing downward)")
        .invert_y(true);
    profile.add_line(start_n, z, plot::LineStyle{"#7f7f7f", 1.5, "6 3", 1.0}, "start profile");
    profile.add_line(low_n, z, band_style, "fitted ± 1σ");
    profile.add_line(high_n, z, band_style);
    profile.add_line(fitted_n, z, plot::LineStyle{}, "fitted profile");
    difference.title("Fitted minus start profile, with its 1σ band")
        .x_label("n fitted − n start")
        .y_label("depth (m, increasing downward)")
        .invert_y(true);
    difference.add_vline(0.0, zero);
    difference.add_line(change_low, z, band_style, "± 1σ (covariance, linear)");
    difference.add_line(change_high, z, band_style);
    difference.add_line(change, z, plot::LineStyle{}, "fitted − start");
    if (!result.log_residuals.empty()) {
        std::vector<double> log_n, log_change, log_depth;
        for (const LogResidual& r : result.log_residuals) {
            log_n.push_back(r.measured_n);
            log_change.push_back(r.measured_n - result.start_model.index->index(-r.depth_m));
            log_depth.push_back(r.depth_m);
        }
        const plot::MarkerStyle log_style{"#009e73", 2.5, "circle"};
        profile.add_markers(log_n, log_depth, log_style, "log");
        difference.add_markers(log_change, log_depth, log_style, "log");
    }
    out << plot::compose_figures({&against_depth, &against_distance, &profile, &difference}, 2,
                                 fmt::format("Calibration on {}: chi2 {:.4g} for {} degrees of freedom",
                                             file_name(result.times_path), result.chi2, result.ndof));
}

void write_calibrated_model_toml(std::ostream& out, const CalibrationResult& result, const std::string& name,
                                 const std::string& origin) {
    FirnModel model = result.fitted_model;
    model.name = name.empty() ? fmt::format("{}, calibrated on {}", result.start_model.name, file_name(result.times_path))
                              : name;
    model.origin = origin;
    std::string sigmas;
    for (const CalibratedParameter& p : result.parameters)
        sigmas += fmt::format("{}{} {}", sigmas.empty() ? "" : ", ", p.name,
                              p.fixed ? std::string("fixed") : fmt::format("{:.3g}", finite_or_throw(p.sigma, p.name)));
    const std::string comment = fmt::format(
        "Written by firnray calibrate from {} ({} pulses, {} pulsers{}), start model '{}'.\n"
        "1-sigma: {}; chi2 {:.4g} for {} degrees of freedom.\n"
        "[uncertainty] holds the covariance of the fitted parameters (docs/uncertainty.md).",
        result.times_path, result.residuals.size(), result.pulsers.size(),
        result.log_path.empty() ? std::string() : fmt::format(", and the log {}", result.log_path),
        result.start_model.name, sigmas, finite_or_throw(result.chi2, "chi2"), result.ndof);
    out << model_to_toml(model, comment);
}

}  // namespace firnray
