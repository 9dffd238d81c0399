// firnray shadow: which source positions a receiver or a station sees, on a grid of horizontal
// distance × depth, with the shadow boundary, as CSV tables and an SVG map.
#include <cmath>
#include <limits>
#include <sstream>

#include <fmt/format.h>

#include "cli/commands.hpp"
#include "cli/common.hpp"
#include "core/errors.hpp"
#include "solver/make_solver.hpp"
#include "output/map_output.hpp"
#include "station/visibility_map.hpp"

namespace firnray::cli {

namespace {

struct ShadowArguments {
    std::string model_path, station_path, receiver_text, receivers_subset;
    std::string distance_range = "0:2000", depth_range = "0:500";
    int distance_cells = 400, depth_cells = 200;
    int min_receivers = 1;
    double azimuth_deg = 0.0;
    std::string solver = "auto";
    int ray_parameters = 1500;
    std::string grid_path = "-", boundary_path, plot_path, colour_by = "auto";
    RunOptions run;
};

int run_shadow(const ShadowArguments& args) {
    const auto model = load_model_or_default(args.model_path);
    const auto solver = make_solver(model, parse_solver_choice(args.solver));
    const auto receivers = select_receivers(args.station_path, args.receiver_text, args.receivers_subset, "--receiver");

    MapGrid grid;
    std::tie(grid.distance_min_m, grid.distance_max_m) = parse_span(args.distance_range, "--distance");
    std::tie(grid.depth_min_m, grid.depth_max_m) = parse_span(args.depth_range, "--depth");
    grid.distance_cells = args.distance_cells;
    grid.depth_cells = args.depth_cells;

    VisibilityOptions options;
    options.min_receivers = args.min_receivers;
    options.azimuth_deg = args.azimuth_deg;
    options.ray_parameters = args.ray_parameters;
    options.threads = args.run.thread_count();
    options.control = make_run_control(args.run, "shadow map");
    const VisibilityMap map = compute_visibility_map(*solver, receivers, grid, options);
    finish_progress(args.run);

    // Render everything before writing anything, so that a failure leaves no output at all.
    const std::string grid_csv = visibility_grid_csv(map);
    const std::string boundary_csv = args.boundary_path.empty() ? "" : visibility_boundary_csv(map);
    const std::string svg = args.plot_path.empty()
                                ? ""
                                : visibility_map_svg(map, *model, receivers,
                                                     parse_map_colouring(args.colour_by != "auto" ? args.colour_by
                                                                         : receivers.size() == 1 ? "kinds"
                                                                                                 : "receivers"));
    if (!args.boundary_path.empty()) emit(args.boundary_path, boundary_csv);
    if (!args.plot_path.empty()) emit(args.plot_path, svg);
    emit(args.grid_path, grid_csv);
    return 0;
}

}  // namespace

void add_shadow_command(CLI::App& app, CommandSlot& slot) {
    auto args = std::make_shared<ShadowArguments>();
    CLI::App* cmd = app.add_subcommand("shadow", "Shadow and visibility map of source positions for a receiver or a station, with the shadow boundary");
    add_model_option(cmd, args->model_path);
    auto* receiver = cmd->add_option("--receiver", args->receiver_text, "one receiver at X,Z or X,Y,Z (m, z up, ice z < 0)")
                         ->type_name("POINT");
    auto* station = cmd->add_option("--station", args->station_path, "station file (TOML, docs/station-files.md)")
                        ->type_name("FILE");
    receiver->excludes(station);
    cmd->add_option("--receivers", args->receivers_subset, "with --station: only these receivers (comma-separated names)")
        ->needs(station);
    cmd->add_option("--min-receivers", args->min_receivers,
                    "a source position counts as visible when at least K receivers see it (default 1)")
        ->type_name("K")
        ->check(CLI::PositiveNumber);
    cmd->add_option("--azimuth-deg", args->azimuth_deg,
                    "direction of the map plane from the station centre, degrees from +x toward +y (default 0)");
    cmd->add_option("--distance", args->distance_range, "horizontal distance range MIN:MAX of source positions (m)")
        ->capture_default_str();
    cmd->add_option("--distance-cells", args->distance_cells, "grid columns")->capture_default_str()->check(CLI::Range(1, 20000));
    cmd->add_option("--depth", args->depth_range, "source depth range MIN:MAX (m, positive down)")->capture_default_str();
    cmd->add_option("--depth-cells", args->depth_cells, "grid rows")->capture_default_str()->check(CLI::Range(1, 20000));
    add_solver_option(cmd, args->solver);
    add_ray_parameters_option(cmd, args->ray_parameters);
    cmd->add_option("--output,-o", args->grid_path, "grid CSV, one row per cell (default: stdout)")->type_name("FILE");
    cmd->add_option("--boundary", args->boundary_path, "shadow boundary CSV: largest visible distance per source depth")
        ->type_name("FILE");
    cmd->add_option("--plot", args->plot_path, "SVG map")->type_name("FILE.svg");
    cmd->add_option("--colour-by", args->colour_by,
                    "what the map colours: kinds (path kinds), receivers (how many see it), time-between (ns), "
                    "first-time (ns), amplitude; auto = kinds for one receiver, receivers for a station")
        ->capture_default_str()
        ->check(CLI::IsMember({"auto", "kinds", "receivers", "time-between", "first-time", "amplitude"}));
    add_run_options(cmd, args->run);
    cmd->footer(R"(
Grid cells are source positions; distances are measured from the receiver (or, for a station,
from the mean receiver position along --azimuth-deg); depths are positive, down. Each cell gives
the number and kinds of paths, the first-arrival time, the time between the first two paths and
a received amplitude factor (|Fresnel| x attenuation / spreading distance, per metre, for a unit
source). Cells beyond every path are the shadow zone.

Example: the shadow zone of a receiver at 60 m depth, with its boundary and a map
  firnray shadow --receiver 0,-60 --distance 0:1500 --depth 0:300 \
      --output grid.csv --boundary boundary.csv --plot shadow.svg
Example: where at least 3 receivers of a station see a source
  firnray shadow --station demo/station.toml --min-receivers 3 --colour-by receivers --plot st.svg -o st.csv)");
    cmd->callback([args, &slot] { slot.run = [args] { return run_shadow(*args); }; });
}

}  // namespace firnray::cli
