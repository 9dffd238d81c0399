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
#include "core/constants.hpp"
#include "trace/ray_tracer.hpp"
#include "output/trace_output.hpp"

namespace firnray::cli {

namespace {

// --zenith-deg takes a list only and --zenith-range a range only, so each reads as its name says.
// More angles than most_zenith_angles is a mistyped step rather than a fan anyone wants.
constexpr std::size_t most_zenith_angles = 100000;

Point3 launch_point(const std::string& text) { return parse_point(text, "--from", PointForm::xz); }
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
    double floor_z_m = -std::numeric_limits<double>::infinity();
    double ceiling_z_m = std::numeric_limits<double>::quiet_NaN();
    double relative_tolerance = IntegrationTolerances{}.relative;
    double absolute_tolerance = IntegrationTolerances{}.absolute;
    std::string sample = "spacing";
    double spacing_m = 1.0;
    int max_interactions = 32;
    int max_branches = 16;
    std::string format = "csv";
    std::string output = "-";
    std::string plot_path;
};

int run_trace(const TraceArguments& a) {
    const Point3 from = launch_point(a.from);  // both checked while parsing the command line
    const std::vector<double> zenith_deg =
        a.zenith_range.empty() ? zenith_list_deg(a.zenith_list) : zenith_range_deg(a.zenith_range);
    const auto model = load_model_or_default(a.model_path);

    TraceOptions options;
    options.max_distance_m = a.max_distance_m;
    options.max_length_m = a.max_length_m;
    options.floor_z_m = a.floor_z_m;
    options.ceiling_z_m = std::isnan(a.ceiling_z_m) ? std::max(50.0, from.z_m) : a.ceiling_z_m;
    options.tolerances.relative = a.relative_tolerance;
    options.tolerances.absolute = a.absolute_tolerance;
    options.max_surface_interactions = a.max_interactions;
    options.max_branches = a.max_branches;
    const RayTracer tracer(model, options);

    std::vector<RayTrace> rays;
    rays.reserve(zenith_deg.size());
    for (const double angle : zenith_deg) {
        const RayLaunch launch{from.x_m, from.z_m, deg_to_rad(angle)};
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

    // Render everything before writing anything, so that a failure leaves no partial set of files.
    const std::string text = a.format == "json" ? trace_json(*model, rays) : trace_csv(rays);
    const std::string svg = a.plot_path.empty() ? std::string() : ray_fan_svg(*model, rays, from.x_m, from.z_m);
    if (!a.plot_path.empty()) emit(a.plot_path, svg);
    emit(a.output, text);
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
        ->check(CLI::PositiveNumber);
    cmd->add_option("--max-length", args->max_length_m, "Arc length from the launch where rays stop (m)")
        ->capture_default_str()
        ->check(CLI::PositiveNumber);
    cmd->add_option("--floor-z", args->floor_z_m, "Rays in the ice stop below this z (m, <= 0); default: no floor")
        ->check(CLI::Range(-1e7, 0.0));
    cmd->add_option("--ceiling-z", args->ceiling_z_m,
                    "Rays in the air stop above this z (m, >= 0); default: 50 m or the launch height if higher")
        ->check(CLI::Range(0.0, 1e7));
    cmd->add_option("--relative-tolerance", args->relative_tolerance, "Per-step relative error of the integrator")
        ->capture_default_str()
        ->check(CLI::PositiveNumber);
    cmd->add_option("--absolute-tolerance", args->absolute_tolerance, "Per-step absolute error of the integrator (m)")
        ->capture_default_str()
        ->check(CLI::PositiveNumber);
    cmd->add_option("--sample", args->sample,
                    "Points written per branch: spacing (every --spacing metres of path), steps (every integration "
                    "step) or ends (start, events, end)")
        ->capture_default_str()
        ->check(CLI::IsMember({"spacing", "steps", "ends"}));
    cmd->add_option("--spacing", args->spacing_m, "Path length between written points with --sample spacing (m)")
        ->capture_default_str()
        ->check(CLI::PositiveNumber);
    cmd->add_option("--max-interactions", args->max_interactions, "Surface interactions allowed per ray")
        ->capture_default_str()
        ->check(CLI::Range(0, 100000));
    cmd->add_option("--max-branches", args->max_branches, "Branches (transmitted rays) followed per ray")
        ->capture_default_str()
        ->check(CLI::Range(1, 100000));
    cmd->add_option("--format", args->format, "Output format: csv (one row per point) or json (rays, branches, events)")
        ->capture_default_str()
        ->check(CLI::IsMember({"csv", "json"}));
    cmd->add_option("--output,-o", args->output, "Output file; - for standard output")->capture_default_str();
    cmd->add_option("--plot", args->plot_path, "Also draw the rays as an SVG figure into this file");
    cmd->footer(
        "\nConventions: z is up (m), the surface is z = 0 and the ice z < 0; zenith angles of the direction of\n"
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
