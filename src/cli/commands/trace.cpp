// firnray trace: a fan of rays from one point, written as CSV or JSON, optionally plotted as SVG.
#include <algorithm>
#include <cmath>
#include <limits>
#include <memory>
#include <string>
#include <vector>

#include <fmt/format.h>

#include "cli/commands.hpp"
#include "cli/common.hpp"
#include "cli/interrupt.hpp"
#include "cli/output_set.hpp"
#include "core/constants.hpp"
#include "core/errors.hpp"
#include "core/text.hpp"
#include "trace/ray_tracer.hpp"
#include "output/trace_output.hpp"

namespace firnray::cli {

namespace {

// --zenith-deg takes a list only and --zenith-range a range only, so each reads as its name says.
// More angles than most_zenith_angles is a mistyped step rather than a fan anyone wants.
constexpr std::size_t most_zenith_angles = 100000;

Point launch_point(const std::string& text) { return parse_point(text, "--from", PointForm::xz); }
std::vector<double> zenith_list_deg(const std::string& text) { return parse_list(text, "--zenith-deg"); }
std::vector<double> zenith_range_deg(const std::string& text) {
    std::vector<double> angles = parse_range(text, "--zenith-range");
    if (angles.size() > most_zenith_angles)
        throw UsageError("--zenith-range", fmt::format("the range gives more than {} angles", most_zenith_angles));
    return angles;
}

struct TraceArguments {
    std::string model_path;
    std::string from;
    std::string zenith_list;
    std::string zenith_range;
    double max_distance_m = 1000.0;
    double max_length_m = 5000.0;
    double floor_depth_m = std::numeric_limits<double>::infinity();
    double ceiling_height_m = std::numeric_limits<double>::quiet_NaN();
    double relative_tolerance = IntegrationTolerances{}.relative;
    double absolute_tolerance = IntegrationTolerances{}.absolute;
    std::string sample = "spacing";
    double spacing_m = 1.0;
    int max_bounces = 32;
    int max_branches = 16;
    std::string format = "csv";
    std::string output = "-";
    std::string plot_path;
    double memory_limit_mb = default_memory_limit_mb;
};

// Rough sizes, for the memory check of --sample spacing: a point as held (RayPoint, with the
// growth of its vector), its text as written, and its share of the plot. The CSV and JSON go out
// through a buffer of their own size (output/text_sink.hpp, io/json_writer.hpp), so the text is
// not held; the SVG figure is.
constexpr double held_bytes_per_point = sizeof(RayPoint) * 1.5;
constexpr double text_bytes_per_point = 60.0;
constexpr double svg_bytes_per_point = 60.0;
constexpr double text_buffer_bytes = 1 << 16;

void check_memory(const TraceArguments& a, std::size_t rays) {
    if (a.sample != "spacing") return;  // steps and ends: the count is known only once traced
    const double points = static_cast<double>(rays) * (a.max_length_m / a.spacing_m + 2.0);
    check_memory_estimate(fmt::format("{} rays sampled every {} m over {} m", rays, number_for_message(a.spacing_m), number_for_message(a.max_length_m)),
                          points * (held_bytes_per_point + (a.plot_path.empty() ? 0.0 : svg_bytes_per_point)) +
                              text_buffer_bytes,
                          points * text_bytes_per_point, a.memory_limit_mb);
}

int run_trace(const TraceArguments& a) {
    OutputSet outputs;
    outputs.declare("--plot", a.plot_path, OutputFormat::svg);
    outputs.declare("--output", a.output, output_format_named(a.format));
    const Point from = launch_point(a.from);  // both checked while parsing the command line
    const std::vector<double> zenith_deg =
        a.zenith_range.empty() ? zenith_list_deg(a.zenith_list) : zenith_range_deg(a.zenith_range);
    check_memory(a, zenith_deg.size());
    const auto model = load_model_or_default(a.model_path);

    TraceOptions options;
    options.max_distance_m = a.max_distance_m;
    options.max_length_m = a.max_length_m;
    options.floor_z_m = -a.floor_depth_m;
    options.ceiling_z_m = std::isnan(a.ceiling_height_m) ? std::max(50.0, from.z) : a.ceiling_height_m;
    options.tolerances.relative = a.relative_tolerance;
    options.tolerances.absolute = a.absolute_tolerance;
    options.max_surface_interactions = a.max_bounces;
    options.max_branches = a.max_branches;
    const RayTracer tracer(model, options);

    std::vector<RayTrace> rays;
    rays.reserve(zenith_deg.size());
    const std::atomic<bool>* cancel = install_interrupt_flag();
    for (const double angle : zenith_deg) {
        if (cancel->load()) throw Cancelled();
        const RayLaunch launch{from.x, from.z, deg_to_rad(angle)};
        if (a.sample == "steps") {
            EveryStepRecorder recorder;
            rays.push_back(tracer.trace(launch, recorder));
        } else if (a.sample == "ends") {
            EndpointRecorder recorder;
            rays.push_back(tracer.trace(launch, recorder));
        } else {
            FixedSpacingRecorder recorder(a.spacing_m);
            rays.push_back(tracer.trace(launch, recorder));
        }
    }

    outputs.set_writer(a.output, [&](std::ostream& out) {
        if (a.format == "json") write_trace_json(out, *model, rays);
        else write_trace_csv(out, rays);
    });
    outputs.set_writer(a.plot_path, [&](std::ostream& out) { write_ray_fan_svg(out, *model, rays, from.x, from.z); });
    outputs.write_all();
    return 0;
}

}  // namespace

void add_trace_command(CLI::App& app, CommandSlot& slot) {
    auto args = std::make_shared<TraceArguments>();
    CLI::App* cmd = app.add_subcommand(
        "trace", "Trace a fan of rays from a point: curved rays in the ice, straight lines in the air, Fresnel "
                 "reflection and transmission at the surface, reflection at the model's bottom");
    add_model_option(cmd, args->model_path);
    cmd->add_option("--from", args->from, "Launch point X,Z in metres (z up; z > 0 starts in the air)")
        ->required()
        ->check(parser_check(launch_point, "X,Z"));
    auto* list = cmd->add_option("--zenith-deg", args->zenith_list, "Launch zenith angles, a list: 60,80,100")
                     ->check(parser_check(zenith_list_deg, "LIST"));
    auto* range = cmd->add_option("--zenith-range", args->zenith_range,
                                  "Launch zenith angles, a range START:STOP:STEP in degrees (STOP included)")
                      ->check(parser_check(zenith_range_deg, "START:STOP:STEP"));
    list->excludes(range);
    range->excludes(list);
    cmd->add_option("--max-distance", args->max_distance_m, "Horizontal distance from the launch point where rays stop (m)")
        ->capture_default_str()
        ->check(finite_positive());
    cmd->add_option("--max-length", args->max_length_m, "Arc length from the launch where rays stop (m)")
        ->capture_default_str()
        ->check(finite_positive());
    auto* floor = cmd->add_option("--floor-depth", args->floor_depth_m,
                                  "Rays in the ice stop below this depth (m, positive down); default: no floor")
                      ->type_name("DEPTH")
                      ->check(finite_in_range(0.0, 1e7));
    auto* ceiling = cmd->add_option("--ceiling-height", args->ceiling_height_m,
                                    "Rays in the air stop above this height (m above the surface); default: 50 m or "
                                    "the launch height if higher")
                        ->type_name("HEIGHT")
                        ->check(finite_in_range(0.0, 1e7));
    add_deprecated_option(
        cmd, "--floor-z", floor,
        [args](const std::string& z) {
            const double value = parse_number(z, "--floor-z");
            require_in_range(value, -1e7, 0.0, "--floor-z", "the floor z (m, <= 0)");
            args->floor_depth_m = -value;
        },
        "DEPTH (positive, down)");
    add_deprecated_option(
        cmd, "--ceiling-z", ceiling,
        [args](const std::string& z) {
            const double value = parse_number(z, "--ceiling-z");
            require_in_range(value, 0.0, 1e7, "--ceiling-z", "the ceiling z (m, >= 0)");
            args->ceiling_height_m = value;
        },
        "HEIGHT");
    cmd->add_option("--relative-tolerance", args->relative_tolerance, "Per-step relative error of the integrator")
        ->capture_default_str()
        ->check(finite_positive());
    cmd->add_option("--absolute-tolerance", args->absolute_tolerance, "Per-step absolute error of the integrator (m)")
        ->capture_default_str()
        ->check(finite_positive());
    cmd->add_option("--sample", args->sample,
                    "Points written per branch: spacing (every --spacing metres of path), steps (every integration "
                    "step) or ends (start, events, end)")
        ->capture_default_str()
        ->check(one_of({"spacing", "steps", "ends"}));
    cmd->add_option("--spacing", args->spacing_m, "Path length between written points with --sample spacing (m)")
        ->capture_default_str()
        ->check(finite_positive());
    auto* bounces = cmd->add_option("--max-bounces", args->max_bounces,
                                    "Surface and bottom interactions (reflections, transmissions) allowed per ray")
                        ->capture_default_str()
                        ->check(CLI::Range(0, 100000));
    add_deprecated_option(cmd, "--max-interactions", bounces, [args](const std::string& count) {
        const double value = parse_number(count, "--max-interactions");
        require_in_range(value, 0.0, 100000.0, "--max-interactions", "the count");
        args->max_bounces = static_cast<int>(value);
    });
    cmd->add_option("--max-branches", args->max_branches, "Branches (transmitted rays) followed per ray")
        ->capture_default_str()
        ->check(CLI::Range(1, 100000));
    cmd->add_option("--format", args->format, "Output format: csv (one row per point) or json (rays, branches, events)")
        ->capture_default_str()
        ->check(one_of({"csv", "json"}));
    add_memory_limit_option(cmd, args->memory_limit_mb);
    cmd->add_option("--output,-o", args->output, "Output file, written whole or not at all; - for standard output")
        ->capture_default_str();
    cmd->add_option("--plot", args->plot_path, "Also draw the rays as an SVG figure into this file")->type_name("FILE.svg");
    cmd->footer(
        "\nConventions: the launch point is X,Z in metres where z is up, the surface is z = 0 and the ice z < 0;\n"
        "the floor and the ceiling are a depth and a height (m, positive); zenith angles of the direction of\n"
        "travel (0 = up, 90 = horizontal toward +x, 180 = down; negative angles travel toward -x); times in ns,\n"
        "times and lengths counted from the launch.\n"
        "Example: rays every 5 degrees from a transmitter 150 m deep, out to 1 km, with a plot:\n"
        "  firnray trace --from 0,-150 --zenith-range 40:140:5 --max-distance 1000 --plot fan.svg > fan.csv\n"
        "CSV columns: ray, branch, parent, kind, launch_zenith_deg, x_m, z_m, time_ns, length_m; kind is ice,\n"
        "ice-transmitted, air or air-transmitted. JSON adds each branch's events (surface and bottom\n"
        "reflections, turning points), its end reason, its amplitude factors [re, im] for s and p, and the\n"
        "drift of the ray invariants (an accuracy check).");
    cmd->callback([args, &slot] {
        if (args->zenith_list.empty() && args->zenith_range.empty())
            throw CLI::RequiredError("--zenith-deg or --zenith-range");
        slot.run = [args] { return run_trace(*args); };
    });
}

}  // namespace firnray::cli
