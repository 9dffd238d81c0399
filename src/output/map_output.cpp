#include "output/map_output.hpp"

#include <algorithm>
#include <cmath>
#include <span>
#include <iterator>
#include <limits>
#include <optional>

#include <fmt/format.h>

#include "core/errors.hpp"
#include "io/csv_writer.hpp"
#include "io/json_writer.hpp"
#include "output/model_json.hpp"
#include "output/text_sink.hpp"
#include "plot/figure.hpp"

namespace firnray {

MapColouring parse_map_colouring(const std::string& text) {
    if (text == "kinds") return MapColouring::kinds;
    if (text == "receivers") return MapColouring::receivers;
    if (text == "time-between") return MapColouring::time_between;
    if (text == "first-time") return MapColouring::first_time;
    if (text == "amplitude") return MapColouring::amplitude;
    throw DataInputError(fmt::format("'{}' is not a map colouring (kinds, receivers, time-between, first-time, amplitude)", text),
                         {"", 0, "colour-by"});
}

std::string kinds_label(std::uint8_t kinds) {
    std::string out;
    if (kinds & kind_direct) out += "direct";
    if (kinds & kind_refracted) out += out.empty() ? "refracted" : "+refracted";
    if (kinds & kind_reflected) out += out.empty() ? "reflected" : "+reflected";
    if (kinds & kind_refracted_below) out += out.empty() ? "refracted-below" : "+refracted-below";
    if (kinds & kind_ducted) out += out.empty() ? "ducted" : "+ducted";
    if (kinds & kind_bottom) out += out.empty() ? "bottom" : "+bottom";
    return out.empty() ? "none" : out;
}

namespace {

using output::render_to_string;

// Six significant digits keep million-cell grids small; scans use more (volumes are compared).
// A value that is not finite is refused with the column's name.
void put_number(output::TextSink& out, double value, std::string_view column, int digits = 6) {
    fmt::format_to(fmt::appender(out.buffer()), "{:.{}g}", require_finite(value, column), digits);
}

// A value that may be legitimately absent: an empty field when it is.
void put_if(output::TextSink& out, bool present, double value, std::string_view column, int digits = 6) {
    if (present) put_number(out, value, column, digits);
}

// Whether a cell's values are defined (see VisibilityMap): a first time where any receiver sees
// the cell; a time between where the receiver with the earliest arrival has two paths; an
// amplitude unless every arrival is at a caustic, where ray theory gives none (NaN by design).
bool has_first_time(const MapCell& cell) { return cell.receivers_seeing > 0; }
bool has_time_between(const MapCell& cell) { return cell.paths >= 2; }
bool has_amplitude(const MapCell& cell) { return cell.receivers_seeing > 0 && !std::isnan(cell.amplitude_per_m); }

// Times between paths exist only where some cell has two paths.
bool has_times_between(const DepthScanRow& row) { return row.two_path_volume_m3 > 0.0; }

// What a map or scan left out on purpose (VisibilityMap::left_out), as a comment line before the
// header, so that a reader of the table sees it; nothing when every path was computed.
void put_left_out(output::TextSink& out, const std::vector<std::string>& left_out) {
    if (left_out.empty()) return;
    out.put("# left out: ");
    for (std::size_t k = 0; k < left_out.size(); ++k) {
        if (k > 0) out.put("; ");
        out.put(left_out[k]);
    }
    out.end_row();
}

// Categories of the "kinds" colouring.
enum KindCategory {
    cat_shadow,
    cat_too_few,
    cat_direct,
    cat_direct_refracted,
    cat_direct_reflected,
    cat_second_only,
    cat_three,
    cat_ducted_only,
    cat_bottom_only,
    cat_ducted_bottom_only,
    cat_with_ducted_or_bottom,
};

int kind_category(const VisibilityMap& map, const MapCell& cell) {
    if (cell.receivers_seeing == 0) return cat_shadow;
    if (!map.visible(cell)) return cat_too_few;
    // Positions that only ducted or only bottom-reflected paths reach: what ducts and the bottom
    // add to a map.
    constexpr std::uint8_t trapped = kind_ducted | kind_bottom;
    if (cell.kinds == kind_ducted) return cat_ducted_only;
    if (cell.kinds == kind_bottom) return cat_bottom_only;
    if (cell.kinds == trapped) return cat_ducted_bottom_only;
    if (cell.kinds & trapped) return cat_with_ducted_or_bottom;
    // A path turning below its lower end is a refracted path for this colouring.
    std::uint8_t kinds = cell.kinds;
    if (kinds & kind_refracted_below) kinds = static_cast<std::uint8_t>((kinds & ~kind_refracted_below) | kind_refracted);
    switch (kinds) {
        case kind_direct: return cat_direct;
        case kind_direct | kind_refracted: return cat_direct_refracted;
        case kind_direct | kind_reflected: return cat_direct_reflected;
        case kind_refracted:
        case kind_reflected:
        case kind_refracted | kind_reflected: return cat_second_only;
        default: return cat_three;
    }
}

plot::CellGrid cell_grid(const MapGrid& grid) {
    plot::CellGrid cells;
    for (int i = 0; i <= grid.distance_cells; ++i) cells.x_edges.push_back(grid.distance_min_m + i * grid.distance_step());
    for (int j = 0; j <= grid.depth_cells; ++j) cells.y_edges.push_back(grid.depth_min_m + j * grid.depth_step());
    return cells;
}

// "Monte Carlo, 100 draws, seed 20261203; 3 parameters (…)" or "linearised; …": for legends,
// where the whole summary would not fit.
std::string summary_method_label(const PropagationSummary& summary) {
    if (summary.method == PropagationMethod::monte_carlo)
        return fmt::format("Monte Carlo, {} draws, seed {}; {}", summary.samples, summary.seed, summary.uncertainty);
    return "linearised; " + summary.uncertainty;
}

// How the uncertainty was propagated, as a comment line before a table's header.
void put_uncertainty(output::TextSink& out, const PropagationSummary* summary) {
    if (summary == nullptr) return;
    out.put("# uncertainty: ");
    out.put(propagation_summary_text(*summary));
    out.end_row();
}

// A 1σ that can be given: finite (a propagation marks the others NaN).
bool has_sigma(double sigma) { return std::isfinite(sigma); }

// A band drawn as short segments between low[k] and high[k] (one per row of a map, or one per
// point of a curve): wide strokes of one opaque colour, so that neighbouring segments merge into
// a band without darkening where they overlap. Points where either end is NaN are left out.
void add_segments(plot::Figure& figure, std::span<const double> x_low, std::span<const double> x_high,
                  std::span<const double> y_low, std::span<const double> y_high, const plot::LineStyle& style) {
    std::vector<double> x, y;
    for (std::size_t k = 0; k < x_low.size(); ++k) {
        if (std::isnan(x_low[k]) || std::isnan(x_high[k]) || std::isnan(y_low[k]) || std::isnan(y_high[k])) continue;
        x.insert(x.end(), {x_low[k], x_high[k], std::numeric_limits<double>::quiet_NaN()});
        y.insert(y.end(), {y_low[k], y_high[k], std::numeric_limits<double>::quiet_NaN()});
    }
    if (!x.empty()) figure.add_line(x, y, style);
}

}  // namespace

std::string propagation_summary_text(const PropagationSummary& summary) {
    std::string text;
    if (summary.method == PropagationMethod::monte_carlo) {
        text = fmt::format("Monte Carlo, {} draws, seed {}", summary.samples, summary.seed);
        if (summary.rejected > 0) text += fmt::format(" ({} made no valid profile and were left out)", summary.rejected);
    } else {
        text = "linearised (central differences along each component)";
        if (summary.rejected > 0)
            text += fmt::format(" ({} step models made no valid profile: one-sided differences there)", summary.rejected);
    }
    return text + fmt::format(", {} models; {}", summary.models, summary.uncertainty);
}

void write_visibility_grid_csv(std::ostream& stream, const VisibilityMap& map) {
    output::TextSink out(stream);
    put_left_out(out, map.left_out);
    out.put("depth_m,distance_m,paths,kinds,receivers_seeing,visible,first_time_ns,time_between_ns,amplitude_per_m");
    out.end_row();
    for (int j = 0; j < map.grid.depth_cells; ++j) {
        const double depth = map.grid.depth_at(j);
        for (int i = 0; i < map.grid.distance_cells; ++i) {
            const MapCell& cell = map.at(j, i);
            put_number(out, depth, "depth_m");
            out.put(',');
            put_number(out, map.grid.distance_at(i), "distance_m");
            fmt::format_to(fmt::appender(out.buffer()), ",{},{},{},{},", static_cast<int>(cell.paths), kinds_label(cell.kinds),
                           static_cast<int>(cell.receivers_seeing), map.visible(cell) ? 1 : 0);
            put_if(out, has_first_time(cell), cell.first_time_ns, "first_time_ns");
            out.put(',');
            put_if(out, has_time_between(cell), cell.time_between_ns, "time_between_ns");
            out.put(',');
            put_if(out, has_amplitude(cell), cell.amplitude_per_m, "amplitude_per_m");
            out.end_row();
        }
    }
    out.finish();
}

std::string visibility_grid_csv(const VisibilityMap& map) {
    return render_to_string([&](std::ostream& out) { write_visibility_grid_csv(out, map); });
}

void write_visibility_boundary_csv(std::ostream& stream, const VisibilityMap& map,
                                   const BoundaryUncertainty* uncertainty) {
    if (uncertainty != nullptr && uncertainty->sigma_m.size() != map.boundary_m.size())
        throw OutputError(fmt::format("the boundary uncertainty has {} rows for {} depth rows",
                                      uncertainty->sigma_m.size(), map.boundary_m.size()));
    output::TextSink out(stream);
    put_left_out(out, map.left_out);
    put_uncertainty(out, uncertainty ? &uncertainty->summary : nullptr);
    out.put("depth_m,max_visible_distance_m");
    if (uncertainty != nullptr) out.put(",max_visible_distance_sigma_m,models_without_boundary,models_unbounded");
    out.end_row();
    for (int j = 0; j < map.grid.depth_cells; ++j) {
        put_number(out, map.grid.depth_at(j), "depth_m");
        out.put(',');
        // VisibilityMap::boundary_m: NaN where nothing is visible, +inf where the reach is unbounded.
        const double boundary = map.boundary_m[j];
        if (boundary == std::numeric_limits<double>::infinity()) out.put("inf");
        else if (!std::isnan(boundary)) put_number(out, boundary, "max_visible_distance_m");
        if (uncertainty != nullptr) {
            out.put(',');
            put_if(out, std::isfinite(boundary) && has_sigma(uncertainty->sigma_m[j]), uncertainty->sigma_m[j],
                   "max_visible_distance_sigma_m");
            fmt::format_to(fmt::appender(out.buffer()), ",{},{}", uncertainty->without_boundary[j],
                           uncertainty->unbounded[j]);
        }
        out.end_row();
    }
    out.finish();
}

std::string visibility_boundary_csv(const VisibilityMap& map, const BoundaryUncertainty* uncertainty) {
    return render_to_string([&](std::ostream& out) { write_visibility_boundary_csv(out, map, uncertainty); });
}

void write_visibility_map_svg(std::ostream& out, const VisibilityMap& map, const FirnModel& model,
                              const std::vector<Receiver>& receivers, MapColouring colouring,
                              const BoundaryUncertainty* uncertainty) {
    if (uncertainty != nullptr && uncertainty->sigma_m.size() != map.boundary_m.size())
        throw OutputError(fmt::format("the boundary uncertainty has {} rows for {} depth rows",
                                      uncertainty->sigma_m.size(), map.boundary_m.size()));
    plot::Figure figure(1000, 620);
    const std::string who = receivers.size() == 1
                                ? fmt::format("receiver at {:g} m depth", require_finite(-receivers[0].z_m, "receiver depth"))
                                : fmt::format("{} receivers, visible = seen by at least {}", receivers.size(), map.min_receivers);
    figure.title(fmt::format("Source visibility: {} (model: {})", who, model.name));
    figure.x_label(receivers.size() == 1 ? "horizontal distance from the receiver (m)"
                                         : "horizontal distance from the station centre (m)");
    figure.y_label("source depth (m)");
    figure.invert_y(true);
    figure.x_range(map.grid.distance_min_m, map.grid.distance_max_m);
    figure.y_range(map.grid.depth_min_m, map.grid.depth_max_m);

    const plot::CellGrid grid = cell_grid(map.grid);
    if (colouring == MapColouring::kinds) {
        std::vector<int> categories(map.cells.size());
        for (std::size_t c = 0; c < map.cells.size(); ++c) categories[c] = kind_category(map, map.cells[c]);
        std::vector<plot::Category> legend{{"shadow (no path)", "#4a4a4a"},
                                           {fmt::format("seen by fewer than {} receivers", map.min_receivers), "#b8b8b8"},
                                           {"direct only", "#9ecae1"},
                                           {"direct + refracted", "#2171b5"},
                                           {"direct + surface-reflected", "#41ab5d"},
                                           {"refracted or reflected only", "#fdae6b"},
                                           {"three kinds", "#d94801"},
                                           {"ducted paths only", "#7b3294"},
                                           {"bottom-reflected paths only", "#8c510a"},
                                           {"ducted and bottom-reflected paths only", "#c2a5cf"},
                                           {"several kinds, with ducted or bottom-reflected", "#dfc27d"}};
        // List only the categories that occur, so the legend explains what is on the map.
        std::vector<bool> present(legend.size(), false);
        for (int c : categories) present[c] = true;
        for (std::size_t c = 0; c < legend.size(); ++c)
            if (!present[c]) legend[c].label.clear();
        figure.category_map(grid, std::move(categories), std::move(legend));
    } else {
        std::vector<double> values(map.cells.size());
        plot::ColourScale scale;
        for (std::size_t c = 0; c < map.cells.size(); ++c) {
            const MapCell& cell = map.cells[c];
            switch (colouring) {
                case MapColouring::receivers: values[c] = cell.receivers_seeing; break;
                case MapColouring::time_between: values[c] = cell.time_between_ns; break;
                case MapColouring::first_time: values[c] = cell.first_time_ns; break;
                default: values[c] = cell.amplitude_per_m; break;
            }
        }
        switch (colouring) {
            case MapColouring::receivers:
                scale.label = "receivers that see the position";
                scale.low = 0;
                scale.high = static_cast<double>(map.receivers);
                break;
            case MapColouring::time_between: scale.label = "time between the first two paths (ns)"; break;
            case MapColouring::first_time: scale.label = "first-arrival time (ns)"; break;
            default:
                scale.label = "amplitude factor (1/m)";
                scale.logarithmic = true;
                break;
        }
        figure.value_map(grid, std::move(values), scale);
    }

    // The band of ± 1σ under the boundary: one horizontal stroke per depth row, as thick as a
    // row is tall on the axes (about 75 % of the figure's height), so the strokes merge.
    if (uncertainty != nullptr) {
        const double nan = std::numeric_limits<double>::quiet_NaN();
        std::vector<double> low, high, depth;
        for (int j = 0; j < map.grid.depth_cells; ++j) {
            const double b = map.boundary_m[j], sigma = uncertainty->sigma_m[j];
            const bool shown = std::isfinite(b) && has_sigma(sigma);
            low.push_back(shown ? std::clamp(b - sigma, map.grid.distance_min_m, map.grid.distance_max_m) : nan);
            high.push_back(shown ? std::clamp(b + sigma, map.grid.distance_min_m, map.grid.distance_max_m) : nan);
            depth.push_back(map.grid.depth_at(j));
        }
        const double row_px = std::max(1.0, 0.75 * 620.0 / map.grid.depth_cells);
        // Lavender, a colour no map category uses, so the band is not read as one.
        add_segments(figure, low, high, depth, depth, plot::LineStyle{"#cbc9e2", row_px, "", 1.0});
        figure.add_line(low, depth, plot::LineStyle{"#6a51a3", 1.0, "4 3", 1.0},
                        fmt::format("boundary ± 1σ ({})", summary_method_label(uncertainty->summary)));
        figure.add_line(high, depth, plot::LineStyle{"#6a51a3", 1.0, "4 3", 1.0});
    }

    // The shadow boundary as a curve (distance against depth).
    std::vector<double> bx, by;
    for (int j = 0; j < map.grid.depth_cells; ++j) {
        const double b = map.boundary_m[j];
        bx.push_back(std::isfinite(b) ? std::min(b, map.grid.distance_max_m) : std::numeric_limits<double>::quiet_NaN());
        by.push_back(map.grid.depth_at(j));
    }
    figure.add_line(bx, by, plot::LineStyle{"#d7191c", 2.0, "", 1.0},
                    map.min_receivers <= 1 ? "shadow boundary" : "visibility boundary");

    std::vector<double> rx, ry;
    for (const Receiver& r : receivers) {
        const double azimuth = map.azimuth_deg * 3.14159265358979323846 / 180.0;
        rx.push_back((r.x_m - map.centre_x_m) * std::cos(azimuth) + (r.y_m - map.centre_y_m) * std::sin(azimuth));
        ry.push_back(-r.z_m);
    }
    figure.add_markers(rx, ry, plot::MarkerStyle{"#000000", 6.0, "triangle"},
                       receivers.size() == 1 ? "receiver" : "receivers (projected on the map plane)");
    out << figure.svg();
}

std::string visibility_map_svg(const VisibilityMap& map, const FirnModel& model, const std::vector<Receiver>& receivers,
                               MapColouring colouring, const BoundaryUncertainty* uncertainty) {
    return render_to_string(
        [&](std::ostream& out) { write_visibility_map_svg(out, map, model, receivers, colouring, uncertainty); });
}

namespace {

// The resolution scan must have a row per depth of the scan: a mismatch is a caller's bug that
// would otherwise pair the figures with the wrong depths.
void check_resolution_rows(const DepthScan& scan, const DepthResolutionScan* resolution) {
    if (resolution != nullptr && resolution->rows.size() != scan.rows.size())
        throw OutputError(fmt::format("the resolution scan has {} rows for {} receiver depths", resolution->rows.size(),
                                      scan.rows.size()));
}

// Likewise for the uncertainty of the volumes.
void check_uncertainty_rows(const DepthScan& scan, const DepthScanUncertainty* uncertainty) {
    if (uncertainty != nullptr && uncertainty->rows.size() != scan.rows.size())
        throw OutputError(fmt::format("the volume uncertainty has {} rows for {} receiver depths",
                                      uncertainty->rows.size(), scan.rows.size()));
}

std::optional<double> sigma_if_given(double sigma) { return has_sigma(sigma) ? std::optional(sigma) : std::nullopt; }
std::optional<double> sigma_if_given(std::optional<double> sigma) {
    return sigma && has_sigma(*sigma) ? sigma : std::nullopt;
}

}  // namespace

void write_depth_scan_csv(std::ostream& stream, const DepthScan& scan, const DepthResolutionScan* resolution,
                          const DepthScanUncertainty* uncertainty) {
    check_resolution_rows(scan, resolution);
    check_uncertainty_rows(scan, uncertainty);
    output::TextSink out(stream);
    put_left_out(out, scan.left_out);
    put_uncertainty(out, uncertainty ? &uncertainty->summary : nullptr);
    out.put("receiver_depth_m,region_volume_m3,visible_volume_m3,visible_fraction,two_path_volume_m3,"
            "median_time_between_ns,min_time_between_ns,max_time_between_ns,strong_volume_m3,best,"
            "ducted_only_volume_m3,bottom_only_volume_m3");
    if (resolution != nullptr)
        out.put(",resolution_median_sigma_distance_m,resolution_median_sigma_depth_m,resolution_unresolved_fraction");
    if (uncertainty != nullptr)
        out.put(",visible_volume_sigma_m3,visible_fraction_sigma,two_path_volume_sigma_m3,strong_volume_sigma_m3,"
                "ducted_only_volume_sigma_m3,bottom_only_volume_sigma_m3");
    out.end_row();
    for (std::size_t k = 0; k < scan.rows.size(); ++k) {
        const DepthScanRow& row = scan.rows[k];
        const bool between = has_times_between(row);
        put_number(out, row.receiver_depth_m, "receiver_depth_m");
        out.put(',');
        put_number(out, row.region_volume_m3, "region_volume_m3", 10);
        out.put(',');
        put_number(out, row.visible_volume_m3, "visible_volume_m3", 10);
        out.put(',');
        put_number(out, row.visible_volume_m3 / row.region_volume_m3, "visible_fraction", 10);
        out.put(',');
        put_number(out, row.two_path_volume_m3, "two_path_volume_m3", 10);
        out.put(',');
        put_if(out, between, row.median_time_between_ns, "median_time_between_ns", 10);
        out.put(',');
        put_if(out, between, row.min_time_between_ns, "min_time_between_ns", 10);
        out.put(',');
        put_if(out, between, row.max_time_between_ns, "max_time_between_ns", 10);
        out.put(',');
        if (row.strong_volume_m3) put_number(out, *row.strong_volume_m3, "strong_volume_m3", 10);
        fmt::format_to(fmt::appender(out.buffer()), ",{},", k == scan.best ? 1 : 0);
        put_number(out, row.ducted_only_volume_m3, "ducted_only_volume_m3", 10);
        out.put(',');
        put_number(out, row.bottom_only_volume_m3, "bottom_only_volume_m3", 10);
        if (resolution != nullptr) {
            const ResolutionSummary& r = resolution->rows[k];
            out.put(',');
            if (r.median_sigma_distance_m) put_number(out, *r.median_sigma_distance_m, "resolution_median_sigma_distance_m");
            out.put(',');
            if (r.median_sigma_depth_m) put_number(out, *r.median_sigma_depth_m, "resolution_median_sigma_depth_m");
            out.put(',');
            put_number(out, r.unresolved_fraction, "resolution_unresolved_fraction");
        }
        if (uncertainty != nullptr) {
            const DepthScanUncertaintyRow& u = uncertainty->rows[k];
            const auto put_sigma = [&](std::optional<double> sigma, std::string_view column) {
                out.put(',');
                if (sigma) put_number(out, *sigma, column, 10);
            };
            const auto visible = sigma_if_given(u.visible_volume_sigma_m3);
            put_sigma(visible, "visible_volume_sigma_m3");
            put_sigma(visible ? std::optional(*visible / row.region_volume_m3) : std::nullopt, "visible_fraction_sigma");
            put_sigma(sigma_if_given(u.two_path_volume_sigma_m3), "two_path_volume_sigma_m3");
            put_sigma(sigma_if_given(u.strong_volume_sigma_m3), "strong_volume_sigma_m3");
            put_sigma(sigma_if_given(u.ducted_only_volume_sigma_m3), "ducted_only_volume_sigma_m3");
            put_sigma(sigma_if_given(u.bottom_only_volume_sigma_m3), "bottom_only_volume_sigma_m3");
        }
        out.end_row();
    }
    out.finish();
}

std::string depth_scan_csv(const DepthScan& scan, const DepthResolutionScan* resolution,
                           const DepthScanUncertainty* uncertainty) {
    return render_to_string([&](std::ostream& out) { write_depth_scan_csv(out, scan, resolution, uncertainty); });
}

void write_depth_scan_json(std::ostream& out, const DepthScan& scan, const FirnModel& model, const MapGrid& region,
                           const DepthResolutionScan* resolution, const DepthScanUncertainty* uncertainty) {
    check_resolution_rows(scan, resolution);
    check_uncertainty_rows(scan, uncertainty);
    JsonWriter json(out);
    json.begin_object();
    json.key("model");
    write_model_json(json, model);
    json.key("region").begin_object();
    json.field("max_distance_m", region.distance_max_m);
    json.field("min_depth_m", region.depth_min_m);
    json.field("max_depth_m", region.depth_max_m);
    json.end_object();
    json.field("max_bounces", scan.max_bounces);
    json.key("left_out").begin_array();
    for (const std::string& what : scan.left_out) json.value(what);
    json.end_array();
    json.key("best_receiver_depth_m");
    if (scan.rows.empty()) json.null();
    else json.value(scan.rows[scan.best].receiver_depth_m);
    if (resolution != nullptr) {
        json.key("resolution").begin_object();
        json.field("station", resolution->station);
        json.field("azimuth_deg", resolution->azimuth_deg);
        json.field("timing_sigma_ns", resolution->timing_sigma_ns);
        json.field("min_distance_m", resolution->grid.distance_min_m);
        json.field("max_distance_m", resolution->grid.distance_max_m);
        json.field("distance_cells", resolution->grid.distance_cells);
        json.field("min_depth_m", resolution->grid.depth_min_m);
        json.field("max_depth_m", resolution->grid.depth_max_m);
        json.field("depth_cells", resolution->grid.depth_cells);
        json.end_object();
    }
    if (uncertainty != nullptr) {
        const PropagationSummary& u = uncertainty->summary;
        json.key("uncertainty").begin_object();
        json.field("method", u.method == PropagationMethod::monte_carlo ? "monte-carlo" : "linearised");
        if (u.method == PropagationMethod::monte_carlo) {
            json.field("samples", u.samples);
            json.field("seed", static_cast<unsigned long>(u.seed));
        }
        json.field("models", static_cast<unsigned long>(u.models));
        json.field("rejected", static_cast<unsigned long>(u.rejected));
        json.field("uncertainty", u.uncertainty);
        json.end_object();
    }
    json.key("depths").begin_array();
    for (std::size_t k = 0; k < scan.rows.size(); ++k) {
        const DepthScanRow& row = scan.rows[k];
        const auto between = [&](double value) { return has_times_between(row) ? std::optional(value) : std::nullopt; };
        json.begin_object();
        json.field("receiver_depth_m", row.receiver_depth_m);
        json.field("region_volume_m3", row.region_volume_m3);
        json.field("visible_volume_m3", row.visible_volume_m3);
        json.field("two_path_volume_m3", row.two_path_volume_m3);
        json.field("median_time_between_ns", between(row.median_time_between_ns));
        json.field("min_time_between_ns", between(row.min_time_between_ns));
        json.field("max_time_between_ns", between(row.max_time_between_ns));
        json.field("strong_volume_m3", row.strong_volume_m3);
        json.field("ducted_only_volume_m3", row.ducted_only_volume_m3);
        json.field("bottom_only_volume_m3", row.bottom_only_volume_m3);
        if (resolution != nullptr) {
            const ResolutionSummary& r = resolution->rows[k];
            json.key("resolution").begin_object();
            json.field("median_sigma_distance_m", r.median_sigma_distance_m);
            json.field("median_sigma_depth_m", r.median_sigma_depth_m);
            json.field("unresolved_fraction", r.unresolved_fraction);
            json.field("resolved_cells", r.resolved_cells);
            json.field("cells", r.cells);
            json.end_object();
        }
        if (uncertainty != nullptr) {
            const DepthScanUncertaintyRow& u = uncertainty->rows[k];
            const auto visible = sigma_if_given(u.visible_volume_sigma_m3);
            json.key("sigma").begin_object();
            json.field("visible_volume_m3", visible);
            json.field("visible_fraction", visible ? std::optional(*visible / row.region_volume_m3) : std::nullopt);
            json.field("two_path_volume_m3", sigma_if_given(u.two_path_volume_sigma_m3));
            json.field("strong_volume_m3", sigma_if_given(u.strong_volume_sigma_m3));
            json.field("ducted_only_volume_m3", sigma_if_given(u.ducted_only_volume_sigma_m3));
            json.field("bottom_only_volume_m3", sigma_if_given(u.bottom_only_volume_sigma_m3));
            json.end_object();
        }
        json.end_object();
    }
    json.end_array();
    json.end_object();
    json.flush();
    out << '\n';
}

std::string depth_scan_json(const DepthScan& scan, const FirnModel& model, const MapGrid& region,
                            const DepthResolutionScan* resolution, const DepthScanUncertainty* uncertainty) {
    return render_to_string(
        [&](std::ostream& out) { write_depth_scan_json(out, scan, model, region, resolution, uncertainty); });
}

void write_depth_scan_svg(std::ostream& out, const DepthScan& scan, const FirnModel& model, const MapGrid& region,
                          const DepthScanUncertainty* uncertainty, const DepthResolutionScan* resolution) {
    check_uncertainty_rows(scan, uncertainty);
    check_resolution_rows(scan, resolution);
    std::vector<double> depth, visible, two, median, low, high, strong;
    for (const auto& row : scan.rows) {
        depth.push_back(row.receiver_depth_m);
        visible.push_back(100.0 * row.visible_volume_m3 / row.region_volume_m3);
        two.push_back(100.0 * row.two_path_volume_m3 / row.region_volume_m3);
        median.push_back(row.median_time_between_ns);
        low.push_back(row.min_time_between_ns);
        high.push_back(row.max_time_between_ns);
        if (row.strong_volume_m3) strong.push_back(100.0 * *row.strong_volume_m3 / row.region_volume_m3);
    }
    const double best = scan.rows.empty() ? 0.0 : require_finite(scan.rows[scan.best].receiver_depth_m, "best depth");
    for (const auto& [value, name] : {std::pair{region.distance_max_m, "region max_distance_m"},
                                      {region.depth_min_m, "region min_depth_m"}, {region.depth_max_m, "region max_depth_m"}})
        require_finite(value, name);
    const plot::LineStyle best_style{"#d7191c", 1.5, "6 4", 1.0};
    const std::string best_label = fmt::format("best depth {:g} m (largest visible volume)", best);

    plot::Figure volumes(960, 420);
    volumes.title("Share of the source region seen by the receiver");
    volumes.x_label("receiver depth (m)");
    volumes.y_label("share of the region volume (%)");
    // The ± 1σ bands under the two curves: a bar at each depth and the band's edges.
    if (uncertainty != nullptr) {
        const double nan = std::numeric_limits<double>::quiet_NaN();
        const auto band = [&](const std::vector<double>& share, auto sigma_of, const std::string& fill,
                              const std::string& edge, const std::string& legend) {
            std::vector<double> low, high;
            for (std::size_t k = 0; k < scan.rows.size(); ++k) {
                const double sigma = sigma_of(uncertainty->rows[k]);
                const double sigma_share = 100.0 * sigma / scan.rows[k].region_volume_m3;
                low.push_back(has_sigma(sigma) ? share[k] - sigma_share : nan);
                high.push_back(has_sigma(sigma) ? share[k] + sigma_share : nan);
            }
            add_segments(volumes, depth, depth, low, high, plot::LineStyle{fill, 6.0, "", 1.0});
            volumes.add_line(depth, low, plot::LineStyle{edge, 1.0, "4 3", 1.0}, legend);
            volumes.add_line(depth, high, plot::LineStyle{edge, 1.0, "4 3", 1.0});
        };
        const std::string method = summary_method_label(uncertainty->summary);
        band(visible, [](const DepthScanUncertaintyRow& u) { return u.visible_volume_sigma_m3; }, "#c6dbef", "#6baed6",
             fmt::format("visible ± 1σ ({})", method));
        band(two, [](const DepthScanUncertaintyRow& u) { return u.two_path_volume_sigma_m3; }, "#c7e9c0", "#74c476",
             "direct and a second path ± 1σ");
    }
    volumes.add_line(depth, visible, plot::LineStyle{"#2171b5", 2.0, "", 1.0}, "visible (at least one path)");
    volumes.add_markers(depth, visible, plot::MarkerStyle{"#2171b5", 3.0, "circle"});
    volumes.add_line(depth, two, plot::LineStyle{"#41ab5d", 2.0, "", 1.0}, "direct and a second path");
    volumes.add_markers(depth, two, plot::MarkerStyle{"#41ab5d", 3.0, "square"});
    if (!strong.empty()) volumes.add_line(depth, strong, plot::LineStyle{"#d94801", 2.0, "4 2", 1.0}, "amplitude above threshold");
    volumes.add_vline(best, best_style, best_label);

    plot::Figure delays(960, 420);
    delays.title("Time between the two paths over the two-path region");
    delays.x_label("receiver depth (m)");
    delays.y_label("time between paths (ns)");
    delays.add_line(depth, median, plot::LineStyle{"#6a51a3", 2.0, "", 1.0}, "volume-weighted median");
    delays.add_markers(depth, median, plot::MarkerStyle{"#6a51a3", 3.0, "circle"});
    delays.add_line(depth, low, plot::LineStyle{"#9e9ac8", 1.2, "3 3", 1.0}, "minimum");
    delays.add_line(depth, high, plot::LineStyle{"#9e9ac8", 1.2, "3 3", 1.0}, "maximum");
    delays.add_vline(best, best_style, best_label);

    // The station's resolution at each candidate depth of its shallowest receiver (--resolution):
    // medians over the resolved cells of the region, and the share of cells not resolved.
    plot::Figure resolved(960, 420);
    std::vector<const plot::Figure*> panels{&volumes, &delays};
    if (resolution != nullptr && !resolution->rows.empty()) {
        const double nan = std::numeric_limits<double>::quiet_NaN();
        std::vector<double> sigma_distance, sigma_depth;
        for (const ResolutionSummary& r : resolution->rows) {
            sigma_distance.push_back(r.median_sigma_distance_m.value_or(nan));
            sigma_depth.push_back(r.median_sigma_depth_m.value_or(nan));
        }
        // The unresolved share (cells fewer than 4 pulses see) goes in the title, from the first
        // candidate depth to the last: a label at every point would overlap the curves.
        resolved.title(fmt::format("Station '{}' ({:g} ns timing, Cramér–Rao bound): median 1σ over the resolved "
                                   "cells; unresolved {:.0f}% at {:g} m to {:.0f}% at {:g} m",
                                   resolution->station, resolution->timing_sigma_ns,
                                   100.0 * resolution->rows.front().unresolved_fraction, depth.front(),
                                   100.0 * resolution->rows.back().unresolved_fraction, depth.back()));
        resolved.x_label("receiver depth (m)");
        resolved.y_label("median 1σ (m)");
        resolved.add_line(depth, sigma_distance, plot::LineStyle{"#2171b5", 2.0, "", 1.0}, "distance");
        resolved.add_markers(depth, sigma_distance, plot::MarkerStyle{"#2171b5", 3.0, "circle"});
        resolved.add_line(depth, sigma_depth, plot::LineStyle{"#d94801", 2.0, "", 1.0}, "depth");
        resolved.add_markers(depth, sigma_depth, plot::MarkerStyle{"#d94801", 3.0, "square"});
        resolved.add_vline(best, best_style, best_label);
        panels.push_back(&resolved);
    }

    out << plot::compose_figures(panels, 1,
                                 fmt::format("Receiver-depth scan (model: {}; sources within {:g} m, {:g}-{:g} m deep)",
                                             model.name, region.distance_max_m, region.depth_min_m, region.depth_max_m));
}

std::string depth_scan_svg(const DepthScan& scan, const FirnModel& model, const MapGrid& region,
                           const DepthScanUncertainty* uncertainty, const DepthResolutionScan* resolution) {
    return render_to_string(
        [&](std::ostream& out) { write_depth_scan_svg(out, scan, model, region, uncertainty, resolution); });
}

}  // namespace firnray
