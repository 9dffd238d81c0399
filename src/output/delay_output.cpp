#include "output/delay_output.hpp"

#include <cmath>
#include <optional>
#include <stdexcept>

#include <fmt/format.h>

#include "core/constants.hpp"
#include "io/csv_writer.hpp"
#include "io/json_writer.hpp"
#include "output/model_json.hpp"
#include "output/path_output.hpp"
#include "output/text_sink.hpp"

namespace firnray {

namespace {

using output::render_to_string;

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

// A separator and a fixed-point number, refused when not finite.
void put_fixed(output::TextSink& out, double value, int decimals, std::string_view column) {
    fmt::format_to(fmt::appender(out.buffer()), ",{:.{}f}", require_finite(value, column), decimals);
}

// A separator and a time in ns, or an empty field when it is absent.
void put_time(output::TextSink& out, std::optional<double> seconds, std::string_view column) {
    if (seconds) put_fixed(out, *seconds * seconds_to_ns, 6, column);
    else out.put(',');
}

void put_commas(output::TextSink& out, std::size_t count) {
    for (std::size_t i = 0; i < count; ++i) out.put(',');
}

constexpr std::size_t sigma_column_count = 6;

// A separator and a 1σ in ns, or an empty field when none can be given.
void put_sigma(output::TextSink& out, double seconds, std::string_view column) {
    out.put(',');
    if (std::isfinite(seconds)) fmt::format_to(fmt::appender(out.buffer()), "{:.9g}", require_finite(seconds * seconds_to_ns, column));
}

// A 1σ in ns for JSON: null when none can be given.
std::optional<double> sigma_ns(double seconds) {
    return std::isfinite(seconds) ? std::optional(seconds * seconds_to_ns) : std::nullopt;
}

}  // namespace

DelayTableWriter::DelayTableWriter(std::ostream& out, DelayTableFormat format, const std::vector<Receiver>& receivers,
                                   const DelayOptions& options, bool derivatives)
    : out_(out), format_(format), receivers_(receivers), options_(options), derivatives_(derivatives), json_(out) {}

void DelayTableWriter::begin(const FirnModel* model) {
    if (format_ == DelayTableFormat::json) {
        if (model == nullptr) throw std::logic_error("DelayTableWriter: the JSON table needs its model");
        json_.begin_object();
        json_.key("model");
        write_model_json(json_, *model);
        json_.field("reference_receiver", receivers_[options_.reference].name);
        if (uncertainty_) write_uncertainty_report_json(json_, *uncertainty_);
        json_.key("sources").begin_array();
        return;
    }
    output::TextSink out(out_);
    if (uncertainty_) {
        out.put("# uncertainty: ");
        out.put(uncertainty_->summary());
        out.end_row();
    }
    out.put("name,input_line,receiver,path,kind,time_ns,minus_reference_same_kind_ns,first_minus_reference_first_ns,"
            "second_minus_first_ns,launch_zenith_deg,arrival_zenith_deg");
    if (derivatives_) out.put(",dt_dx_ns_per_m,dt_dy_ns_per_m,dt_dz_ns_per_m");
    if (uncertainty_)
        out.put(",time_sigma_ns,minus_reference_same_kind_sigma_ns,first_minus_reference_first_sigma_ns,"
                "second_minus_first_sigma_ns,sigma_models,sigma_absent_models");
    out.put(",events,error");
    out.end_row();
    out.finish();
}

void DelayTableWriter::finish() {
    if (format_ == DelayTableFormat::json) {
        json_.end_array();
        json_.end_object();
        json_.flush();
        out_ << '\n';
    }
}

void DelayTableWriter::add(const std::vector<DelaySource>& sources, const std::vector<SourceDelays>& delays) {
    if (format_ == DelayTableFormat::json) {
        add_json(sources, delays);
        return;
    }
    const std::vector<Receiver>& receivers = receivers_;
    const DelayOptions& options = options_;
    const bool derivatives = derivatives_;
    output::TextSink out(out_);
    const bool sigmas = uncertainty_.has_value();
    // the derivatives, the σ columns and events
    const std::size_t extra = (derivatives ? 3 : 0) + (sigmas ? sigma_column_count : 0) + 1;
    for (std::size_t i = 0; i < sources.size(); ++i) {
        const auto head = [&] {
            append_csv_field(out.buffer(), sources[i].name);
            fmt::format_to(fmt::appender(out.buffer()), ",{}", sources[i].input_line);
        };
        if (!delays[i].error.empty()) {  // receiver .. arrival_zenith_deg and the derivatives stay empty
            head();
            put_commas(out, 9 + extra + 1);
            append_csv_field(out.buffer(), delays[i].error);
            out.end_row();
            continue;
        }
        const ReceiverArrivals& reference = delays[i].receivers[options.reference];
        for (std::size_t k = 0; k < receivers.size(); ++k) {
            const ReceiverArrivals& here = delays[i].receivers[k];
            const auto receiver_head = [&] {
                head();
                out.put(',');
                append_csv_field(out.buffer(), receivers[k].name);
            };
            if (!here.error.empty()) {  // a failed channel: path .. arrival_zenith_deg stay empty
                receiver_head();
                put_commas(out, 8 + extra + 1);
                append_csv_field(out.buffer(), here.error);
                out.end_row();
                continue;
            }
            const auto first = first_time(here), reference_first = first_time(reference);
            std::optional<double> first_vs_reference, second_minus_first;
            if (first && reference_first) first_vs_reference = *first - *reference_first;
            if (here.paths.size() >= 2) second_minus_first = here.paths[1].time_s - here.paths[0].time_s;
            if (here.paths.empty()) {  // the shadow zone: say so in one row
                receiver_head();
                out.put(",0,none,,,,,,");
                put_commas(out, extra + 1);
                out.end_row();
                continue;
            }
            for (std::size_t p = 0; p < here.paths.size(); ++p) {
                const ConnectedPath& path = here.paths[p];
                receiver_head();
                fmt::format_to(fmt::appender(out.buffer()), ",{},{}", p + 1, to_string(path.kind));
                put_time(out, path.time_s, "time_ns");
                std::optional<double> vs_reference;
                if (const auto ref = same_kind_time(reference, here, p)) vs_reference = path.time_s - *ref;
                put_time(out, vs_reference, "minus_reference_same_kind_ns");
                put_time(out, first_vs_reference, "first_minus_reference_first_ns");
                put_time(out, second_minus_first, "second_minus_first_ns");
                put_fixed(out, rad_to_deg(path.launch_zenith_rad), 6, "launch_zenith_deg");
                put_fixed(out, rad_to_deg(path.arrival_zenith_rad), 6, "arrival_zenith_deg");
                if (derivatives) {
                    const auto& g = here.gradients[p];
                    put_fixed(out, g.dx * seconds_to_ns, 9, "dt_dx_ns_per_m");
                    put_fixed(out, g.dy * seconds_to_ns, 9, "dt_dy_ns_per_m");
                    put_fixed(out, g.dz * seconds_to_ns, 9, "dt_dz_ns_per_m");
                }
                if (sigmas) {
                    const auto& spread = here.spreads.at(p);
                    put_sigma(out, spread.time_s, "time_sigma_ns");
                    put_sigma(out, spread.minus_reference_same_kind_s, "minus_reference_same_kind_sigma_ns");
                    put_sigma(out, here.first_minus_reference_first_sigma_s, "first_minus_reference_first_sigma_ns");
                    put_sigma(out, here.second_minus_first_sigma_s, "second_minus_first_sigma_ns");
                    fmt::format_to(fmt::appender(out.buffer()), ",{},{}", delays[i].spread_models, spread.absent);
                }
                out.put(',');
                append_csv_field(out.buffer(), format_events(path.events, 6));
                out.put(',');
                out.end_row();
            }
        }
    }
    out.finish();
}


void DelayTableWriter::add_json(const std::vector<DelaySource>& sources, const std::vector<SourceDelays>& delays) {
    const std::vector<Receiver>& receivers = receivers_;
    const DelayOptions& options = options_;
    const bool derivatives = derivatives_;
    JsonWriter& json = json_;
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
        if (uncertainty_) json.field("sigma_models", delays[i].spread_models);
        const ReceiverArrivals& reference = delays[i].receivers[options.reference];
        json.key("receivers").begin_array();
        for (std::size_t k = 0; k < receivers.size(); ++k) {
            const ReceiverArrivals& here = delays[i].receivers[k];
            json.begin_object();
            json.field("receiver", receivers[k].name);
            if (!here.error.empty()) {
                json.field("error", here.error);
                json.end_object();
                continue;
            }
            const auto first = first_time(here), reference_first = first_time(reference);
            json.key("first_minus_reference_first_ns");
            if (first && reference_first) json.value((*first - *reference_first) * seconds_to_ns);
            else json.null();
            json.key("second_minus_first_ns");
            if (here.paths.size() >= 2) json.value((here.paths[1].time_s - here.paths[0].time_s) * seconds_to_ns);
            else json.null();
            if (uncertainty_) {
                json.field("first_minus_reference_first_sigma_ns", sigma_ns(here.first_minus_reference_first_sigma_s));
                json.field("second_minus_first_sigma_ns", sigma_ns(here.second_minus_first_sigma_s));
            }
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
                if (uncertainty_) {
                    const auto& spread = here.spreads.at(p);
                    json.field("time_sigma_ns", sigma_ns(spread.time_s));
                    json.field("minus_reference_same_kind_sigma_ns", sigma_ns(spread.minus_reference_same_kind_s));
                    json.field("sigma_absent_models", spread.absent);
                }
                json.key("events").begin_array();
                for (const PathEvent& e : path.events)
                    json.begin_object().field("kind", to_string(e.kind)).field("offset_m", e.offset_m).field("z_m", e.z_m).end_object();
                json.end_array();
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
    json.flush();
}

void write_delay_table_csv(std::ostream& out, const std::vector<DelaySource>& sources,
                           const std::vector<SourceDelays>& delays, const std::vector<Receiver>& receivers,
                           const DelayOptions& options, bool derivatives) {
    DelayTableWriter writer(out, DelayTableFormat::csv, receivers, options, derivatives);
    writer.begin(nullptr);
    writer.add(sources, delays);
    writer.finish();
}

std::string delay_table_csv(const std::vector<DelaySource>& sources, const std::vector<SourceDelays>& delays,
                            const std::vector<Receiver>& receivers, const DelayOptions& options, bool derivatives) {
    return render_to_string(
        [&](std::ostream& out) { write_delay_table_csv(out, sources, delays, receivers, options, derivatives); });
}

void write_delay_table_json(std::ostream& out, const std::vector<DelaySource>& sources,
                            const std::vector<SourceDelays>& delays, const std::vector<Receiver>& receivers,
                            const DelayOptions& options, bool derivatives, const FirnModel& model) {
    DelayTableWriter writer(out, DelayTableFormat::json, receivers, options, derivatives);
    writer.begin(&model);
    writer.add(sources, delays);
    writer.finish();
}

std::string delay_table_json(const std::vector<DelaySource>& sources, const std::vector<SourceDelays>& delays,
                             const std::vector<Receiver>& receivers, const DelayOptions& options, bool derivatives,
                             const FirnModel& model) {
    return render_to_string([&](std::ostream& out) {
        write_delay_table_json(out, sources, delays, receivers, options, derivatives, model);
    });
}

}  // namespace firnray
