#include "output/locate_output.hpp"

#include <cmath>
#include <limits>
#include <string>

#include <fmt/format.h>

#include "io/csv_writer.hpp"
#include "io/json_writer.hpp"
#include "output/model_json.hpp"
#include "output/path_output.hpp"
#include "output/text_sink.hpp"

namespace firnray {

namespace {

const char* kind_name(const AssignedPulse& p) { return p.matched ? to_string(p.kind) : "none"; }

// "A1:direct:+0.123;A1:reflected:-0.051;…": the channel, the path chosen and the residual (ns).
std::string pulses_summary(const SourceFit& fit, const Station& station) {
    std::string text;
    for (const AssignedPulse& p : fit.pulses) {
        if (!text.empty()) text += ';';
        text += station.receivers[p.channel].name + ':' + kind_name(p);
        if (p.matched) text += fmt::format(":{:+.3f}", require_finite(p.residual_ns, "residual_ns"));
    }
    return text;
}

std::string alternatives_summary(const EventFit& fit) {
    std::string text;
    for (const SourceFit& a : fit.alternatives) {
        if (!text.empty()) text += ';';
        text += fmt::format("{:.3f} {:.3f} {:.3f} {:.3f}", require_finite(a.position.x, "alternative x_m"),
                            require_finite(a.position.y, "alternative y_m"), require_finite(a.position.z, "alternative z_m"),
                            require_finite(a.chi2, "alternative chi2"));
    }
    return text;
}

void write_fit_members(JsonWriter& json, const SourceFit& fit, const Station& station) {
    json.field("x_m", fit.position.x).field("y_m", fit.position.y).field("z_m", fit.position.z);
    json.field("emission_time_ns", fit.emission_time_ns);
    json.field("chi2", fit.chi2).field("ndof", fit.ndof);
    json.key("covariance_m2").begin_array();
    for (const auto& row : fit.covariance_m2) {
        json.begin_array();
        for (double v : row) json.value(v);
        json.end_array();
    }
    json.end_array();
    const SourceView& v = fit.view;
    json.field("distance_m", v.distance_m).field("sigma_distance_m", v.sigma_distance_m);
    json.field("depth_m", v.depth_m).field("sigma_depth_m", v.sigma_depth_m);
    json.field("zenith_deg", v.zenith_deg).field("sigma_zenith_deg", v.sigma_zenith_deg);
    json.field("azimuth_deg", v.azimuth_deg).field("sigma_azimuth_deg", v.sigma_azimuth_deg);
    json.field("unmatched_pulses", fit.unmatched_pulses);
    json.key("pulses").begin_array();
    for (const AssignedPulse& p : fit.pulses) {
        json.begin_object();
        json.field("channel", station.receivers[p.channel].name);
        json.field("input_line", p.line);
        json.field("time_ns", p.time_ns).field("sigma_ns", p.sigma_ns);
        json.field("kind", kind_name(p));
        if (p.matched) {
            json.field("path", p.path_rank).field("residual_ns", p.residual_ns);
        } else {
            json.key("path").null();
            json.key("residual_ns").null();
        }
        json.end_object();
    }
    json.end_array();
}

constexpr double absent_sigma = std::numeric_limits<double>::quiet_NaN();

std::optional<double> defined(double v) { return std::isfinite(v) ? std::optional(v) : std::nullopt; }

// The members of an event's profile part (after those of its nominal fit).
void write_profile_members(JsonWriter& json, const ProfilePositionSpread& spread) {
    json.key("covariance_profile_m2").begin_array();
    for (const auto& row : spread.covariance_m2) {
        json.begin_array();
        for (double v : row) json.value(defined(v));
        json.end_array();
    }
    json.end_array();
    const auto view_members = [&](const char* part) {
        const SourceView* v = spread.defined ? (std::string_view(part) == "profile" ? &spread.profile : &spread.combined)
                                             : nullptr;
        json.field(fmt::format("sigma_distance_{}_m", part), v ? std::optional(v->sigma_distance_m) : std::nullopt);
        json.field(fmt::format("sigma_depth_{}_m", part), v ? std::optional(v->sigma_depth_m) : std::nullopt);
        json.field(fmt::format("sigma_zenith_{}_deg", part), v ? v->sigma_zenith_deg : std::nullopt);
        json.field(fmt::format("sigma_azimuth_{}_deg", part), v ? v->sigma_azimuth_deg : std::nullopt);
    };
    view_members("profile");
    view_members("combined");
    json.field("profile_models", spread.models);
    json.field("profile_absent_models", spread.absent);
    json.field("profile_matching_changed", spread.matching_changed);
}

// "12.3 ± 0.4" with the same decimals for both; "12.3 ± ?" where the 1σ is undefined.
std::string with_sigma(double value, std::optional<double> sigma, int decimals) {
    if (!sigma) return fmt::format("{:.{}f} ± (undefined)", value, decimals);
    return fmt::format("{:.{}f} ± {:.{}f}", value, decimals, *sigma, decimals);
}

}  // namespace

void write_locate_json(std::ostream& out, const std::vector<EventFit>& fits, const SourceLocator& locator,
                       const FirnModel& model, const LocateProfileUncertainty* uncertainty) {
    JsonWriter json(out);
    const Station& station = locator.station();
    json.begin_object();
    json.key("model");
    write_model_json(json, model);
    json.key("station").begin_object();
    json.field("name", station.name).field("origin", station.origin);
    json.key("centre").begin_object();
    json.field("x_m", locator.centre().x).field("y_m", locator.centre().y).field("z_m", locator.centre().z);
    json.end_object();
    json.end_object();
    if (uncertainty) write_uncertainty_report_json(json, uncertainty->report);
    json.key("events").begin_array();
    for (std::size_t e = 0; e < fits.size(); ++e) {
        const EventFit& fit = fits[e];
        json.begin_object();
        json.field("event", fit.event).field("input_line", fit.first_line);
        if (!fit.best) {
            json.field("error", fit.error);
            json.end_object();
            continue;
        }
        write_fit_members(json, *fit.best, station);
        if (uncertainty && uncertainty->events.at(e)) write_profile_members(json, *uncertainty->events[e]);
        json.key("alternatives").begin_array();
        for (const SourceFit& a : fit.alternatives) {
            json.begin_object();
            write_fit_members(json, a, station);
            json.end_object();
        }
        json.end_array();
        json.end_object();
    }
    json.end_array();
    json.end_object();
    json.flush();
    out << '\n';
}

void write_locate_csv(std::ostream& out, const std::vector<EventFit>& fits, const SourceLocator& locator,
                      const LocateProfileUncertainty* uncertainty) {
    output::TextSink sink(out);
    if (uncertainty) {
        sink.put("# uncertainty: profile part, ");
        sink.put(uncertainty->report.summary());
        sink.end_row();
    }
    sink.put("event,input_line,x_m,y_m,z_m,emission_time_ns,chi2,ndof,distance_m,sigma_distance_m,depth_m,"
             "sigma_depth_m,zenith_deg,sigma_zenith_deg,azimuth_deg,sigma_azimuth_deg,cov_xx_m2,cov_xy_m2,cov_xz_m2,"
             "cov_yy_m2,cov_yz_m2,cov_zz_m2");
    // 6 covariances, 8 sigmas, 3 counts
    constexpr std::size_t profile_columns = 17;
    if (uncertainty)
        sink.put(",cov_profile_xx_m2,cov_profile_xy_m2,cov_profile_xz_m2,cov_profile_yy_m2,cov_profile_yz_m2,"
                 "cov_profile_zz_m2,sigma_distance_profile_m,sigma_depth_profile_m,sigma_zenith_profile_deg,"
                 "sigma_azimuth_profile_deg,sigma_distance_combined_m,sigma_depth_combined_m,"
                 "sigma_zenith_combined_deg,sigma_azimuth_combined_deg,profile_models,profile_absent_models,"
                 "profile_matching_changed");
    sink.put(",pulses,alternatives,error");
    sink.end_row();
    auto& b = sink.buffer();
    for (std::size_t e = 0; e < fits.size(); ++e) {
        const EventFit& fit = fits[e];
        append_csv_field(b, fit.event);
        fmt::format_to(std::back_inserter(b), ",{}", fit.first_line);
        if (!fit.best) {
            // Every column up to the error is empty: 20 numbers, pulses and alternatives.
            constexpr std::string_view empty_fields = ",,,,,,,,,,,,,,,,,,,,,,,";
            b.append(empty_fields.data(), empty_fields.data() + empty_fields.size());
            if (uncertainty) b.append(std::string(profile_columns, ','));
            append_csv_field(b, fit.error);
            sink.end_row();
            continue;
        }
        const SourceFit& f = *fit.best;
        const SourceView& v = f.view;
        const auto number = [&](double value, const char* name) {
            fmt::format_to(std::back_inserter(b), ",{}", require_finite(value, name));
        };
        const auto optional = [&](std::optional<double> value, const char* name) {
            b.push_back(',');
            if (value) fmt::format_to(std::back_inserter(b), "{}", require_finite(*value, name));
        };
        number(f.position.x, "x_m");
        number(f.position.y, "y_m");
        number(f.position.z, "z_m");
        number(f.emission_time_ns, "emission_time_ns");
        number(f.chi2, "chi2");
        fmt::format_to(std::back_inserter(b), ",{}", f.ndof);
        number(v.distance_m, "distance_m");
        number(v.sigma_distance_m, "sigma_distance_m");
        number(v.depth_m, "depth_m");
        number(v.sigma_depth_m, "sigma_depth_m");
        number(v.zenith_deg, "zenith_deg");
        optional(v.sigma_zenith_deg, "sigma_zenith_deg");
        number(v.azimuth_deg, "azimuth_deg");
        optional(v.sigma_azimuth_deg, "sigma_azimuth_deg");
        const auto& c = f.covariance_m2;
        number(c[0][0], "cov_xx_m2");
        number(c[0][1], "cov_xy_m2");
        number(c[0][2], "cov_xz_m2");
        number(c[1][1], "cov_yy_m2");
        number(c[1][2], "cov_yz_m2");
        number(c[2][2], "cov_zz_m2");
        if (uncertainty) {
            const auto& spread = uncertainty->events.at(e);
            const auto maybe = [&](double value) {
                b.push_back(',');
                if (spread && std::isfinite(value)) fmt::format_to(std::back_inserter(b), "{}", value);
            };
            const PositionCovariance& p = spread ? spread->covariance_m2 : PositionCovariance{};
            for (const auto& [i, j] : {std::pair{0, 0}, {0, 1}, {0, 2}, {1, 1}, {1, 2}, {2, 2}}) maybe(p[i][j]);
            if (spread && spread->defined) {
                for (const SourceView* v : {&spread->profile, &spread->combined}) {
                    maybe(v->sigma_distance_m);
                    maybe(v->sigma_depth_m);
                    maybe(v->sigma_zenith_deg.value_or(absent_sigma));
                    maybe(v->sigma_azimuth_deg.value_or(absent_sigma));
                }
            } else {
                b.append(std::string_view(",,,,,,,,"));  // the 8 sigmas cannot be given
            }
            if (spread)
                fmt::format_to(std::back_inserter(b), ",{},{},{}", spread->models, spread->absent,
                               spread->matching_changed);
            else
                b.append(std::string_view(",,,"));
        }
        b.push_back(',');
        append_csv_field(b, pulses_summary(f, locator.station()));
        b.push_back(',');
        append_csv_field(b, alternatives_summary(fit));
        b.push_back(',');
        sink.end_row();
    }
    sink.finish();
}

void write_locate_text(std::ostream& out, const std::vector<EventFit>& fits, const SourceLocator& locator,
                       const FirnModel& model, const LocateProfileUncertainty* uncertainty) {
    output::TextSink sink(out);
    auto& b = sink.buffer();
    const Point& centre = locator.centre();
    fmt::format_to(std::back_inserter(b),
                   "# model: {}; station: {} (centre {:.2f}, {:.2f}, {:.2f} m); 1σ from (Jᵀ W J)⁻¹, not rescaled",
                   model.name, locator.station().name, centre.x, centre.y, centre.z);
    sink.end_row();
    if (uncertainty) {
        fmt::format_to(std::back_inserter(b),
                       "# profile part of the position 1σ (refits in perturbed models, added to the timing part for "
                       "'combined'): {}",
                       uncertainty->report.summary());
        sink.end_row();
    }
    for (std::size_t e = 0; e < fits.size(); ++e) {
        const EventFit& fit = fits[e];
        fmt::format_to(std::back_inserter(b), "{} (line {}): ", fit.event, fit.first_line);
        if (!fit.best) {
            fmt::format_to(std::back_inserter(b), "error: {}", fit.error);
            sink.end_row();
            continue;
        }
        const SourceFit& f = *fit.best;
        const SourceView& v = f.view;
        const auto sigma = [&](int i) { return std::sqrt(std::max(f.covariance_m2[i][i], 0.0)); };
        fmt::format_to(std::back_inserter(b),
                       "x {} m, y {} m, z {} m; distance {} m, depth {} m, zenith {}°, azimuth {}°; "
                       "emission {:.3f} ns; chi2 {:.2f} / ndof {}; paths {}",
                       with_sigma(require_finite(f.position.x, "x_m"), sigma(0), 2),
                       with_sigma(require_finite(f.position.y, "y_m"), sigma(1), 2),
                       with_sigma(require_finite(f.position.z, "z_m"), sigma(2), 2),
                       with_sigma(require_finite(v.distance_m, "distance_m"), v.sigma_distance_m, 2),
                       with_sigma(require_finite(v.depth_m, "depth_m"), v.sigma_depth_m, 2),
                       with_sigma(require_finite(v.zenith_deg, "zenith_deg"), v.sigma_zenith_deg, 3),
                       with_sigma(require_finite(v.azimuth_deg, "azimuth_deg"), v.sigma_azimuth_deg, 3),
                       require_finite(f.emission_time_ns, "emission_time_ns"), require_finite(f.chi2, "chi2"), f.ndof,
                       pulses_summary(f, locator.station()));
        if (!fit.alternatives.empty())
            fmt::format_to(std::back_inserter(b), "; other minima (x y z chi2): {}", alternatives_summary(fit));
        if (uncertainty && uncertainty->events.at(e)) {
            const ProfilePositionSpread& spread = *uncertainty->events[e];
            if (spread.defined) {
                const auto angle = [](std::optional<double> s) {
                    return s ? fmt::format("{:.3f}", *s) : std::string("(undefined)");
                };
                for (const auto& [label, v] : {std::pair{"profile part", &spread.profile}, {"combined", &spread.combined}})
                    fmt::format_to(std::back_inserter(b), "; {}: distance ± {:.2f} m, depth ± {:.2f} m, zenith ± {}°, "
                                   "azimuth ± {}°",
                                   label, v->sigma_distance_m, v->sigma_depth_m, angle(v->sigma_zenith_deg),
                                   angle(v->sigma_azimuth_deg));
            } else {
                fmt::format_to(std::back_inserter(b), "; profile part: not given (the refit failed in a perturbed model)");
            }
            fmt::format_to(std::back_inserter(b), " ({} models, refit failed in {}, other path matching in {})",
                           spread.models, spread.absent, spread.matching_changed);
        }
        sink.end_row();
    }
    sink.finish();
}

}  // namespace firnray
