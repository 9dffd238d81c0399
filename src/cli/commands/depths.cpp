// firnray depths: scan candidate receiver depths and report, for a cylindrical source region,
// how much of it one receiver sees, how much by two paths, and how far apart those arrive.
#include <fmt/format.h>

#include "cli/commands.hpp"
#include "cli/common.hpp"
#include "core/errors.hpp"
#include "solver/make_solver.hpp"
#include "station/depth_scan.hpp"
#include "output/map_output.hpp"

namespace firnray::cli {

namespace {

struct DepthsArguments {
    std::string model_path, depths = "20:200:10";
    double max_distance_m = 1500.0;
    std::string source_depth = "0:500";
    int distance_cells = 300, depth_cells = 200;
    double amplitude_threshold = 0.0;
    std::string solver = "auto", format = "csv", output = "-", plot_path;
    int ray_parameters = 1500;
    RunOptions run;
};

int run_depths(const DepthsArguments& args) {
    const auto model = load_model_or_default(args.model_path);
    const auto solver = make_solver(model, parse_solver_choice(args.solver));
    DepthScanOptions options;
    options.receiver_depths_m = parse_list_or_range(args.depths, "--depths");
    for (double d : options.receiver_depths_m)
        if (d < 0.0) throw UsageError("--depths", fmt::format("{} is not a depth: depths are positive, down", d));
    options.region.distance_min_m = 0.0;
    options.region.distance_max_m = args.max_distance_m;
    options.region.distance_cells = args.distance_cells;
    std::tie(options.region.depth_min_m, options.region.depth_max_m) = parse_span(args.source_depth, "--source-depth");
    options.region.depth_cells = args.depth_cells;
    if (args.amplitude_threshold > 0.0) options.amplitude_threshold_per_m = args.amplitude_threshold;
    options.ray_parameters = args.ray_parameters;
    options.threads = args.run.thread_count();
    options.control = make_run_control(args.run, "depth scan");
    const DepthScan scan = scan_receiver_depths(*solver, options);
    finish_progress(args.run);

    const std::string table = args.format == "json" ? depth_scan_json(scan, *model, options.region) : depth_scan_csv(scan);
    const std::string svg = args.plot_path.empty() ? "" : depth_scan_svg(scan, *model, options.region);
    if (!args.plot_path.empty()) emit(args.plot_path, svg);
    emit(args.output, table);
    return 0;
}

}  // namespace

void add_depths_command(CLI::App& app, CommandSlot& slot) {
    auto args = std::make_shared<DepthsArguments>();
    CLI::App* cmd = app.add_subcommand("depths", "Scan candidate receiver depths: visible volume, two-path volume, time between the paths");
    add_model_option(cmd, args->model_path);
    cmd->add_option("--depths", args->depths, "candidate receiver depths (m, positive down): a list a,b,c or START:STOP:STEP")
        ->capture_default_str();
    cmd->add_option("--max-distance", args->max_distance_m, "radius of the source region around the receiver (m)")
        ->capture_default_str()
        ->check(CLI::PositiveNumber);
    cmd->add_option("--source-depth", args->source_depth, "depth range MIN:MAX of the source region (m)")->capture_default_str();
    cmd->add_option("--distance-cells", args->distance_cells, "radial cells of the region")->capture_default_str()->check(CLI::Range(1, 20000));
    cmd->add_option("--depth-cells", args->depth_cells, "depth cells of the region")->capture_default_str()->check(CLI::Range(1, 20000));
    cmd->add_option("--amplitude-threshold", args->amplitude_threshold,
                    "also report the volume whose received amplitude factor (1/m) exceeds this")
        ->check(CLI::PositiveNumber);
    add_solver_option(cmd, args->solver);
    add_ray_parameters_option(cmd, args->ray_parameters);
    cmd->add_option("--format", args->format, "csv or json")->capture_default_str()->check(CLI::IsMember({"csv", "json"}));
    cmd->add_option("--output,-o", args->output, "table (default: stdout)")->type_name("FILE");
    cmd->add_option("--plot", args->plot_path, "SVG of each metric against depth, with the best depth marked")->type_name("FILE.svg");
    add_run_options(cmd, args->run);
    cmd->footer(R"(
The region is a cylinder around the receiver: horizontal distance 0..--max-distance and source
depths --source-depth. Volumes are the cylindrical integral over visible cells (m^3); the best
depth is the one whose receiver sees the largest volume (the shallower on a tie). The median
time between paths is weighted by volume over the cells that have a direct and a second path.

Example: receivers from 20 to 200 m, sources within 1.5 km and 300 m deep
  firnray depths --depths 20:200:10 --max-distance 1500 --source-depth 0:300 --plot depths.svg)");
    cmd->callback([args, &slot] { slot.run = [args] { return run_depths(*args); }; });
}

}  // namespace firnray::cli
