// firnray shadow: which source positions a receiver or a station sees, on a grid of horizontal
// distance × depth, with the shadow boundary, as CSV tables and an SVG map.
#include <algorithm>
#include <cmath>
#include <optional>
#include <sstream>

#include <fmt/format.h>

#include "cli/commands.hpp"
#include "cli/common.hpp"
#include "cli/output_set.hpp"
#include "core/errors.hpp"
#include "core/text.hpp"
#include "solver/make_solver.hpp"
#include "output/map_output.hpp"
#include "station/visibility_map.hpp"
#include "uncertainty/map_uncertainty.hpp"

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
    int max_bounces = VisibilityOptions{}.max_bounces;
    bool no_bottom = false;
    std::string grid_path = "-", boundary_path, plot_path, colour_by = "auto";
    double memory_limit_mb = default_memory_limit_mb;
    UncertaintyArguments uncertainty;
    RunOptions run;
};

// Rough sizes, for the memory check: a grid CSV row, an arrival-table entry, an SVG cell (merged
// runs of equal cells make it smaller).
constexpr double grid_csv_bytes_per_cell = 70.0;
constexpr double arrival_bytes_per_ray_parameter = 200.0;
// The stratified table keeps cumulative legs per source depth and ray parameter.
constexpr double stratified_bytes_per_entry = 48.0;
constexpr double svg_bytes_per_cell = 60.0;
// The grid CSV goes out through the output layer's buffer of this size (output/text_sink.hpp),
// so that a large grid is never held as text.
constexpr double csv_buffer_bytes = 1 << 16;

// A propagation of the boundary's uncertainty holds two outputs per depth row for every model
// (the draws, or the 2K difference steps) and their covariance (propagate_uncertainty).
double uncertainty_bytes(const ShadowArguments& args, const MapGrid& grid, const ModelPerturbation* perturbation) {
    if (perturbation == nullptr) return 0.0;
    const double outputs = 2.0 * grid.depth_cells;
    const double models = args.uncertainty.samples > 0 ? args.uncertainty.samples : 2.0 * perturbation->dimension();
    return (outputs * outputs + models * outputs) * sizeof(double);
}

void check_memory(const ShadowArguments& args, const MapGrid& grid, std::size_t receivers, bool stratified,
                  const ModelPerturbation* perturbation) {
    const double cells = static_cast<double>(grid.cells());
    const double memory = cells * sizeof(MapCell) + grid.depth_cells * sizeof(double) +
                          static_cast<double>(receivers) * args.ray_parameters * arrival_bytes_per_ray_parameter +
                          (stratified ? static_cast<double>(receivers) * (grid.depth_cells + 1.0) *
                                            args.ray_parameters * stratified_bytes_per_entry
                                      : 0.0) +
                          (args.plot_path.empty() ? 0.0 : cells * svg_bytes_per_cell) +
                          csv_buffer_bytes + uncertainty_bytes(args, grid, perturbation);
    const std::string what = fmt::format("a shadow map of {} x {} cells{}", grid.distance_cells, grid.depth_cells,
                                         perturbation ? " with its boundary's uncertainty" : "");
    check_memory_estimate(what, memory,
                          cells * grid_csv_bytes_per_cell, args.memory_limit_mb);
}

int run_shadow(const ShadowArguments& args) {
    OutputSet outputs;
    outputs.declare("--boundary", args.boundary_path, OutputFormat::csv);
    outputs.declare("--plot", args.plot_path, OutputFormat::svg);
    outputs.declare("--output", args.grid_path, OutputFormat::csv);

    const MapGrid grid = parse_source_region(args.distance_range, args.depth_range, args.distance_cells,
                                             args.depth_cells, "the receiver");

    const auto receivers = select_receivers(args.station_path, args.receiver_text, args.receivers_subset, "--receiver");
    if (static_cast<std::size_t>(args.min_receivers) > receivers.size())
        throw UsageError("--min-receivers", fmt::format("{} is more receivers than there are ({})", args.min_receivers,
                                                        receivers.size()));
    const auto model = load_model_or_default(args.model_path);
    double deepest = grid.depth_max_m;
    for (const Receiver& r : receivers) deepest = std::max(deepest, -r.z_m);
    // Before the map, so that a model without [uncertainty] fails at once (exit 3).
    const auto propagation = propagation_options(args.uncertainty, args.run);
    std::optional<ModelPerturbation> perturbation;
    if (propagation) perturbation.emplace(*model);
    check_memory(args, grid, receivers.size(), needs_stratified_table(*model, deepest, !args.no_bottom),
                 perturbation ? &*perturbation : nullptr);
    const SolverChoice solver_choice = parse_solver_choice(args.solver);
    const auto solver = make_solver(model, solver_choice);

    VisibilityOptions options;
    options.min_receivers = args.min_receivers;
    options.azimuth_deg = args.azimuth_deg;
    options.ray_parameters = args.ray_parameters;
    options.max_bounces = args.max_bounces;
    options.bottom_paths = !args.no_bottom;
    options.threads = args.run.thread_count();
    options.control = make_run_control(args.run, "shadow map");
    const VisibilityMap map = compute_visibility_map(*solver, receivers, grid, options);
    finish_progress(args.run);
    std::optional<BoundaryUncertainty> uncertainty;
    if (perturbation) {
        uncertainty = propagate_boundary_uncertainty(*perturbation, solver_choice, receivers, grid, options, *propagation,
                                                     make_run_control(args.run, "boundary uncertainty"));
        finish_progress(args.run);
    }
    const BoundaryUncertainty* boundary_uncertainty = uncertainty ? &*uncertainty : nullptr;

    outputs.set_writer(args.grid_path, [&](std::ostream& out) { write_visibility_grid_csv(out, map); });
    outputs.set_writer(args.boundary_path, [&](std::ostream& out) { write_visibility_boundary_csv(out, map, boundary_uncertainty); });
    outputs.set_writer(args.plot_path, [&](std::ostream& out) {
        const std::string colouring = args.colour_by != "auto" ? args.colour_by
                                      : receivers.size() == 1  ? "kinds"
                                                               : "receivers";
        write_visibility_map_svg(out, map, *model, receivers, parse_map_colouring(colouring), boundary_uncertainty);
    });
    outputs.write_all();
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
        ->check(CLI::Range(1, 65535));
    cmd->add_option("--azimuth-deg", args->azimuth_deg,
                    "direction of the map plane from the station centre, degrees from +x toward +y (default 0)")
        ->check(finite_in_range(-360.0, 360.0));
    auto* distance = cmd->add_option("--source-distance", args->distance_range,
                                     "source region: horizontal distance MIN:MAX (m)")
                         ->type_name("MIN:MAX")
                         ->capture_default_str();
    cmd->add_option("--distance-cells", args->distance_cells, "grid columns")->capture_default_str()->check(CLI::Range(1, 20000));
    auto* depth = cmd->add_option("--source-depth", args->depth_range, "source region: depth MIN:MAX (m, positive down)")
                      ->type_name("MIN:MAX")
                      ->capture_default_str();
    cmd->add_option("--depth-cells", args->depth_cells, "grid rows")->capture_default_str()->check(CLI::Range(1, 20000));
    add_deprecated_option(cmd, "--distance", distance, [args](const std::string& v) { args->distance_range = v; });
    add_deprecated_option(cmd, "--depth", depth, [args](const std::string& v) { args->depth_range = v; });
    add_solver_option(cmd, args->solver);
    add_ray_parameters_option(cmd, args->ray_parameters);
    add_map_path_options(cmd, args->max_bounces, args->no_bottom);
    add_memory_limit_option(cmd, args->memory_limit_mb);
    add_uncertainty_options(cmd, args->uncertainty);
    cmd->add_option("--output,-o", args->grid_path, "grid CSV, one row per cell (default: stdout)")->type_name("FILE.csv");
    cmd->add_option("--boundary", args->boundary_path, "shadow boundary CSV: largest visible distance per source depth (with its 1σ under --uncertainty)")
        ->type_name("FILE.csv");
    cmd->add_option("--plot", args->plot_path, "SVG map")->type_name("FILE.svg");
    cmd->add_option("--colour-by", args->colour_by,
                    "what the map colours: kinds (path kinds), receivers (how many see it), time-between (ns), "
                    "first-time (ns), amplitude; auto = kinds for one receiver, receivers for a station")
        ->capture_default_str()
        ->check(one_of({"auto", "kinds", "receivers", "time-between", "first-time", "amplitude"}));
    add_run_options(cmd, args->run);
    cmd->footer(R"(
Grid cells are source positions; distances are measured from the receiver (or, for a station,
from the mean receiver position along --azimuth-deg); depths are positive, down. Each cell gives
the number and kinds of paths, the first-arrival time, the time between the first two paths and
a received amplitude factor (|Fresnel| x attenuation / spreading distance, per metre, for a unit
source). Cells beyond every path are the shadow zone. Outputs are written whole or not at all.
Path kinds: direct, refracted, reflected, refracted-below, ducted (two or more turns in a duct),
bottom (off the model's bottom); the kinds map shows positions seen only through ducted or only
through bottom-reflected paths. What is left out on purpose (--max-bounces, --no-bottom) is
named on a '# left out:' line before the CSV header. The boundary is each depth's exact largest
reach (for a station: where at least --min-receivers receivers still see the source).

--uncertainty (linearised) or --uncertainty-samples N (Monte Carlo, --seed S) carries the
model's [uncertainty] table into the boundary (docs/uncertainty.md): only the boundary is
recomputed for each model, from the receivers' exact reach. The boundary CSV then gains a
'# uncertainty:' line before its header (method, draws, seed, what the uncertainty is) and the
columns max_visible_distance_sigma_m (1σ; empty where the nominal boundary is not finite or no
1σ can be given), models_without_boundary and models_unbounded (Monte Carlo: how many draws had
no visible distance at that depth, or an unbounded one; linearised: 1 when the nominal model or
a difference step does). The map draws the boundary inside its ± 1σ band. A model without
[uncertainty] is refused (exit 3).

Example: the shadow zone of a receiver at 60 m depth, with its boundary and a map
  firnray shadow --receiver 0,-60 --source-distance 0:1500 --source-depth 0:300 \
      --output grid.csv --boundary boundary.csv --plot shadow.svg
Example: where at least 3 receivers of a station see a source
  firnray shadow --station demo/station.toml --min-receivers 3 --colour-by receivers --plot st.svg -o st.csv
Example: the boundary's 1σ band from 100 profiles drawn from a fitted model's covariance
  firnray shadow --model fitted.toml --receiver 0,-60 --uncertainty-samples 100 --boundary b.csv --plot band.svg)");
    cmd->callback([args, &slot] { slot.run = [args] { return run_shadow(*args); }; });
}

}  // namespace firnray::cli
