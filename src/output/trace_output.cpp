#include "output/trace_output.hpp"

#include <algorithm>

#include <fmt/format.h>

#include "core/constants.hpp"
#include "io/csv_writer.hpp"
#include "io/json_writer.hpp"
#include "output/model_json.hpp"
#include "output/text_sink.hpp"
#include "plot/figure.hpp"

namespace firnray {

using output::render_to_string;

void write_trace_csv(std::ostream& stream, const std::vector<RayTrace>& rays) {
    output::TextSink out(stream);
    out.put("ray,branch,parent,kind,launch_zenith_deg,x_m,z_m,time_ns,length_m");
    out.end_row();
    for (std::size_t r = 0; r < rays.size(); ++r) {
        const double zenith_deg = require_finite(rad_to_deg(rays[r].launch.zenith_rad), "launch_zenith_deg");
        for (std::size_t b = 0; b < rays[r].branches.size(); ++b) {
            const RayBranch& branch = rays[r].branches[b];
            const std::string kind = to_string(branch.kind);
            for (const RayPoint& p : branch.points) {
                fmt::format_to(fmt::appender(out.buffer()), "{},{},{},{},{:.12g},{},{},{},{}", r, b, branch.parent, kind,
                               zenith_deg, require_finite(p.x_m, "x_m"), require_finite(p.z_m, "z_m"),
                               require_finite(p.time_s * seconds_to_ns, "time_ns"),
                               require_finite(p.length_m, "length_m"));
                out.end_row();
            }
        }
    }
    out.finish();
}

std::string trace_csv(const std::vector<RayTrace>& rays) {
    return render_to_string([&](std::ostream& out) { write_trace_csv(out, rays); });
}

namespace {

void write_point_fields(JsonWriter& json, const RayPoint& p) {
    json.field("x_m", p.x_m).field("z_m", p.z_m).field("time_ns", p.time_s * seconds_to_ns).field("length_m", p.length_m);
}

void write_branch(JsonWriter& json, std::size_t index, const RayBranch& b) {
    json.begin_object();
    json.field("index", static_cast<unsigned long>(index)).field("kind", to_string(b.kind)).field("parent", b.parent);
    json.field("ray_parameter", b.ray_parameter);
    json.key("start").begin_object();
    write_point_fields(json, b.start);
    json.field("zenith_deg", rad_to_deg(b.start_zenith_rad)).end_object();
    json.key("end").begin_object();
    write_point_fields(json, b.end);
    json.field("zenith_deg", rad_to_deg(b.end_zenith_rad)).field("reason", to_string(b.end_reason)).end_object();
    json.field("amplitude_s", b.amplitude_s).field("amplitude_p", b.amplitude_p);
    json.field("attenuation_exponent", b.attenuation_exponent);
    json.field("steps", static_cast<unsigned long>(b.steps));
    json.key("drift").begin_object();
    json.field("index_mismatch", b.drift.index_mismatch).field("ray_parameter_change", b.drift.ray_parameter_change);
    json.end_object();
    json.key("events").begin_array();
    for (const RayEvent& e : b.events) {
        json.begin_object().field("type", to_string(e.type));
        write_point_fields(json, e.where);
        json.field("zenith_before_deg", rad_to_deg(e.zenith_before_rad))
            .field("zenith_after_deg", rad_to_deg(e.zenith_after_rad))
            .field("factor_s", e.factor_s)
            .field("factor_p", e.factor_p);
        if (e.child_branch >= 0)
            json.field("child_branch", e.child_branch);
        else
            json.key("child_branch").null();
        json.end_object();
    }
    json.end_array();
    json.key("point_fields").begin_array().value("x_m").value("z_m").value("time_ns").value("length_m").end_array();
    json.key("points").begin_array();
    for (const RayPoint& p : b.points) {
        json.begin_array().value(p.x_m).value(p.z_m).value(p.time_s * seconds_to_ns).value(p.length_m).end_array();
    }
    json.end_array();
    json.end_object();
}

std::string branch_colour(BranchKind kind) {
    switch (kind) {
        case BranchKind::ice: return "#1f5fa8";
        case BranchKind::ice_transmitted: return "#2b9348";
        case BranchKind::air: return "#7b3fa0";
        case BranchKind::air_transmitted: return "#e07b00";
    }
    return "#444444";
}

}  // namespace

void write_trace_json(std::ostream& out, const FirnModel& model, const std::vector<RayTrace>& rays) {
    JsonWriter json(out);
    json.begin_object();
    json.key("model");
    write_model_json(json, model);
    json.field("conventions",
               "z up (m), surface z = 0, ice z < 0; zenith angle of travel (0 up, 90 horizontal, 180 down); "
               "time and length counted from the launch; amplitudes are products of Fresnel (and bottom) field "
               "factors [re, im]");
    json.key("rays").begin_array();
    for (std::size_t r = 0; r < rays.size(); ++r) {
        const RayTrace& ray = rays[r];
        json.begin_object().field("index", static_cast<unsigned long>(r));
        json.key("launch").begin_object();
        json.field("x_m", ray.launch.x_m).field("z_m", ray.launch.z_m).field("zenith_deg", rad_to_deg(ray.launch.zenith_rad));
        json.end_object();
        json.field("truncated", ray.truncated);
        json.key("branches").begin_array();
        for (std::size_t b = 0; b < ray.branches.size(); ++b) write_branch(json, b, ray.branches[b]);
        json.end_array().end_object();
    }
    json.end_array().end_object();
    json.flush();
    out << '\n';
}

std::string trace_json(const FirnModel& model, const std::vector<RayTrace>& rays) {
    return render_to_string([&](std::ostream& out) { write_trace_json(out, model, rays); });
}

void write_ray_fan_svg(std::ostream& out, const FirnModel& model, const std::vector<RayTrace>& rays, double launch_x_m,
                       double launch_z_m) {
    double z_low = std::min(0.0, launch_z_m), z_high = std::max(0.0, launch_z_m);
    for (const RayTrace& ray : rays)
        for (const RayBranch& b : ray.branches)
            for (const RayPoint& p : b.points) {
                z_low = std::min(z_low, p.z_m);
                z_high = std::max(z_high, p.z_m);
            }
    const double margin = 0.05 * std::max(z_high - z_low, 1.0);
    z_high = std::max(z_high, 0.0) + margin;
    z_low -= margin;

    plot::Figure figure;
    figure.title(fmt::format("Rays from x = {} m, z = {} m; model: {}", require_finite(launch_x_m, "launch x_m"),
                             require_finite(launch_z_m, "launch z_m"),
                             model.name.empty() ? model.index->describe() : model.name));
    figure.x_label("horizontal distance x (m)");
    figure.y_label("z (m, up; surface at z = 0)");
    figure.y_range(z_low, z_high);
    figure.add_y_band(0.0, z_high, "#e3f1fb", "air");
    figure.add_hline(0.0, plot::LineStyle{"#333333", 1.2, "", 1.0}, "surface");
    if (model.bottom) figure.add_hline(model.bottom->z_m, plot::LineStyle{"#8c564b", 1.5, "6 3", 1.0}, "bottom");
    bool legend_done[4] = {false, false, false, false};
    for (const RayTrace& ray : rays)
        for (const RayBranch& b : ray.branches) {
            if (b.points.size() < 2) continue;
            std::vector<double> xs, zs;
            for (const RayPoint& p : b.points) {
                xs.push_back(p.x_m);
                zs.push_back(p.z_m);
            }
            const int k = static_cast<int>(b.kind);
            const std::string legend = legend_done[k] ? "" : to_string(b.kind) + " rays";
            legend_done[k] = true;
            figure.add_line(xs, zs, plot::LineStyle{branch_colour(b.kind), 1.2, "", 0.9}, legend);
        }
    std::vector<double> source_x{launch_x_m}, source_z{launch_z_m};
    figure.add_markers(source_x, source_z, plot::MarkerStyle{"#d62728", 4.0, "circle"}, "launch point");
    out << figure.svg();
}

std::string ray_fan_svg(const FirnModel& model, const std::vector<RayTrace>& rays, double launch_x_m, double launch_z_m) {
    return render_to_string([&](std::ostream& out) { write_ray_fan_svg(out, model, rays, launch_x_m, launch_z_m); });
}

}  // namespace firnray
