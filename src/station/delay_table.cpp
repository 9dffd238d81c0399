#include "station/delay_table.hpp"

#include <cmath>
#include <iterator>

#include <fmt/format.h>

#include "core/constants.hpp"
#include "core/errors.hpp"
#include "core/parallel.hpp"
#include "io/csv_reader.hpp"
#include "io/json_writer.hpp"

namespace firnray {

std::vector<SourceDelays> compute_delays(const RaySolver& solver, const std::vector<Receiver>& receivers,
                                         const std::vector<DelaySource>& sources, const DelayOptions& options) {
    if (receivers.empty()) throw DataInputError("no receivers");
    if (options.reference >= receivers.size()) throw DataInputError("the reference receiver is not in the station");
    std::vector<SourceDelays> out(sources.size());
    parallel_for(sources.size(), options.threads, options.control, [&](std::size_t i) {
        SourceDelays& result = out[i];
        if (!sources[i].error.empty()) {
            result.error = sources[i].error;
            return;
        }
        try {
            const Point& s = sources[i].position;
            const double n_source = solver.model().index_at(s.z);
            for (const Receiver& r : receivers) {
                ReceiverArrivals arrivals;
                arrivals.paths = find_paths(solver, s, Point{r.x_m, r.y_m, r.z_m}, options.paths);
                for (const ConnectedPath& p : arrivals.paths) {
                    const double slowness = n_source / speed_of_light;
                    const double horizontal = std::sin(p.launch_zenith_rad);
                    arrivals.gradients.push_back({-slowness * horizontal * std::cos(p.azimuth_rad),
                                                  -slowness * horizontal * std::sin(p.azimuth_rad),
                                                  -slowness * std::cos(p.launch_zenith_rad)});
                }
                result.receivers.push_back(std::move(arrivals));
            }
        } catch (const InputError& e) {
            result.receivers.clear();
            result.error = e.what();
        } catch (const NumericalError& e) {
            result.receivers.clear();
            result.error = std::string("numerical failure: ") + e.what();
        }
    });
    return out;
}

std::vector<DelaySource> read_delay_sources(const std::string& path) {
    const CsvTable table = read_csv(path);
    const std::size_t x = table.column("x_m"), z = table.column("z_m");
    const auto y = table.find_column("y_m");
    const auto name = table.find_column("name");
    std::vector<DelaySource> sources;
    for (const CsvRow& row : table.rows) {
        DelaySource source;
        source.input_line = row.line;
        try {
            source.name = name ? table.text(row, *name) : fmt::format("line {}", row.line);
            source.position.x = table.number(row, x);
            source.position.z = table.number(row, z);
            if (y) source.position.y = table.number(row, *y);
        } catch (const InputError& e) {
            source.error = e.what();
            if (source.name.empty()) source.name = fmt::format("line {}", row.line);
        }
        sources.push_back(std::move(source));
    }
    if (sources.empty()) throw DataInputError("the source file has a header but no sources", {path, table.header_line, ""});
    return sources;
}

namespace {

std::optional<double> first_time(const ReceiverArrivals& a) {
    if (a.paths.empty()) return std::nullopt;
    return a.paths.front().time_s;
}

// The path of the same kind and rank among that kind (first refracted, second refracted, ...).
std::optional<double> same_kind_time(const ReceiverArrivals& at, const ReceiverArrivals& of, std::size_t index) {
    const PathKind kind = of.paths[index].kind;
    std::size_t rank = 0;
    for (std::size_t k = 0; k < index; ++k) rank += of.paths[k].kind == kind;
    for (const ConnectedPath& p : at.paths)
        if (p.kind == kind && rank-- == 0) return p.time_s;
    return std::nullopt;
}

void field(fmt::memory_buffer& out, std::optional<double> value, double scale = seconds_to_ns) {
    out.push_back(',');
    if (value && std::isfinite(*value)) fmt::format_to(std::back_inserter(out), "{:.6f}", *value * scale);
}

std::string csv_text(const std::string& text) {
    if (text.find_first_of(",\"\n") == std::string::npos) return text;
    std::string quoted = "\"";
    for (char c : text) quoted += c == '"' ? std::string("\"\"") : std::string(1, c == '\n' ? ' ' : c);
    return quoted + "\"";
}

}  // namespace

std::string delay_table_csv(const std::vector<DelaySource>& sources, const std::vector<SourceDelays>& delays,
                            const std::vector<Receiver>& receivers, const DelayOptions& options, bool derivatives) {
    fmt::memory_buffer out;
    fmt::format_to(std::back_inserter(out),
                   "source,source_line,receiver,path,kind,time_ns,minus_reference_same_kind_ns,first_minus_reference_first_ns,"
                   "second_minus_first_ns,launch_zenith_deg,arrival_zenith_deg");
    if (derivatives) fmt::format_to(std::back_inserter(out), ",dt_dx_ns_per_m,dt_dy_ns_per_m,dt_dz_ns_per_m");
    fmt::format_to(std::back_inserter(out), ",error\n");
    const std::size_t extra = derivatives ? 3 : 0;
    for (std::size_t i = 0; i < sources.size(); ++i) {
        const std::string head = fmt::format("{},{}", csv_text(sources[i].name), sources[i].input_line);
        if (!delays[i].error.empty()) {
            fmt::format_to(std::back_inserter(out), "{},,,,,,,,,{},{}\n", head, std::string(extra, ','),
                           csv_text(delays[i].error));
            continue;
        }
        const ReceiverArrivals& reference = delays[i].receivers[options.reference];
        for (std::size_t k = 0; k < receivers.size(); ++k) {
            const ReceiverArrivals& here = delays[i].receivers[k];
            const auto first = first_time(here), reference_first = first_time(reference);
            std::optional<double> first_vs_reference, second_minus_first;
            if (first && reference_first) first_vs_reference = *first - *reference_first;
            if (here.paths.size() >= 2) second_minus_first = here.paths[1].time_s - here.paths[0].time_s;
            if (here.paths.empty()) {  // the shadow zone: say so in one row
                fmt::format_to(std::back_inserter(out), "{},{},0,none,,,,,,{},\n", head, csv_text(receivers[k].name),
                               std::string(extra, ','));
                continue;
            }
            for (std::size_t p = 0; p < here.paths.size(); ++p) {
                const ConnectedPath& path = here.paths[p];
                fmt::format_to(std::back_inserter(out), "{},{},{},{}", head, csv_text(receivers[k].name), p + 1,
                               to_string(path.kind));
                field(out, path.time_s);
                std::optional<double> vs_reference;
                if (const auto ref = same_kind_time(reference, here, p)) vs_reference = path.time_s - *ref;
                field(out, vs_reference);
                field(out, first_vs_reference);
                field(out, second_minus_first);
                fmt::format_to(std::back_inserter(out), ",{:.6f},{:.6f}", rad_to_deg(path.launch_zenith_rad),
                               rad_to_deg(path.arrival_zenith_rad));
                if (derivatives) {
                    const auto& g = here.gradients[p];
                    fmt::format_to(std::back_inserter(out), ",{:.9f},{:.9f},{:.9f}", g.dx * seconds_to_ns,
                                   g.dy * seconds_to_ns, g.dz * seconds_to_ns);
                }
                fmt::format_to(std::back_inserter(out), ",\n");
            }
        }
    }
    return fmt::to_string(out);
}

std::string delay_table_json(const std::vector<DelaySource>& sources, const std::vector<SourceDelays>& delays,
                             const std::vector<Receiver>& receivers, const DelayOptions& options, bool derivatives,
                             const std::string& model_name) {
    JsonWriter json;
    json.begin_object();
    json.field("model", model_name);
    json.field("reference_receiver", receivers[options.reference].name);
    json.key("sources").begin_array();
    for (std::size_t i = 0; i < sources.size(); ++i) {
        json.begin_object();
        json.field("name", sources[i].name);
        json.field("input_line", sources[i].input_line);
        if (!delays[i].error.empty()) {
            json.field("error", delays[i].error);
            json.end_object();
            continue;
        }
        json.key("position_m").begin_array().value(sources[i].position.x).value(sources[i].position.y).value(sources[i].position.z).end_array();
        const ReceiverArrivals& reference = delays[i].receivers[options.reference];
        json.key("receivers").begin_array();
        for (std::size_t k = 0; k < receivers.size(); ++k) {
            const ReceiverArrivals& here = delays[i].receivers[k];
            json.begin_object();
            json.field("receiver", receivers[k].name);
            const auto first = first_time(here), reference_first = first_time(reference);
            json.key("first_minus_reference_first_ns");
            if (first && reference_first) json.value((*first - *reference_first) * seconds_to_ns);
            else json.null();
            json.key("second_minus_first_ns");
            if (here.paths.size() >= 2) json.value((here.paths[1].time_s - here.paths[0].time_s) * seconds_to_ns);
            else json.null();
            json.key("paths").begin_array();
            for (std::size_t p = 0; p < here.paths.size(); ++p) {
                const ConnectedPath& path = here.paths[p];
                json.begin_object();
                json.field("kind", to_string(path.kind));
                json.field("time_ns", path.time_s * seconds_to_ns);
                json.key("minus_reference_same_kind_ns");
                if (const auto ref = same_kind_time(reference, here, p)) json.value((path.time_s - *ref) * seconds_to_ns);
                else json.null();
                json.field("launch_zenith_deg", rad_to_deg(path.launch_zenith_rad));
                json.field("arrival_zenith_deg", rad_to_deg(path.arrival_zenith_rad));
                if (derivatives) {
                    const auto& g = here.gradients[p];
                    json.key("dt_dsource_ns_per_m").begin_array().value(g.dx * seconds_to_ns).value(g.dy * seconds_to_ns).value(g.dz * seconds_to_ns).end_array();
                }
                json.end_object();
            }
            json.end_array();
            json.end_object();
        }
        json.end_array();
        json.end_object();
    }
    json.end_array();
    json.end_object();
    return json.str() + "\n";
}

}  // namespace firnray
