#include "output/resolution_output.hpp"

#include <cmath>
#include <limits>
#include <optional>
#include <vector>

#include <fmt/format.h>

#include "io/csv_writer.hpp"
#include "output/text_sink.hpp"
#include "plot/figure.hpp"

namespace firnray {

namespace {

constexpr double nan = std::numeric_limits<double>::quiet_NaN();

plot::CellGrid cells_of(const MapGrid& grid) {
    plot::CellGrid cells;
    for (int i = 0; i <= grid.distance_cells; ++i) cells.x_edges.push_back(grid.distance_min_m + i * grid.distance_step());
    for (int j = 0; j <= grid.depth_cells; ++j) cells.y_edges.push_back(grid.depth_min_m + j * grid.depth_step());
    return cells;
}

void append_optional(fmt::memory_buffer& b, std::optional<double> value, const char* name) {
    b.push_back(',');
    if (value) fmt::format_to(std::back_inserter(b), "{}", require_finite(*value, name));
}

}  // namespace

void write_resolution_csv(std::ostream& out, const ResolutionMap& map) {
    output::TextSink sink(out);
    sink.put("depth_m,distance_m,pulses,resolved,sigma_distance_m,sigma_depth_m,sigma_zenith_deg,sigma_azimuth_deg,reason");
    sink.end_row();
    auto& b = sink.buffer();
    for (int row = 0; row < map.grid.depth_cells; ++row)
        for (int column = 0; column < map.grid.distance_cells; ++column) {
            const CramerRao& cell = map.at(row, column);
            fmt::format_to(std::back_inserter(b), "{},{},{},{}", require_finite(map.grid.depth_at(row), "depth_m"),
                           require_finite(map.grid.distance_at(column), "distance_m"), cell.pulses,
                           cell.resolved ? 1 : 0);
            if (cell.resolved) {
                append_optional(b, cell.view.sigma_distance_m, "sigma_distance_m");
                append_optional(b, cell.view.sigma_depth_m, "sigma_depth_m");
                append_optional(b, cell.view.sigma_zenith_deg, "sigma_zenith_deg");
                append_optional(b, cell.view.sigma_azimuth_deg, "sigma_azimuth_deg");
                b.push_back(',');
            } else {
                b.append(std::string_view(",,,,,"));
                append_csv_field(b, cell.reason);
            }
            sink.end_row();
        }
    sink.finish();
}

void write_resolution_svg(std::ostream& out, const ResolutionMap& map, const FirnModel& model,
                          const std::string& station_name) {
    const struct {
        const char* title;
        const char* unit;
    } panels[] = {{"1σ of the distance", "m"}, {"1σ of the depth", "m"}, {"1σ of the zenith", "degrees"},
                  {"1σ of the azimuth", "degrees"}};
    std::vector<plot::Figure> figures;
    for (int q = 0; q < 4; ++q) {
        std::vector<double> values(map.cells.size(), nan);
        for (std::size_t c = 0; c < map.cells.size(); ++c) {
            const CramerRao& cell = map.cells[c];
            if (!cell.resolved) continue;  // blank: unresolved is not "zero uncertainty"
            const SourceView& v = cell.view;
            const std::optional<double> value = q == 0   ? std::optional<double>(v.sigma_distance_m)
                                                : q == 1 ? std::optional<double>(v.sigma_depth_m)
                                                : q == 2 ? v.sigma_zenith_deg
                                                         : v.sigma_azimuth_deg;
            if (value && *value > 0.0) values[c] = require_finite(*value, panels[q].title);
        }
        plot::Figure figure(640, 420);
        figure.title(panels[q].title);
        figure.x_label("horizontal distance from the station centre (m)");
        figure.y_label("source depth (m)");
        figure.invert_y();
        plot::ColourScale scale;
        scale.label = fmt::format("{} ({})", panels[q].title, panels[q].unit);
        scale.logarithmic = true;
        figure.value_map(cells_of(map.grid), std::move(values), scale);
        figures.push_back(std::move(figure));
    }
    std::vector<const plot::Figure*> pointers;
    for (const auto& f : figures) pointers.push_back(&f);
    out << plot::compose_figures(
        pointers, 2,
        fmt::format("Cramér–Rao resolution of {} (model: {}; timing 1σ {:g} ns; azimuth {:g}°; blank: unresolved, "
                    "fewer than 4 pulses or a free direction)",
                    station_name, model.name, map.timing_sigma_ns, map.azimuth_deg));
}

}  // namespace firnray
