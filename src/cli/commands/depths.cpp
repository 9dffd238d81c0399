// firnray depths: scan candidate receiver depths and report, for a cylindrical source region,
// how much of it one receiver sees, how much by two paths, and how far apart those arrive.
#include <algorithm>
#include <optional>

#include <fmt/format.h>

#include "cli/commands.hpp"
#include "cli/common.hpp"
#include "cli/output_set.hpp"
#include "core/errors.hpp"
#include "core/text.hpp"
#include "locate/resolution_map.hpp"
#include "solver/make_solver.hpp"
#include "station/depth_scan.hpp"
#include "output/map_output.hpp"
#include "uncertainty/map_uncertainty.hpp"

namespace firnray::cli {

namespace {

struct DepthsArguments {
    std::string model_path, depths = "20:200:10";
    std::string source_distance = "0:1500", source_depth = "0:500";
    int distance_cells = 300, depth_cells = 200;
    double amplitude_threshold = 0.0;
    std::string solver = "auto", format = "csv", output = "-", plot_path;
    int ray_parameters = 1500;
    int max_bounces = DepthScanOptions{}.max_bounces;
    bool no_bottom = false;
    double memory_limit_mb = default_memory_limit_mb;
    // --resolution: the station lowered to each candidate depth, its Cramér–Rao figures per depth.
    std::string resolution_station;
    int resolution_distance_cells = 30, resolution_depth_cells = 20;
    double resolution_azimuth_deg = 0.0, timing_sigma_ns = 0.5;
    UncertaintyArguments uncertainty;
    RunOptions run;
};

// Rough sizes, for the memory check: a map cell and the time-between list, per cell; an
// arrival-table entry; a table row.
constexpr double bytes_per_cell = sizeof(MapCell) + 2 * sizeof(double);
constexpr double arrival_bytes_per_ray_parameter = 200.0;
constexpr double bytes_per_row = 200.0;

int run_depths(const DepthsArguments& args) {
    OutputSet outputs;
    outputs.declare("--plot", args.plot_path, OutputFormat::svg);
    outputs.declare("--output", args.output, output_format_named(args.format));
    DepthScanOptions options;
    options.receiver_depths_m = parse_list_or_range(args.depths, "--depths");
    for (double d : options.receiver_depths_m)
        if (d < 0.0)
            throw UsageError("--depths", fmt::format("{} is not a depth: depths are positive, down", number_for_message(d)));
    options.region = parse_source_region(args.source_distance, args.source_depth, args.distance_cells, args.depth_cells,
                                         "the receiver");
    const double rows = static_cast<double>(options.receiver_depths_m.size());
    const auto model = load_model_or_default(args.model_path);
    // One receiver depth at a time: at most one stratified table (logs, bottoms, deep ice) at once.
    double deepest = options.region.depth_max_m;
    for (double d : options.receiver_depths_m) deepest = std::max(deepest, d);
    check_memory_estimate(fmt::format("a depth scan over {} x {} cells", args.distance_cells, args.depth_cells),
                          static_cast<double>(options.region.cells()) * bytes_per_cell +
                              args.ray_parameters * arrival_bytes_per_ray_parameter + rows * bytes_per_row +
                              stratified_map_memory_bytes(*model, deepest, !args.no_bottom,
                                                          static_cast<std::size_t>(args.depth_cells), args.ray_parameters,
                                                          args.max_bounces),
                          rows * bytes_per_row, args.memory_limit_mb);
    const SolverChoice solver_choice = parse_solver_choice(args.solver);
    const auto solver = make_solver(model, solver_choice);
    // Before the scan, so that a model without [uncertainty] fails at once (exit 3).
    const auto propagation = propagation_options(args.uncertainty, args.run);
    std::optional<ModelPerturbation> perturbation;
    if (propagation) perturbation.emplace(*model);
    if (args.amplitude_threshold > 0.0) options.amplitude_threshold_per_m = args.amplitude_threshold;
    options.ray_parameters = args.ray_parameters;
    options.max_bounces = args.max_bounces;
    options.bottom_paths = !args.no_bottom;
    options.threads = args.run.thread_count();
    options.control = make_run_control(args.run, "depth scan");
    // Read before the scan, so that a bad station file fails at once.
    std::optional<Station> resolution_station;
    if (!args.resolution_station.empty()) resolution_station = load_station_file(args.resolution_station);
    const DepthScan scan = scan_receiver_depths(*solver, options);
    finish_progress(args.run);
    // Every model of the propagation is scanned whole on the same grid, one at a time per thread.
    std::optional<DepthScanUncertainty> uncertainty;
    if (perturbation) {
        uncertainty = propagate_depth_scan_uncertainty(*perturbation, solver_choice, options, *propagation,
                                                       make_run_control(args.run, "volume uncertainty"));
        finish_progress(args.run);
    }
    const DepthScanUncertainty* volume_uncertainty = uncertainty ? &*uncertainty : nullptr;

    // The same region, seen from the station centre, on a grid of its own: every cell costs a
    // path search per receiver, so the visibility grid would be far too fine. One map is held at
    // a time, at most 500 x 500 cells (the options' caps), so it needs no memory check of its own.
    std::optional<DepthResolutionScan> resolution;
    if (resolution_station) {
        MapGrid grid = options.region;
        grid.distance_cells = args.resolution_distance_cells;
        grid.depth_cells = args.resolution_depth_cells;
        ResolutionOptions resolution_options;
        resolution_options.fisher.paths.max_bounces = args.max_bounces;
        resolution_options.fisher.paths.bottom_paths = !args.no_bottom;
        resolution_options.fisher.timing_sigma_ns = args.timing_sigma_ns;
        resolution_options.azimuth_deg = args.resolution_azimuth_deg;
        resolution_options.threads = args.run.thread_count();
        resolution_options.control = make_run_control(args.run, "resolution by depth");
        resolution = scan_resolution_by_depth(*solver, *resolution_station, options.receiver_depths_m, grid, resolution_options);
        finish_progress(args.run);
    }
    const DepthResolutionScan* resolution_rows = resolution ? &*resolution : nullptr;

    outputs.set_writer(args.output, [&](std::ostream& out) {
        if (args.format == "json")
            write_depth_scan_json(out, scan, *model, options.region, resolution_rows, volume_uncertainty);
        else write_depth_scan_csv(out, scan, resolution_rows, volume_uncertainty);
    });
    outputs.set_writer(args.plot_path, [&](std::ostream& out) {
        write_depth_scan_svg(out, scan, *model, options.region, volume_uncertainty, resolution_rows);
    });
    outputs.write_all();
    return 0;
}

}  // namespace

void add_depths_command(CLI::App& app, CommandSlot& slot) {
    auto args = std::make_shared<DepthsArguments>();
    CLI::App* cmd = app.add_subcommand("depths", "Scan candidate receiver depths: visible volume, two-path volume, time between the paths");
    add_model_option(cmd, args->model_path);
    cmd->add_option("--depths", args->depths, "candidate receiver depths (m, positive down): a list a,b,c or START:STOP:STEP")
        ->capture_default_str();
    auto* distance = cmd->add_option("--source-distance", args->source_distance,
                                     "source region: horizontal distance MIN:MAX from the receiver (m)")
                         ->type_name("MIN:MAX")
                         ->capture_default_str();
    add_deprecated_option(
        cmd, "--max-distance", distance,
        [args](const std::string& radius) {
            require_in_range(parse_number(radius, "--max-distance"), 1e-9, 1e9, "--max-distance", "the radius (m)");
            args->source_distance = "0:" + radius;
        },
        "0:R");
    cmd->add_option("--source-depth", args->source_depth, "source region: depth MIN:MAX (m, positive down)")
        ->type_name("MIN:MAX")
        ->capture_default_str();
    cmd->add_option("--distance-cells", args->distance_cells, "radial cells of the region")->capture_default_str()->check(CLI::Range(1, 20000));
    cmd->add_option("--depth-cells", args->depth_cells, "depth cells of the region")->capture_default_str()->check(CLI::Range(1, 20000));
    cmd->add_option("--amplitude-threshold", args->amplitude_threshold,
                    "also report the volume whose received amplitude factor (1/m) exceeds this")
        ->check(finite_positive());
    add_solver_option(cmd, args->solver);
    add_ray_parameters_option(cmd, args->ray_parameters);
    add_map_path_options(cmd, args->max_bounces, args->no_bottom);
    auto* resolution = cmd->add_option("--resolution", args->resolution_station,
                                       "also report, per depth, the Cramér–Rao resolution of this station lowered "
                                       "so that its shallowest receiver is at that depth")
                           ->type_name("STATION.toml");
    cmd->add_option("--resolution-azimuth-deg", args->resolution_azimuth_deg,
                    "with --resolution: direction of the source plane from the station centre, degrees from +x toward +y (default 0)")
        ->check(finite_in_range(-360.0, 360.0))
        ->needs(resolution);
    cmd->add_option("--resolution-distance-cells", args->resolution_distance_cells,
                    "with --resolution: distance columns of its grid over the region")
        ->capture_default_str()
        ->check(CLI::Range(1, 500))
        ->needs(resolution);
    cmd->add_option("--resolution-depth-cells", args->resolution_depth_cells,
                    "with --resolution: depth rows of its grid over the region")
        ->capture_default_str()
        ->check(CLI::Range(1, 500))
        ->needs(resolution);
    cmd->add_option("--timing-sigma-ns", args->timing_sigma_ns, "with --resolution: 1σ timing uncertainty of every pulse (ns)")
        ->capture_default_str()
        ->check(finite_positive())
        ->needs(resolution);
    cmd->add_option("--format", args->format, "csv or json")->capture_default_str()->check(one_of({"csv", "json"}));
    add_memory_limit_option(cmd, args->memory_limit_mb);
    add_uncertainty_options(cmd, args->uncertainty);
    cmd->add_option("--output,-o", args->output, "table, written whole or not at all (default: stdout)")->type_name("FILE");
    cmd->add_option("--plot", args->plot_path, "SVG of each metric against depth, with the best depth marked")->type_name("FILE.svg");
    add_run_options(cmd, args->run);
    cmd->footer(R"(
The region is a cylinder (or a ring) around the receiver: horizontal distances --source-distance
and depths --source-depth. Volumes are the cylindrical integral over visible cells (m^3); the best
depth is the one whose receiver sees the largest volume (the shallower on a tie). The median
time between paths is weighted by volume over the cells that have a direct and a second path.
Every path kind counts (ducted and bottom-reflected included, up to --max-bounces turns); the
volumes seen only through ducted or only through bottom-reflected paths have columns of their
own, and what is left out on purpose is named on a '# left out:' line (JSON: "left_out").

--resolution STATION.toml adds, per candidate depth, how well that station would reconstruct a
source in the region (docs/locate.md): the station is lowered as a whole so that its shallowest
receiver sits at the depth, and the Cramér–Rao bound of every path each receiver sees (two
pulses per channel) is computed on a coarser grid of the same region, seen from the station
centre in the plane at --resolution-azimuth-deg. Three columns follow (JSON: "resolution"):
resolution_median_sigma_distance_m and resolution_median_sigma_depth_m, the median 1σ over the
resolved cells (empty where none is), and resolution_unresolved_fraction, the share of cells
that fewer than 4 pulses see or that the pulses leave free.

--uncertainty (linearised) or --uncertainty-samples N (Monte Carlo, --seed S) carries the
model's [uncertainty] table into the volumes (docs/uncertainty.md): each model is scanned whole
on the same grid, so this costs one scan per model (7 for a linearised 3-parameter model, N+1
for Monte Carlo). A '# uncertainty:' line (JSON: "uncertainty") says how, and the 1σ columns
come last: visible_volume_sigma_m3, visible_fraction_sigma, two_path_volume_sigma_m3,
strong_volume_sigma_m3, ducted_only_volume_sigma_m3, bottom_only_volume_sigma_m3 (JSON: "sigma"
per depth); the plot draws the visible and two-path shares with ± 1σ bands. A model without
[uncertainty] is refused (exit 3).

Example: receivers from 20 to 200 m, sources within 1.5 km and 300 m deep
  firnray depths --depths 20:200:10 --source-distance 0:1500 --source-depth 0:300 --plot depths.svg
The same with the resolution of a station's layout at each depth
  firnray depths --depths 20:200:20 --source-distance 0:1500 --source-depth 0:300 --resolution station.toml
The volumes' 1σ, linearised, for a model with an [uncertainty] table
  firnray depths --model fitted.toml --depths 20:200:20 --uncertainty --plot depths-band.svg)");
    cmd->callback([args, &slot] { slot.run = [args] { return run_depths(*args); }; });
}

}  // namespace firnray::cli
