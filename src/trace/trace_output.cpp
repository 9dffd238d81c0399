#include "trace/trace_output.hpp"

#include <fmt/format.h>

#include "core/constants.hpp"
#include "io/json_writer.hpp"

namespace firnray {

std::string trace_csv(const std::vector<RayTrace>& rays) {
    std::string out = "ray,branch,parent,kind,launch_zenith_deg,x_m,z_m,time_ns,length_m\n";
    for (std::size_t r = 0; r < rays.size(); ++r) {
        const double zenith_deg = rad_to_deg(rays[r].launch.zenith_rad);
        for (std::size_t b = 0; b < rays[r].branches.size(); ++b) {
            const RayBranch& branch = rays[r].branches[b];
            const std::string kind = to_string(branch.kind);
            for (const RayPoint& p : branch.points)
                out += fmt::format("{},{},{},{},{:.12g},{},{},{},{}\n", r, b, branch.parent, kind, zenith_deg, p.x_m, p.z_m,
                                   p.time_s * seconds_to_ns, p.length_m);
        }
    }
    return out;
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

}  // namespace

std::string trace_json(const FirnModel& model, const std::vector<RayTrace>& rays) {
    JsonWriter json;
    json.begin_object();
    json.key("model").begin_object();
    json.field("name", model.name).field("origin", model.origin).field("index", model.index->describe());
    json.field("n_air", model.n_air);
    json.end_object();
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
    return json.str() + "\n";
}

}  // namespace firnray
