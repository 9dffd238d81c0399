// firnray resolution: how well a station can reconstruct a source, on a distance × depth grid:
// the Cramér–Rao bound of distance, depth, zenith and azimuth from the arrival times of every
// path each receiver sees (docs/locate.md).
#include <memory>

#include <fmt/format.h>

#include "cli/commands.hpp"
#include "cli/common.hpp"
#include "cli/output_set.hpp"
#include "core/text.hpp"
#include "locate/resolution_map.hpp"
#include "output/resolution_output.hpp"
#include "solver/make_solver.hpp"

namespace firnray::cli {

namespace {

struct ResolutionArguments {
    std::string model_path, station_path, receivers_subset;
    std::string distance_range = "0:1500", depth_range = "0:500";
    int distance_cells = 150, depth_cells = 50;
    double azimuth_deg = 0.0, timing_sigma_ns = 0.5, pulse_width_ns = 10.0;
    int max_bounces = 1;
    std::string solver = "auto", grid_path = "-", plot_path;
    double memory_limit_mb = default_memory_limit_mb;
    RunOptions run;
};

// Rough sizes, for the memory check: a cell held, a CSV row, an SVG cell in each of 4 panels.
constexpr double cell_bytes = sizeof(CramerRao) + 32.0;
constexpr double csv_bytes_per_cell = 90.0;
constexpr double svg_bytes_per_cell = 4 * 60.0;

int run_resolution(const ResolutionArguments& args) {
    OutputSet outputs;
    outputs.declare("--plot", args.plot_path, OutputFormat::svg);
    outputs.declare("--output", args.grid_path, OutputFormat::csv);

    const MapGrid grid = parse_source_region(args.distance_range, args.depth_range, args.distance_cells,
                                             args.depth_cells, "the station centre");
    const double cells = static_cast<double>(grid.cells());
    check_memory_estimate(fmt::format("a resolution map of {} x {} cells", grid.distance_cells, grid.depth_cells),
                          cells * (cell_bytes + (args.plot_path.empty() ? 0.0 : svg_bytes_per_cell)),
                          cells * csv_bytes_per_cell, args.memory_limit_mb);

    const auto receivers = select_receivers(args.station_path, "", args.receivers_subset, "--receiver");
    const Station station = load_station_file(args.station_path);
    const auto model = load_model_or_default(args.model_path);
    const auto solver = make_solver(model, parse_solver_choice(args.solver));

    ResolutionOptions options;
    options.fisher.paths.max_bounces = args.max_bounces;
    options.fisher.timing_sigma_ns = args.timing_sigma_ns;
    options.fisher.pulse_width_ns = args.pulse_width_ns;
    options.azimuth_deg = args.azimuth_deg;
    options.threads = args.run.thread_count();
    options.control = make_run_control(args.run, "resolution map");
    const ResolutionMap map = compute_resolution_map(*solver, receivers, grid, options);
    finish_progress(args.run);

    outputs.set_writer(args.grid_path, [&](std::ostream& out) { write_resolution_csv(out, map); });
    outputs.set_writer(args.plot_path, [&](std::ostream& out) { write_resolution_svg(out, map, *model, station.name); });
    outputs.write_all();
    return 0;
}

}  // namespace

void add_resolution_command(CLI::App& app, CommandSlot& slot) {
    auto args = std::make_shared<ResolutionArguments>();
    CLI::App* cmd = app.add_subcommand("resolution", "Cramér-Rao resolution map of a station: 1σ of distance, depth, zenith and azimuth of a source");
    add_model_option(cmd, args->model_path);
    auto* station = cmd->add_option("--station", args->station_path, "station file (TOML, docs/station-files.md)")
                        ->required()
                        ->type_name("FILE");
    cmd->add_option("--receivers", args->receivers_subset, "only these receivers (comma-separated names)")->needs(station);
    cmd->add_option("--azimuth-deg", args->azimuth_deg,
                    "direction of the map plane from the station centre, degrees from +x toward +y (default 0)")
        ->check(finite_in_range(-360.0, 360.0));
    cmd->add_option("--source-distance", args->distance_range, "source region: horizontal distance MIN:MAX (m)")
        ->type_name("MIN:MAX")
        ->capture_default_str();
    cmd->add_option("--distance-cells", args->distance_cells, "grid columns")->capture_default_str()->check(CLI::Range(1, 20000));
    cmd->add_option("--source-depth", args->depth_range, "source region: depth MIN:MAX (m, positive down)")
        ->type_name("MIN:MAX")
        ->capture_default_str();
    cmd->add_option("--depth-cells", args->depth_cells, "grid rows")->capture_default_str()->check(CLI::Range(1, 20000));
    cmd->add_option("--timing-sigma-ns", args->timing_sigma_ns, "1σ timing uncertainty of every pulse (ns)")
        ->capture_default_str()
        ->check(finite_positive());
    cmd->add_option("--pulse-width-ns", args->pulse_width_ns,
                    "two paths closer than this reach a channel as one pulse (ns)")
        ->capture_default_str()
        ->check(finite_in_range(0.0, 1e6));
    cmd->add_option("--max-bounces", args->max_bounces, "most surface/bottom bounces per path (default 1)")->check(CLI::Range(0, 32));
    add_solver_option(cmd, args->solver);
    add_memory_limit_option(cmd, args->memory_limit_mb);
    cmd->add_option("--output,-o", args->grid_path, "grid CSV, one row per cell (default: stdout)")->type_name("FILE.csv");
    cmd->add_option("--plot", args->plot_path, "SVG map: one panel per quantity, log colour scales")->type_name("FILE.svg");
    add_run_options(cmd, args->run);
    cmd->footer(R"(
Each cell is a source position (at the cell centre, along --azimuth-deg from the mean receiver
position). Its 1σ of distance (from the station centre), depth, zenith and azimuth is the
Cramér-Rao bound: the inverse of the Fisher information of the arrival times of the first two
paths at every receiver (one pulse where they are closer than --pulse-width-ns), with the
emission time unknown. It is the best any unbiased reconstruction can do. Cells seen by fewer
than 4 pulses, or whose pulses leave a direction free, are unresolved: empty 1σ columns, a
reason, blank on the map.

Example: the resolution of the demo station
  firnray resolution --station demo/station.toml --source-distance 0:1500 --source-depth 0:300 \
      --timing-sigma-ns 0.5 -o resolution.csv --plot resolution.svg)");
    cmd->callback([args, &slot] { slot.run = [args] { return run_resolution(*args); }; });
}

}  // namespace firnray::cli
