#include "output/beam_output.hpp"

#include <algorithm>
#include <cmath>
#include <limits>
#include <map>

#include <fmt/format.h>

#include "core/constants.hpp"
#include "io/csv_writer.hpp"
#include "io/json_writer.hpp"
#include "output/model_json.hpp"
#include "output/text_sink.hpp"
#include "plot/figure.hpp"

namespace firnray {

namespace {

void put_number(output::TextSink& out, double value, std::string_view column, int digits = 6) {
    fmt::format_to(fmt::appender(out.buffer()), "{:.{}g}", require_finite(value, column), digits);
}

double offset_ns(const PlaneWaveOffsets& beam, std::size_t antenna) { return *beam.offsets_s[antenna] * seconds_to_ns; }

plot::CellGrid cell_grid(const MapGrid& grid) {
    plot::CellGrid cells;
    for (int i = 0; i <= grid.distance_cells; ++i) cells.x_edges.push_back(grid.distance_min_m + i * grid.distance_step());
    for (int j = 0; j <= grid.depth_cells; ++j) cells.y_edges.push_back(grid.depth_min_m + j * grid.depth_step());
    return cells;
}

// Beams ordered by zenith get colours along one ramp, so neighbouring beams look alike and the
// map reads as a fan of directions.
std::string beam_colour(std::size_t beam, std::size_t beams) {
    return plot::sequential_colour(beams <= 1 ? 0.5 : 0.05 + 0.9 * static_cast<double>(beam) / static_cast<double>(beams - 1));
}

std::string beam_label(const BeamTable& table, std::size_t beam) {
    return fmt::format("beam {} ({:.1f}°)", beam, table.beams[beam].arrival_zenith_deg);
}

void write_volume(JsonWriter& json, std::string_view name, double volume) { json.field(name, volume); }

}  // namespace

std::string unreached_reason(const Unreached& why) {
    if (why.at_bottom)
        return fmt::format("the wave reflects at the bottom at {:g} m depth, above this antenna", why.turning_depth_m);
    return fmt::format("the wave turns at {:g} m depth, {} this antenna", why.turning_depth_m,
                       why.antenna_above ? "below" : "above");
}

void write_beam_table_text(std::ostream& out, const BeamTable& table, const FirnModel& model,
                           const BeamCoverage* coverage) {
    const PhasedArray& array = table.array;
    out << fmt::format("Phased array: string {} ({} antennas, mean spacing {:.4g} m, {:g} to {:g} m deep), "
                       "reference {} at {:g} m depth\n",
                       array.string_name, array.antennas.size(), array.mean_spacing_m(), -array.antennas.front().z_m,
                       -array.antennas.back().z_m, array.reference_antenna().name, -array.reference_antenna().z_m);
    out << fmt::format("Model: {}. Beam widths: half power of the array factor at {:g} MHz.\n", model.name,
                       table.frequency_hz / 1e6);
    out << "Offsets: arrival time at each antenna minus that at the reference (ns), for a plane wave arriving\n"
           "at the reference at the beam's zenith (below 90 deg it travels up, above 90 deg down).\n\n";
    auto header = [&](const char* unit) {
        out << fmt::format("{:>4} {:>10} {:>13} {:>9}", "beam", "zenith_deg", "ray_parameter", "width_deg");
        for (const Receiver& r : array.antennas) out << fmt::format(" {:>9}", r.name + unit);
        out << '\n';
    };
    header("");
    for (std::size_t b = 0; b < table.beams.size(); ++b) {
        const PlaneWaveOffsets& beam = table.beams[b];
        out << fmt::format("{:>4} {:>10.3f} {:>13.6f} {:>9.3f}", b, beam.arrival_zenith_deg, beam.ray_parameter,
                           table.half_power_width_deg[b]);
        for (std::size_t k = 0; k < array.antennas.size(); ++k)
            out << (beam.offsets_s[k] ? fmt::format(" {:>9.3f}", offset_ns(beam, k)) : fmt::format(" {:>9}", "-"));
        out << '\n';
    }
    if (table.sample_rate_hz) {
        out << fmt::format("\nOffsets in whole samples at {:g} GHz (nearest sample):\n", *table.sample_rate_hz / 1e9);
        header("");
        for (std::size_t b = 0; b < table.beams.size(); ++b) {
            const PlaneWaveOffsets& beam = table.beams[b];
            out << fmt::format("{:>4} {:>10.3f} {:>13.6f} {:>9.3f}", b, beam.arrival_zenith_deg, beam.ray_parameter,
                               table.half_power_width_deg[b]);
            for (std::size_t k = 0; k < array.antennas.size(); ++k) {
                const auto samples = table.offset_samples(b, k);
                out << (samples ? fmt::format(" {:>9}", *samples) : fmt::format(" {:>9}", "-"));
            }
            out << '\n';
        }
    }
    bool any_unreached = false;
    for (std::size_t b = 0; b < table.beams.size(); ++b)
        for (std::size_t k = 0; k < array.antennas.size(); ++k) {
            const auto& why = table.beams[b].unreached[k];
            if (!why) continue;
            if (!any_unreached) out << "\nWhere the plane wave does not reach an antenna (\"-\"):\n";
            any_unreached = true;
            out << fmt::format("  beam {} ({:g} deg), {}: {}\n", b, table.beams[b].arrival_zenith_deg,
                               array.antennas[k].name, unreached_reason(*why));
        }
    if (coverage) {
        out << fmt::format("\nCoverage map: {} x {} cells, distance {:g} to {:g} m from the string, depth {:g} to {:g} m\n",
                           coverage->grid.distance_cells, coverage->grid.depth_cells, coverage->grid.distance_min_m,
                           coverage->grid.distance_max_m, coverage->grid.depth_min_m, coverage->grid.depth_max_m);
        out << fmt::format("  region volume                  {:.4g} m3\n", coverage->region_volume_m3);
        out << fmt::format("  visible (any antenna)          {:.4g} m3\n", coverage->visible_volume_m3);
        out << fmt::format("  efficiency-weighted visible    {:.4g} m3 (first arrival)\n",
                           coverage->efficiency_weighted_volume_m3);
        if (coverage->threshold) {
            out << fmt::format("  triggered, first arrival       {:.4g} m3 (efficiency >= {:g})\n",
                               *coverage->triggered_volume_m3, *coverage->threshold);
            out << fmt::format("  triggered, first or second     {:.4g} m3\n", *coverage->triggered_either_volume_m3);
        }
    }
}

void write_beam_table_csv(std::ostream& stream, const BeamTable& table) {
    output::TextSink out(stream);
    out.put("beam,arrival_zenith_deg,ray_parameter,half_power_width_deg,antenna,antenna_depth_m,offset_ns,"
            "offset_samples,not_reached");
    out.end_row();
    for (std::size_t b = 0; b < table.beams.size(); ++b) {
        const PlaneWaveOffsets& beam = table.beams[b];
        for (std::size_t k = 0; k < table.array.antennas.size(); ++k) {
            fmt::format_to(fmt::appender(out.buffer()), "{},", b);
            put_number(out, beam.arrival_zenith_deg, "arrival_zenith_deg", 10);
            out.put(',');
            put_number(out, beam.ray_parameter, "ray_parameter", 10);
            out.put(',');
            put_number(out, table.half_power_width_deg[b], "half_power_width_deg", 6);
            out.put(',');
            append_csv_field(out.buffer(), table.array.antennas[k].name);
            out.put(',');
            put_number(out, -table.array.antennas[k].z_m, "antenna_depth_m", 10);
            out.put(',');
            if (beam.offsets_s[k]) put_number(out, offset_ns(beam, k), "offset_ns", 10);
            out.put(',');
            if (const auto samples = table.offset_samples(b, k)) fmt::format_to(fmt::appender(out.buffer()), "{}", *samples);
            out.put(',');
            if (beam.unreached[k]) append_csv_field(out.buffer(), unreached_reason(*beam.unreached[k]));
            out.end_row();
        }
    }
    out.finish();
}

void write_beam_table_json(std::ostream& out, const BeamTable& table, const FirnModel& model,
                           const BeamCoverage* coverage) {
    const PhasedArray& array = table.array;
    JsonWriter json(out);
    json.begin_object();
    json.key("model");
    write_model_json(json, model);
    json.key("array").begin_object();
    json.field("string", array.string_name);
    json.field("reference", array.reference_antenna().name);
    json.field("mean_spacing_m", array.mean_spacing_m());
    json.field("frequency_mhz", table.frequency_hz / 1e6);
    json.key("sample_rate_ghz");
    json.value(table.sample_rate_hz ? std::optional<double>(*table.sample_rate_hz / 1e9) : std::nullopt);
    json.key("antennas").begin_array();
    for (const Receiver& r : array.antennas) {
        json.begin_object();
        json.field("name", r.name);
        json.field("depth_m", -r.z_m);
        json.end_object();
    }
    json.end_array();
    json.end_object();
    json.key("beams").begin_array();
    for (std::size_t b = 0; b < table.beams.size(); ++b) {
        const PlaneWaveOffsets& beam = table.beams[b];
        json.begin_object();
        json.field("beam", static_cast<int>(b));
        json.field("arrival_zenith_deg", beam.arrival_zenith_deg);
        json.field("ray_parameter", beam.ray_parameter);
        json.key("offsets_ns").begin_object();
        for (std::size_t k = 0; k < array.antennas.size(); ++k) {
            json.key(array.antennas[k].name);
            json.value(beam.offsets_s[k] ? std::optional<double>(offset_ns(beam, k)) : std::nullopt);
        }
        json.end_object();
        json.key("offsets_samples");
        if (table.sample_rate_hz) {
            json.begin_object();
            for (std::size_t k = 0; k < array.antennas.size(); ++k) {
                json.key(array.antennas[k].name);
                if (const auto samples = table.offset_samples(b, k)) json.value(*samples);
                else json.null();
            }
            json.end_object();
        } else {
            json.null();
        }
        json.field("half_power_width_deg", table.half_power_width_deg[b]);
        json.key("not_reached").begin_object();
        for (std::size_t k = 0; k < array.antennas.size(); ++k)
            if (beam.unreached[k]) json.field(array.antennas[k].name, unreached_reason(*beam.unreached[k]));
        json.end_object();
        json.end_object();
    }
    json.end_array();
    if (coverage) {
        json.key("coverage").begin_object();
        json.field("distance_min_m", coverage->grid.distance_min_m);
        json.field("distance_max_m", coverage->grid.distance_max_m);
        json.field("distance_cells", coverage->grid.distance_cells);
        json.field("depth_min_m", coverage->grid.depth_min_m);
        json.field("depth_max_m", coverage->grid.depth_max_m);
        json.field("depth_cells", coverage->grid.depth_cells);
        json.field("threshold", coverage->threshold);
        write_volume(json, "region_volume_m3", coverage->region_volume_m3);
        write_volume(json, "visible_volume_m3", coverage->visible_volume_m3);
        write_volume(json, "efficiency_weighted_volume_m3", coverage->efficiency_weighted_volume_m3);
        json.field("triggered_volume_m3", coverage->triggered_volume_m3);
        json.field("triggered_either_volume_m3", coverage->triggered_either_volume_m3);
        json.end_object();
    }
    json.end_object();
    json.flush();
    out << '\n';
}

void write_array_factor_svg(std::ostream& out, const BeamTable& table, const std::vector<ArrayFactorCurve>& curves,
                            const FirnModel& model) {
    plot::Figure figure(1000, 600);
    figure.title(fmt::format("Array factor of string {} at {:g} MHz ({} antennas, model: {})", table.array.string_name,
                             table.frequency_hz / 1e6, table.array.antennas.size(), model.name));
    figure.x_label("arrival zenith at the reference antenna (deg)");
    figure.y_label("array factor |AF| / N");
    figure.x_range(0.0, 180.0);
    figure.y_range(0.0, 1.05);
    figure.legend_position(plot::LegendPosition::outside_right);
    std::vector<double> lobe_x, lobe_y;
    for (std::size_t b = 0; b < curves.size() && b < table.beams.size(); ++b) {
        figure.add_line(curves[b].zenith_deg, curves[b].value,
                        plot::LineStyle{beam_colour(b, table.beams.size()), 1.5, "", 1.0}, beam_label(table, b));
        for (double lobe : grating_lobes_deg(curves[b], table.beams[b].arrival_zenith_deg)) {
            const auto at = std::lower_bound(curves[b].zenith_deg.begin(), curves[b].zenith_deg.end(), lobe);
            lobe_x.push_back(lobe);
            lobe_y.push_back(curves[b].value[static_cast<std::size_t>(at - curves[b].zenith_deg.begin())]);
        }
    }
    figure.add_hline(1.0 / std::sqrt(2.0), plot::LineStyle{"#888888", 1.0, "4 3", 1.0}, "half power");
    if (!lobe_x.empty())
        figure.add_markers(lobe_x, lobe_y, plot::MarkerStyle{"#d62728", 5.0, "diamond"}, "grating lobe");
    out << figure.svg();
}

void write_coverage_csv(std::ostream& stream, const BeamCoverage& coverage, const BeamTable& table) {
    output::TextSink out(stream);
    out.put("depth_m,distance_m,antennas_first,first_beam,first_zenith_deg,first_efficiency,antennas_second,"
            "second_beam,second_zenith_deg,second_efficiency");
    if (coverage.threshold) out.put(",triggered");
    out.end_row();
    auto put_arrival = [&](int antennas, int beam, float efficiency, const char* column) {
        fmt::format_to(fmt::appender(out.buffer()), "{},", antennas);
        if (beam >= 0) {
            fmt::format_to(fmt::appender(out.buffer()), "{},", beam);
            put_number(out, table.beams[static_cast<std::size_t>(beam)].arrival_zenith_deg, "zenith_deg");
            out.put(',');
            put_number(out, efficiency, column, 4);
        } else {
            out.put(",,");
        }
    };
    for (int j = 0; j < coverage.grid.depth_cells; ++j)
        for (int i = 0; i < coverage.grid.distance_cells; ++i) {
            const CoverageCell& cell = coverage.at(j, i);
            put_number(out, coverage.grid.depth_at(j), "depth_m");
            out.put(',');
            put_number(out, coverage.grid.distance_at(i), "distance_m");
            out.put(',');
            put_arrival(cell.antennas_first, cell.first_beam, cell.first_efficiency, "first_efficiency");
            out.put(',');
            put_arrival(cell.antennas_second, cell.second_beam, cell.second_efficiency, "second_efficiency");
            if (coverage.threshold) {
                const bool seen = (cell.first_beam >= 0 && cell.first_efficiency >= *coverage.threshold) ||
                                  (cell.second_beam >= 0 && cell.second_efficiency >= *coverage.threshold);
                out.put(seen ? ",1" : ",0");
            }
            out.end_row();
        }
    out.finish();
}

void write_coverage_svg(std::ostream& out, const BeamCoverage& coverage, const BeamTable& table,
                        const FirnModel& model) {
    const std::size_t beams = table.beams.size();
    const int below = static_cast<int>(beams);  // the category of cells under the threshold
    std::vector<double> bx, by;
    for (int j = 0; j < coverage.grid.depth_cells; ++j) {
        const double b = coverage.boundary_m[static_cast<std::size_t>(j)];
        bx.push_back(std::isnan(b) ? std::numeric_limits<double>::quiet_NaN() : std::min(b, coverage.grid.distance_max_m));
        by.push_back(coverage.grid.depth_at(j));
    }
    std::vector<double> ax, ay;
    for (const Receiver& r : table.array.antennas) {
        ax.push_back(0.0);
        ay.push_back(-r.z_m);
    }
    auto panel = [&](bool first) {
        plot::Figure figure(1000, 560);
        figure.title(fmt::format("{} arrival: best beam{}", first ? "First" : "Second",
                                 coverage.threshold ? fmt::format(" (grey: efficiency below {:g})", *coverage.threshold)
                                                    : std::string()));
        figure.x_label(fmt::format("horizontal distance from string {} (m)", table.array.string_name));
        figure.y_label("source depth (m)");
        figure.invert_y(true);
        figure.x_range(coverage.grid.distance_min_m, coverage.grid.distance_max_m);
        figure.y_range(coverage.grid.depth_min_m, coverage.grid.depth_max_m);
        std::vector<int> categories(coverage.cells.size(), -1);
        std::vector<bool> present(beams + 1, false);
        for (std::size_t c = 0; c < coverage.cells.size(); ++c) {
            const CoverageCell& cell = coverage.cells[c];
            const int beam = first ? cell.first_beam : cell.second_beam;
            const float efficiency = first ? cell.first_efficiency : cell.second_efficiency;
            if (beam < 0) continue;
            categories[c] = coverage.threshold && efficiency < *coverage.threshold ? below : beam;
            present[static_cast<std::size_t>(categories[c])] = true;
        }
        std::vector<plot::Category> legend;
        for (std::size_t b = 0; b < beams; ++b)
            legend.push_back({present[b] ? beam_label(table, b) : "", beam_colour(b, beams)});
        legend.push_back({present[beams] ? "below the threshold" : "", "#cfcfcf"});
        figure.category_map(cell_grid(coverage.grid), std::move(categories), std::move(legend));
        figure.add_line(bx, by, plot::LineStyle{"#d7191c", 2.0, "", 1.0}, "shadow boundary");
        figure.add_markers(ax, ay, plot::MarkerStyle{"#000000", 4.0, "triangle"}, "antennas");
        return figure;
    };
    const plot::Figure first = panel(true), second = panel(false);
    out << plot::compose_figures({&first, &second}, 1,
                                 fmt::format("Trigger beams of string {} ({} beams, model: {})", table.array.string_name,
                                             beams, model.name));
}

void write_design_scan_csv(std::ostream& stream, const DesignScan& scan) {
    output::TextSink out(stream);
    out.put("value,top_depth_m,spacing_m,beams,region_volume_m3,visible_volume_m3,efficiency_weighted_volume_m3,"
            "triggered_volume_m3,best");
    out.end_row();
    for (std::size_t k = 0; k < scan.rows.size(); ++k) {
        const DesignScanRow& row = scan.rows[k];
        put_number(out, row.value, "value", 10);
        out.put(',');
        put_number(out, row.top_depth_m, "top_depth_m", 10);
        out.put(',');
        put_number(out, row.spacing_m, "spacing_m", 10);
        fmt::format_to(fmt::appender(out.buffer()), ",{},", row.beams);
        put_number(out, row.region_volume_m3, "region_volume_m3", 10);
        out.put(',');
        put_number(out, row.visible_volume_m3, "visible_volume_m3", 10);
        out.put(',');
        put_number(out, row.efficiency_weighted_volume_m3, "efficiency_weighted_volume_m3", 10);
        out.put(',');
        if (row.triggered_volume_m3) put_number(out, *row.triggered_volume_m3, "triggered_volume_m3", 10);
        out.put(k == scan.best ? ",1" : ",0");
        out.end_row();
    }
    out.finish();
}

void write_design_scan_json(std::ostream& out, const DesignScan& scan, const FirnModel& model, const MapGrid& region,
                            const BeamTable& table) {
    JsonWriter json(out);
    json.begin_object();
    json.key("model");
    write_model_json(json, model);
    json.key("array").begin_object();
    json.field("string", table.array.string_name);
    json.field("reference", table.array.reference_antenna().name);
    json.field("antennas", static_cast<int>(table.array.antennas.size()));
    json.end_object();
    json.field("parameter", to_string(scan.parameter));
    json.key("region").begin_object();
    json.field("distance_min_m", region.distance_min_m);
    json.field("distance_max_m", region.distance_max_m);
    json.field("depth_min_m", region.depth_min_m);
    json.field("depth_max_m", region.depth_max_m);
    json.end_object();
    json.key("rows").begin_array();
    for (std::size_t k = 0; k < scan.rows.size(); ++k) {
        const DesignScanRow& row = scan.rows[k];
        json.begin_object();
        json.field("value", row.value);
        json.field("top_depth_m", row.top_depth_m);
        json.field("spacing_m", row.spacing_m);
        json.field("beams", static_cast<int>(row.beams));
        json.field("region_volume_m3", row.region_volume_m3);
        json.field("visible_volume_m3", row.visible_volume_m3);
        json.field("efficiency_weighted_volume_m3", row.efficiency_weighted_volume_m3);
        json.field("triggered_volume_m3", row.triggered_volume_m3);
        json.field("best", k == scan.best);
        json.end_object();
    }
    json.end_array();
    json.end_object();
    json.flush();
    out << '\n';
}

void write_design_scan_svg(std::ostream& out, const DesignScan& scan, const FirnModel& model) {
    plot::Figure figure(960, 560);
    const char* what = scan.parameter == DesignParameter::depth     ? "depth of the top antenna (m)"
                       : scan.parameter == DesignParameter::spacing ? "antenna spacing (m)"
                                                                    : "number of beams";
    figure.title(fmt::format("Phased-array design scan against {} (model: {})", to_string(scan.parameter), model.name));
    figure.x_label(what);
    figure.y_label("volume (km³)");
    std::vector<double> x, visible, weighted, triggered;
    bool any_triggered = false;
    for (const DesignScanRow& row : scan.rows) {
        x.push_back(row.value);
        visible.push_back(row.visible_volume_m3 / 1e9);
        weighted.push_back(row.efficiency_weighted_volume_m3 / 1e9);
        triggered.push_back(row.triggered_volume_m3 ? *row.triggered_volume_m3 / 1e9 : std::numeric_limits<double>::quiet_NaN());
        any_triggered = any_triggered || row.triggered_volume_m3.has_value();
    }
    figure.add_line(x, visible, plot::LineStyle{"#7f7f7f", 1.5, "6 3", 1.0}, "visible volume");
    figure.add_line(x, weighted, plot::LineStyle{"#1f77b4", 2.0, "", 1.0}, "efficiency-weighted visible volume");
    if (any_triggered) figure.add_line(x, triggered, plot::LineStyle{"#2ca02c", 2.0, "", 1.0}, "triggered volume");
    figure.add_markers(x, weighted, plot::MarkerStyle{"#1f77b4", 3.5, "circle"});
    const double best_x[] = {scan.rows[scan.best].value};
    const double best_y[] = {weighted[scan.best]};
    figure.add_markers(best_x, best_y, plot::MarkerStyle{"#d62728", 6.0, "diamond"}, "largest weighted volume");
    out << figure.svg();
}

}  // namespace firnray
