#include "output/path_output.hpp"

#include <algorithm>
#include <cmath>
#include <iterator>
#include <limits>
#include <optional>

#include <fmt/compile.h>
#include <fmt/format.h>

#include "core/constants.hpp"
#include "core/errors.hpp"
#include "io/csv_writer.hpp"
#include "io/json_writer.hpp"
#include "output/model_json.hpp"
#include "output/text_sink.hpp"

namespace firnray {

PathFormat parse_path_format(const std::string& text) {
    if (text == "text") return PathFormat::text;
    if (text == "csv") return PathFormat::csv;
    if (text == "json") return PathFormat::json;
    throw DataInputError(fmt::format("'{}' is not an output format (text, csv or json)", text), {"", 0, "format"});
}

namespace {

// The model as the text outputs name it: its name, or its profile when it has none.
std::string model_label(const PathOutputContext& context) {
    return context.model->name.empty() ? context.model->index->describe() : context.model->name;
}

constexpr const char* conventions =
    "z up (m), surface z = 0, ice z < 0, air z > 0; zenith angles of the direction of travel (0 up, 90 horizontal, "
    "180 down); azimuth from +x toward +y; times in ns; complex numbers as [re, im]; fresnel_s/p: product of the "
    "interface factors of the path; spreading_m: L_eff; attenuation: field factor; field_s/p = fresnel x flux_factor "
    "x attenuation / spreading_m, relative to the field at 1 m from the source";

struct Geometry {
    double distance_m = 0.0, azimuth_deg = 0.0;
};

// The same definition as find_paths: atan2(Δy, Δx), 0 for a vertical pair.
Geometry geometry(const Point& source, const Point& receiver) {
    const double dx = receiver.x - source.x, dy = receiver.y - source.y;
    const double r = std::hypot(dx, dy);
    return {r, r > 0.0 ? rad_to_deg(std::atan2(dy, dx)) : 0.0};
}

// Everything is formatted into a fmt buffer (growing on the stack first) with format strings
// compiled in: a batch writes tens of numbers per path, and this is where its time goes.
using Buffer = fmt::memory_buffer;

void put(Buffer& out, std::string_view text) { out.append(text.data(), text.data() + text.size()); }
void put(Buffer& out, char c) { out.push_back(c); }
void put_repeated(Buffer& out, std::size_t count, char c) {
    for (std::size_t i = 0; i < count; ++i) out.push_back(c);
}

constexpr double half_unit(int digits) { return digits <= 0 ? 0.5 : 0.1 * half_unit(digits - 1); }

// Fixed-point text of a finite number, without a "-0.000" for values that round to zero; a
// value that is not finite is refused with the field's name.
template <int Digits>
void fixed(Buffer& out, double value, std::string_view field) {
    if (!std::isfinite(value)) require_finite(value, field);
    if (std::abs(value) < half_unit(Digits)) value = 0.0;
    if constexpr (Digits == 2) fmt::format_to(fmt::appender(out), FMT_COMPILE("{:.2f}"), value);
    else if constexpr (Digits == 3) fmt::format_to(fmt::appender(out), FMT_COMPILE("{:.3f}"), value);
    else if constexpr (Digits == 4) fmt::format_to(fmt::appender(out), FMT_COMPILE("{:.4f}"), value);
    else if constexpr (Digits == 5) fmt::format_to(fmt::appender(out), FMT_COMPILE("{:.5f}"), value);
    else if constexpr (Digits == 6) fmt::format_to(fmt::appender(out), FMT_COMPILE("{:.6f}"), value);
    else if constexpr (Digits == 8) fmt::format_to(fmt::appender(out), FMT_COMPILE("{:.8f}"), value);
    else if constexpr (Digits == 10) fmt::format_to(fmt::appender(out), FMT_COMPILE("{:.10f}"), value);
    else static_assert(Digits == 3, "add the format string for this precision");
}

void significant(Buffer& out, double value, std::string_view field) {
    if (!std::isfinite(value)) require_finite(value, field);
    fmt::format_to(fmt::appender(out), FMT_COMPILE("{:.9g}"), value + 0.0);
}

void integer(Buffer& out, long value) { fmt::format_to(fmt::appender(out), FMT_COMPILE("{}"), value); }

// ---- CSV ------------------------------------------------------------------------------------

constexpr std::string_view csv_path_columns =
    "path,kind,time_ns,launch_zenith_deg,arrival_zenith_deg,length_m,ray_parameter,turning_z_m,turning_points,"
    "surface_bounces,bottom_bounces,horizontal_distance_m,azimuth_deg,fresnel_s_re,fresnel_s_im,fresnel_p_re,"
    "fresnel_p_im,flux_factor,spreading_m,attenuation,field_s_re,field_s_im,field_p_re,field_p_im,caustic,events";
constexpr std::size_t csv_path_column_count = 26;

void csv_text(Buffer& out, std::string_view text) { append_csv_field(out, text); }

// What is absent at a caustic, where ray theory gives no amplitude (connected_path.hpp): the
// field, and L_eff when it could not be computed.
bool has_spreading(const PathAmplitude& a) { return !a.caustic || std::isfinite(a.spreading_distance_m); }
bool has_field(const PathAmplitude& a) { return !a.caustic; }

// The 26 path columns, without a leading or trailing separator.
void csv_path(Buffer& out, std::size_t rank, const ConnectedPath& p, const Geometry& g) {
    integer(out, static_cast<long>(rank));
    put(out, ',');
    put(out, to_string(p.kind));
    put(out, ',');
    fixed<6>(out, p.time_s * seconds_to_ns, "time_ns");
    put(out, ',');
    fixed<8>(out, rad_to_deg(p.launch_zenith_rad), "launch_zenith_deg");
    put(out, ',');
    fixed<8>(out, rad_to_deg(p.arrival_zenith_rad), "arrival_zenith_deg");
    put(out, ',');
    fixed<6>(out, p.length_m, "length_m");
    put(out, ',');
    fixed<10>(out, p.ray_parameter, "ray_parameter");
    put(out, ',');
    if (p.turning_z_m) fixed<6>(out, *p.turning_z_m, "turning_z_m");
    for (const int count : {p.turning_points, p.surface_bounces, p.bottom_bounces}) {
        put(out, ',');
        integer(out, count);
    }
    put(out, ',');
    fixed<6>(out, g.distance_m, "horizontal_distance_m");
    put(out, ',');
    fixed<8>(out, g.azimuth_deg, "azimuth_deg");
    const PathAmplitude& a = p.amplitude;
    const struct {
        double value;
        const char* name;
        bool present;
    } amplitude_columns[] = {
        {a.interface_s.real(), "fresnel_s_re", true}, {a.interface_s.imag(), "fresnel_s_im", true},
        {a.interface_p.real(), "fresnel_p_re", true}, {a.interface_p.imag(), "fresnel_p_im", true},
        {a.flux_factor, "flux_factor", true},         {a.spreading_distance_m, "spreading_m", has_spreading(a)},
        {a.attenuation_factor, "attenuation", true},  {a.field_s.real(), "field_s_re", has_field(a)},
        {a.field_s.imag(), "field_s_im", has_field(a)}, {a.field_p.real(), "field_p_re", has_field(a)},
        {a.field_p.imag(), "field_p_im", has_field(a)},
    };
    for (const auto& column : amplitude_columns) {
        put(out, ',');
        if (column.present) significant(out, column.value, column.name);
    }
    put(out, a.caustic ? ",true" : ",false");
    put(out, ',');
    csv_text(out, format_events(p.events, 6));
}

// The uncertainty columns of one path, each after a separator: a σ that cannot be given (a path
// that some models lack, linearised) is left empty; sigma_absent_models says how many lacked it.
constexpr std::string_view csv_spread_columns =
    ",time_sigma_ns,launch_zenith_sigma_deg,arrival_zenith_sigma_deg,sigma_models,sigma_absent_models";
constexpr std::size_t csv_spread_column_count = 5;

void csv_sigma(Buffer& out, double sigma, std::string_view field) {
    put(out, ',');
    if (std::isfinite(sigma)) significant(out, sigma, field);
}

void csv_spread(Buffer& out, const PathSpread& spread, std::size_t models) {
    csv_sigma(out, spread.time_ns, "time_sigma_ns");
    csv_sigma(out, spread.launch_zenith_deg, "launch_zenith_sigma_deg");
    csv_sigma(out, spread.arrival_zenith_deg, "arrival_zenith_sigma_deg");
    put(out, ',');
    integer(out, static_cast<long>(models));
    put(out, ',');
    integer(out, static_cast<long>(spread.absent));
}

// "# uncertainty: …", the comment line that opens a CSV with σ columns (readers skip # lines).
void csv_uncertainty_comment(Buffer& out, const PathOutputContext& context) {
    if (!context.uncertainty) return;
    put(out, "# uncertainty: ");
    put(out, context.uncertainty->summary());
    put(out, '\n');
}

// A row saying that a pair has no path: kind "none", with the pair's distance and azimuth.
void csv_no_path(Buffer& out, const Geometry& g) {
    put(out, "0,none");
    put_repeated(out, 10, ',');  // time_ns .. bottom_bounces stay empty
    fixed<6>(out, g.distance_m, "horizontal_distance_m");
    put(out, ',');
    fixed<8>(out, g.azimuth_deg, "azimuth_deg");
    put_repeated(out, csv_path_column_count - 13, ',');
}

// `spreads` is null without an uncertainty propagation.
std::string single_csv(const PathOutputContext& context, const Point& source, const Point& receiver,
                       const std::vector<ConnectedPath>& paths, const PairPaths* spreads) {
    Buffer out;
    csv_uncertainty_comment(out, context);
    put(out, csv_path_columns);
    if (spreads) put(out, csv_spread_columns);
    put(out, '\n');
    const Geometry g = geometry(source, receiver);
    for (std::size_t i = 0; i < paths.size(); ++i) {
        csv_path(out, i + 1, paths[i], g);
        if (spreads) csv_spread(out, spreads->spreads.at(i), spreads->spread_models);
        put(out, '\n');
    }
    return fmt::to_string(out);
}

// ---- JSON -----------------------------------------------------------------------------------

void json_point(JsonWriter& json, const char* name, const Point& p) {
    json.key(name).begin_object().field("x_m", p.x).field("y_m", p.y).field("z_m", p.z).end_object();
}

void json_path(JsonWriter& json, const ConnectedPath& p, const PathSpread* spread) {
    json.begin_object();
    json.field("kind", to_string(p.kind));
    json.field("time_ns", p.time_s * seconds_to_ns);
    json.field("launch_zenith_deg", rad_to_deg(p.launch_zenith_rad));
    json.field("arrival_zenith_deg", rad_to_deg(p.arrival_zenith_rad));
    json.field("length_m", p.length_m);
    json.field("ray_parameter", p.ray_parameter);
    json.field("turning_z_m", p.turning_z_m);
    json.field("turning_points", p.turning_points);
    json.field("surface_bounces", p.surface_bounces);
    json.field("bottom_bounces", p.bottom_bounces);
    json.field("crosses_surface", p.crosses_surface);
    if (spread) {
        const auto sigma = [](double v) { return std::isfinite(v) ? std::optional(v) : std::nullopt; };
        json.field("time_sigma_ns", sigma(spread->time_ns));
        json.field("launch_zenith_sigma_deg", sigma(spread->launch_zenith_deg));
        json.field("arrival_zenith_sigma_deg", sigma(spread->arrival_zenith_deg));
        json.field("sigma_absent_models", spread->absent);
    }
    const PathAmplitude& a = p.amplitude;
    json.key("amplitude").begin_object();
    json.field("fresnel_s", a.interface_s);
    json.field("fresnel_p", a.interface_p);
    json.field("flux_factor", a.flux_factor);
    json.key("spreading_m");
    if (has_spreading(a)) json.value(a.spreading_distance_m);
    else json.null();
    json.field("attenuation", a.attenuation_factor);
    json.field("attenuation_exponent", p.attenuation_exponent);
    const auto field_if_defined = [&](std::complex<double> field) {
        return has_field(a) ? std::optional(field) : std::nullopt;  // [null, null] at a caustic
    };
    json.field("field_s", field_if_defined(a.field_s));
    json.field("field_p", field_if_defined(a.field_p));
    json.field("caustic", a.caustic);
    json.end_object();
    json.key("events").begin_array();
    for (const PathEvent& e : p.events)
        json.begin_object().field("kind", to_string(e.kind)).field("offset_m", e.offset_m).field("z_m", e.z_m).end_object();
    json.end_array();
    json.end_object();
}

// The members a pair object shares between the single-pair output and a batch.
void json_pair_members(JsonWriter& json, const Point& source, const Point& receiver,
                       const std::vector<ConnectedPath>& paths, const PairPaths* spreads) {
    const Geometry g = geometry(source, receiver);
    json_point(json, "source", source);
    json_point(json, "receiver", receiver);
    json.field("horizontal_distance_m", g.distance_m);
    json.field("azimuth_deg", g.azimuth_deg);
    if (spreads) json.field("sigma_models", spreads->spread_models);
    json.key("paths").begin_array();
    for (std::size_t i = 0; i < paths.size(); ++i) json_path(json, paths[i], spreads ? &spreads->spreads.at(i) : nullptr);
    json.end_array();
}

// The model and solver members that open every JSON document of paths.
void json_context_members(JsonWriter& json, const PathOutputContext& context) {
    json.key("model");
    write_model_json(json, *context.model);
    json.field("solver", context.solver_name);
    json.field("conventions", conventions);
    if (context.uncertainty) write_uncertainty_report_json(json, *context.uncertainty);
}

std::string single_json(const PathOutputContext& context, const Point& source, const Point& receiver,
                        const std::vector<ConnectedPath>& paths, const PairPaths* spreads) {
    JsonWriter json;
    json.begin_object();
    json_context_members(json, context);
    json_pair_members(json, source, receiver, paths, spreads);
    json.end_object();
    return json.str() + "\n";
}

// ---- text -----------------------------------------------------------------------------------

struct TextColumn {
    std::string_view heading;
    std::size_t width;
    bool left = false;
};

// Each column is as wide as its heading or its widest usual value, whichever is wider; wider
// values push the rest of their row to the right rather than being cut.
constexpr TextColumn text_columns[] = {
    {"path", 4},           {"kind", 11, true},   {"time (ns)", 15},   {"launch (deg)", 12},
    {"arrival (deg)", 13}, {"length (m)", 11},   {"ray param.", 10},  {"turning z (m)", 13},
    {"bounces s/b", 11},   {"L_eff (m)", 11},    {"atten.", 8},       {"|F_s|", 7},
    {"arg F_s (deg)", 13}, {"|F_p|", 7},         {"arg F_p (deg)", 13}, {"note", 7, true},
    {"events (z, x from the source, m)", 0, true},
};
constexpr std::size_t text_column_count = std::size(text_columns);
enum TextColumnIndex : std::size_t {
    c_path, c_kind, c_time, c_launch, c_arrival, c_length, c_ray, c_turning, c_bounces, c_spreading,
    c_attenuation, c_fs, c_arg_fs, c_fp, c_arg_fp, c_note, c_events,
};

// Writes `text` into a field of the column's width; columns are separated by two spaces.
void text_cell(Buffer& out, std::size_t column, std::string_view text) {
    const TextColumn& c = text_columns[column];
    if (column > 0) put(out, "  ");
    const std::size_t pad = text.size() < c.width ? c.width - text.size() : 0;
    if (!c.left) put_repeated(out, pad, ' ');
    put(out, text);
    if (c.left && column + 1 < text_column_count) put_repeated(out, pad, ' ');
}

// A right-aligned fixed-point number; refused when not finite (the heading names the field).
template <int Digits>
void text_number(Buffer& out, std::size_t column, double value) {
    Buffer number;
    fixed<Digits>(number, value, text_columns[column].heading);
    text_cell(out, column, std::string_view(number.data(), number.size()));
}

// "-" for a value that is absent, else as text_number.
template <int Digits>
void text_number_if(Buffer& out, std::size_t column, bool present, double value) {
    if (present) text_number<Digits>(out, column, value);
    else text_cell(out, column, "-");
}

// The σ columns that go before the events with an uncertainty propagation.
constexpr TextColumn text_spread_columns[] = {
    {"σ time (ns)", 13}, {"σ launch (deg)", 14}, {"σ arrival (deg)", 15}, {"absent", 6},
};

void text_spread_cell(Buffer& out, const TextColumn& c, std::string_view text) {
    put(out, "  ");
    // "σ" is two bytes for one character: pad by characters, not bytes
    const std::size_t shown = text.size() - static_cast<std::size_t>(std::count(text.begin(), text.end(), '\xcf'));
    put_repeated(out, shown < c.width ? c.width - shown : 0, ' ');
    put(out, text);
}

void text_spread_number(Buffer& out, const TextColumn& c, double sigma) {
    if (!std::isfinite(sigma)) {
        text_spread_cell(out, c, "-");
        return;
    }
    Buffer number;
    fmt::format_to(fmt::appender(number), FMT_COMPILE("{:.3g}"), sigma);
    text_spread_cell(out, c, std::string_view(number.data(), number.size()));
}

void text_spread(Buffer& out, const PathSpread& spread, std::size_t models) {
    text_spread_number(out, text_spread_columns[0], spread.time_ns);
    text_spread_number(out, text_spread_columns[1], spread.launch_zenith_deg);
    text_spread_number(out, text_spread_columns[2], spread.arrival_zenith_deg);
    text_spread_cell(out, text_spread_columns[3], fmt::format("{}/{}", spread.absent, models));
}

void text_heading(Buffer& out, bool with_spreads = false) {
    for (std::size_t c = 0; c < text_column_count; ++c) {
        if (c == c_events && with_spreads)
            for (const TextColumn& s : text_spread_columns) text_spread_cell(out, s, s.heading);
        text_cell(out, c, text_columns[c].heading);
    }
}

double phase_deg(std::complex<double> v) { return std::abs(v) > 0.0 ? rad_to_deg(std::arg(v)) : 0.0; }

// Every column of one path (no newline); the σ columns before the events when `spread` is given.
void text_path(Buffer& out, std::size_t rank, const ConnectedPath& p, const PathSpread* spread = nullptr,
               std::size_t spread_models = 0) {
    Buffer cell;
    integer(cell, static_cast<long>(rank));
    text_cell(out, c_path, std::string_view(cell.data(), cell.size()));
    text_cell(out, c_kind, to_string(p.kind));
    text_number<6>(out, c_time, p.time_s * seconds_to_ns);
    text_number<6>(out, c_launch, rad_to_deg(p.launch_zenith_rad));
    text_number<6>(out, c_arrival, rad_to_deg(p.arrival_zenith_rad));
    text_number<3>(out, c_length, p.length_m);
    text_number<6>(out, c_ray, p.ray_parameter);
    text_number_if<3>(out, c_turning, p.turning_z_m.has_value(), p.turning_z_m.value_or(0.0));
    cell.clear();
    integer(cell, p.surface_bounces);
    put(cell, '/');
    integer(cell, p.bottom_bounces);
    text_cell(out, c_bounces, std::string_view(cell.data(), cell.size()));
    const PathAmplitude& a = p.amplitude;
    text_number_if<3>(out, c_spreading, has_spreading(a), a.spreading_distance_m);
    text_number<5>(out, c_attenuation, a.attenuation_factor);
    text_number<4>(out, c_fs, std::abs(a.interface_s));
    text_number<2>(out, c_arg_fs, phase_deg(a.interface_s));
    text_number<4>(out, c_fp, std::abs(a.interface_p));
    text_number<2>(out, c_arg_fp, phase_deg(a.interface_p));
    text_cell(out, c_note, a.caustic ? "caustic" : "");
    if (spread) text_spread(out, *spread, spread_models);
    text_cell(out, c_events, p.events.empty() ? "-" : format_events(p.events, 3));
}

constexpr std::string_view text_notes =
    "Angles: zenith angle of the direction of travel (0 up, 90 horizontal, 180 down); z is up, the surface is z = 0.\n"
    "bounces s/b: reflections at the surface / at the bottom. L_eff: geometric spreading distance (field ~ 1/L_eff).\n"
    "atten.: field factor of absorption. F_s, F_p: product of the interface (Fresnel) factors of the path for s and p\n"
    "polarisation, as magnitude and phase. caustic: the spreading vanishes, ray theory gives no amplitude there.\n"
    "events: turning points, reflections and surface crossings in order from the source, at depth z and horizontal\n"
    "offset x from the source (m); ducted paths turn at two depths, several times.\n";

constexpr std::string_view text_spread_notes =
    "σ: 1σ from the model's [uncertainty] (\"-\": some models lack the path, so none is given). absent: perturbed\n"
    "models lacking the path / perturbed models with a valid profile (docs/uncertainty.md).\n";

std::string describe_solver(const std::string& name) {
    if (name == "closed") return "closed (closed form of the exponential profile)";
    if (name == "numeric") return "numeric (integrated ray equations)";
    return name;
}

std::string single_text(const PathOutputContext& context, const Point& source, const Point& receiver,
                        const std::vector<ConnectedPath>& paths, const PairPaths* spreads) {
    for (const auto& [value, name] : {std::pair{source.x, "source x"}, {source.y, "source y"}, {source.z, "source z"},
                                      {receiver.x, "receiver x"}, {receiver.y, "receiver y"}, {receiver.z, "receiver z"}})
        require_finite(value, name);
    Buffer out;
    const Geometry g = geometry(source, receiver);
    fmt::format_to(fmt::appender(out), "model:    {}\nsolver:   {}\n", model_label(context),
                   describe_solver(context.solver_name));
    if (context.uncertainty) fmt::format_to(fmt::appender(out), "uncertainty: {}\n", context.uncertainty->summary());
    fmt::format_to(fmt::appender(out), "source:   x = {} m, y = {} m, z = {} m\nreceiver: x = {} m, y = {} m, z = {} m\n",
                   source.x, source.y, source.z, receiver.x, receiver.y, receiver.z);
    fmt::format_to(fmt::appender(out), "horizontal distance {:.3f} m, azimuth {:.2f} deg (from +x toward +y)\n\n",
                   g.distance_m, g.azimuth_deg + 0.0);
    if (paths.empty()) {
        put(out, "No path joins the source and the receiver: the receiver is in the shadow zone of the source.\n");
        return fmt::to_string(out);
    }
    fmt::format_to(fmt::appender(out), "{} path{}, in order of arrival:\n\n", paths.size(), paths.size() == 1 ? "" : "s");
    text_heading(out, spreads != nullptr);
    put(out, '\n');
    for (std::size_t i = 0; i < paths.size(); ++i) {
        if (spreads) text_path(out, i + 1, paths[i], &spreads->spreads.at(i), spreads->spread_models);
        else text_path(out, i + 1, paths[i]);
        put(out, '\n');
    }
    put(out, '\n');
    put(out, text_notes);
    if (spreads) put(out, text_spread_notes);
    return fmt::to_string(out);
}

}  // namespace

std::string format_events(const std::vector<PathEvent>& events, int decimals) {
    std::string out;
    for (const PathEvent& e : events) {
        if (!out.empty()) out += ';';
        require_finite(e.z_m, "event z_m");
        require_finite(e.offset_m, "event offset_m");
        fmt::format_to(std::back_inserter(out), "{} z={:.{}f} x={:.{}f}", to_string(e.kind), e.z_m + 0.0, decimals,
                       e.offset_m + 0.0, decimals);
    }
    return out;
}

void write_paths(std::ostream& out, PathFormat format, const PathOutputContext& context, const Point& source,
                 const Point& receiver, const std::vector<ConnectedPath>& paths) {
    switch (format) {
        case PathFormat::text: out << single_text(context, source, receiver, paths, nullptr); break;
        case PathFormat::csv: out << single_csv(context, source, receiver, paths, nullptr); break;
        case PathFormat::json: out << single_json(context, source, receiver, paths, nullptr); break;
    }
}

void write_paths(std::ostream& out, PathFormat format, const PathOutputContext& context, const Point& source,
                 const Point& receiver, const PairPaths& result) {
    const PairPaths* spreads = context.uncertainty ? &result : nullptr;
    switch (format) {
        case PathFormat::text: out << single_text(context, source, receiver, result.paths, spreads); break;
        case PathFormat::csv: out << single_csv(context, source, receiver, result.paths, spreads); break;
        case PathFormat::json: out << single_json(context, source, receiver, result.paths, spreads); break;
    }
}

void write_uncertainty_report_json(JsonWriter& json, const UncertaintyReport& report) {
    json.key("uncertainty").begin_object();
    json.field("method", report.method_name());
    if (report.method == PropagationMethod::monte_carlo) {
        json.field("samples", report.samples);
        json.field("seed", static_cast<unsigned long>(report.seed));
    } else {
        json.field("step_sigma", report.step_sigma);
    }
    json.field("models", report.perturbed_models() + 1);  // per propagation, the nominal one included
    json.field("components", report.components);
    json.field("uncertainty", report.description);
    json.end_object();
}

std::string format_paths(PathFormat format, const PathOutputContext& context, const Point& source,
                         const Point& receiver, const std::vector<ConnectedPath>& paths) {
    return output::render_to_string(
        [&](std::ostream& out) { write_paths(out, format, context, source, receiver, paths); });
}

// ---- batches --------------------------------------------------------------------------------

BatchFormatter::BatchFormatter(PathFormat format, PathOutputContext context, const std::vector<PathPair>& pairs)
    : format_(format), context_(std::move(context)) {
    for (const PathPair& p : pairs) name_width_ = std::max(name_width_, p.name.size());
    name_width_ = std::min<std::size_t>(name_width_, 40);  // longer names push their row out rather than every row
}

std::string BatchFormatter::begin() const {
    Buffer out;
    switch (format_) {
        case PathFormat::text:
            fmt::format_to(fmt::appender(out), "model:  {}\nsolver: {}\n", model_label(context_),
                           describe_solver(context_.solver_name));
            if (context_.uncertainty)
                fmt::format_to(fmt::appender(out), "uncertainty: {}\n", context_.uncertainty->summary());
            fmt::format_to(fmt::appender(out), "\n{:>6}  {:<{}}  ", "line", "name", name_width_);
            text_heading(out, context_.uncertainty.has_value());
            put(out, '\n');
            break;
        case PathFormat::csv:
            csv_uncertainty_comment(out, context_);
            put(out, "input_line,name,");
            put(out, csv_path_columns);
            if (context_.uncertainty) put(out, csv_spread_columns);
            put(out, ",error\n");
            break;
        case PathFormat::json:
        {
            // The head of the document, left open at the array of pairs that the pieces fill.
            JsonWriter json;
            json.begin_object();
            json_context_members(json, context_);
            json.key("pairs");
            put(out, json.str());
            put(out, '[');
        }
            break;
    }
    return fmt::to_string(out);
}

void BatchFormatter::append_pair(std::string& text, std::size_t index, const PathPair& pair,
                                 const PairPaths& result) const {
    const std::string& error = pair.error.empty() ? result.error : pair.error;
    const bool with_spreads = context_.uncertainty.has_value();
    const PairPaths* spreads = with_spreads && error.empty() ? &result : nullptr;
    Buffer out;
    switch (format_) {
        case PathFormat::text: {
            const auto head = [&] {
                fmt::format_to(fmt::appender(out), FMT_COMPILE("{:>6}  "), pair.input_line);
                put(out, pair.name);
                put_repeated(out, pair.name.size() < name_width_ ? name_width_ - pair.name.size() : 0, ' ');
                put(out, "  ");
            };
            if (!error.empty()) {
                head();
                fmt::format_to(fmt::appender(out), "{:>4}  error: {}\n", "-", error);
            } else if (result.paths.empty()) {
                head();
                fmt::format_to(fmt::appender(out), "{:>4}  {:<11}  (no path: the receiver is in the shadow zone)\n", "-",
                               "none");
            } else {
                for (std::size_t i = 0; i < result.paths.size(); ++i) {
                    head();
                    if (spreads) text_path(out, i + 1, result.paths[i], &spreads->spreads.at(i), spreads->spread_models);
                    else text_path(out, i + 1, result.paths[i]);
                    put(out, '\n');
                }
            }
            break;
        }
        case PathFormat::csv: {
            const auto head = [&] {
                integer(out, pair.input_line);
                put(out, ',');
                csv_text(out, pair.name);
                put(out, ',');
            };
            const Geometry g = geometry(pair.source, pair.receiver);
            if (!error.empty()) {
                head();
                put_repeated(out, csv_path_column_count + (with_spreads ? csv_spread_column_count : 0), ',');
                csv_text(out, error);
                put(out, '\n');
            } else if (result.paths.empty()) {
                head();
                csv_no_path(out, g);
                if (with_spreads) put_repeated(out, csv_spread_column_count, ',');
                put(out, ",\n");
            } else {
                for (std::size_t i = 0; i < result.paths.size(); ++i) {
                    head();
                    csv_path(out, i + 1, result.paths[i], g);
                    if (spreads) csv_spread(out, spreads->spreads.at(i), spreads->spread_models);
                    put(out, ",\n");
                }
            }
            break;
        }
        case PathFormat::json: {
            JsonWriter json(false);
            json.begin_object();
            json.field("input_line", pair.input_line);
            json.field("name", pair.name);
            if (!error.empty()) json.field("error", error);
            else json_pair_members(json, pair.source, pair.receiver, result.paths, spreads);
            json.end_object();
            put(out, index == 0 ? "\n    " : ",\n    ");
            put(out, json.str());
            break;
        }
    }
    text.append(out.data(), out.size());
}

std::string BatchFormatter::end(std::size_t pairs, std::size_t failed) const {
    switch (format_) {
        case PathFormat::text:
            return fmt::format("\n{} pair{}, {} failed.\n{}{}", pairs, pairs == 1 ? "" : "s", failed, text_notes,
                               context_.uncertainty ? text_spread_notes : std::string_view());
        case PathFormat::csv: return {};
        case PathFormat::json:
            return fmt::format("{}],\n  \"pairs_failed\": {}\n}}\n", pairs == 0 ? "" : "\n  ", failed);
    }
    return {};
}

}  // namespace firnray
