// firnray trace: a fan of rays from one point, written as CSV or JSON, optionally plotted as SVG.
#include <algorithm>
#include <cmath>
#include <memory>
#include <string>
#include <vector>

#include <fmt/format.h>

#include "cli/commands.hpp"
#include "core/constants.hpp"
#include "io/atomic_file.hpp"
#include "model/model_file.hpp"
#include "plot/figure.hpp"
#include "trace/ray_tracer.hpp"
#include "trace/trace_output.hpp"

namespace firnray::cli {

namespace {

std::vector<std::string> split(const std::string& text, char sep) {
    std::vector<std::string> parts;
    std::size_t start = 0;
    for (;;) {
        const std::size_t end = text.find(sep, start);
        parts.push_back(text.substr(start, end == std::string::npos ? std::string::npos : end - start));
        if (end == std::string::npos) return parts;
        start = end + 1;
    }
}

// A finite number filling the whole text, or an explanation.
bool to_number(const std::string& text, double& value) {
    try {
        std::size_t used = 0;
        value = std::stod(text, &used);
        return used == text.size() && std::isfinite(value);
    } catch (const std::exception&) {
        return false;
    }
}

// "X,Z" in metres.
std::string parse_point(const std::string& text, double& x, double& z) {
    const auto parts = split(text, ',');
    if (parts.size() != 2 || !to_number(parts[0], x) || !to_number(parts[1], z))
        return "expected X,Z in metres (two numbers, z up, e.g. 0,-150), got '" + text + "'";
    return {};
}

// "a,b,c" (a list) or "START:STOP:STEP" (a range, STOP included within rounding), in degrees.
std::string parse_angles(const std::string& text, bool range, std::vector<double>& out) {
    out.clear();
    if (!range) {
        for (const auto& part : split(text, ',')) {
            double v;
            if (!to_number(part, v)) return "expected a comma-separated list of angles in degrees, got '" + text + "'";
            out.push_back(v);
        }
        return {};
    }
    const auto parts = split(text, ':');
    double start, stop, step;
    if (parts.size() != 3 || !to_number(parts[0], start) || !to_number(parts[1], stop) || !to_number(parts[2], step))
        return "expected START:STOP:STEP in degrees (e.g. 60:120:5), got '" + text + "'";
    if (step == 0.0 || (stop - start) * step < 0.0)
        return "the step must be non-zero and lead from START to STOP, got '" + text + "'";
    const double count = std::floor((stop - start) / step + 1e-9) + 1.0;
    if (count > 100000) return "the range gives more than 100000 angles";
    for (int i = 0; i < static_cast<int>(count); ++i) out.push_back(start + i * step);
    return {};
}

CLI::Validator point_check() {
    return CLI::Validator(
        [](std::string& text) {
            double x, z;
            return parse_point(text, x, z);
        },
        "X,Z");
}

CLI::Validator angles_check(bool range) {
    return CLI::Validator(
        [range](std::string& text) {
            std::vector<double> angles;
            return parse_angles(text, range, angles);
        },
        range ? "START:STOP:STEP" : "LIST");
}

std::string branch_colour(BranchKind kind) {
    switch (kind) {
        case BranchKind::ice: return "#1f5fa8";
        case BranchKind::ice_transmitted: return "#2b9348";
        case BranchKind::air: return "#7b3fa0";
        case BranchKind::air_transmitted: return "#e07b00";
    }
    return "#444444";
}

std::string fan_svg(const FirnModel& model, const std::vector<RayTrace>& rays, double x_from, double z_from) {
    double z_low = std::min(0.0, z_from), z_high = std::max(0.0, z_from);
    for (const RayTrace& ray : rays)
        for (const RayBranch& b : ray.branches)
            for (const RayPoint& p : b.points) {
                z_low = std::min(z_low, p.z_m);
                z_high = std::max(z_high, p.z_m);
            }
    const double margin = 0.05 * std::max(z_high - z_low, 1.0);
    z_high = std::max(z_high, 0.0) + margin;
    z_low -= margin;

    plot::Figure figure;
    figure.title(fmt::format("Rays from x = {} m, z = {} m; model: {}", x_from, z_from,
                             model.name.empty() ? model.index->describe() : model.name));
    figure.x_label("horizontal distance x (m)");
    figure.y_label("z (m, up; surface at z = 0)");
    figure.y_range(z_low, z_high);
    figure.add_y_band(0.0, z_high, "#e3f1fb", "air");
    figure.add_hline(0.0, plot::LineStyle{"#333333", 1.2, "", 1.0}, "surface");
    if (model.bottom) figure.add_hline(model.bottom->z_m, plot::LineStyle{"#8c564b", 1.5, "6 3", 1.0}, "bottom");
    bool legend_done[4] = {false, false, false, false};
    for (const RayTrace& ray : rays)
        for (const RayBranch& b : ray.branches) {
            if (b.points.size() < 2) continue;
            std::vector<double> xs, zs;
            for (const RayPoint& p : b.points) {
                xs.push_back(p.x_m);
                zs.push_back(p.z_m);
            }
            const int k = static_cast<int>(b.kind);
            const std::string legend = legend_done[k] ? "" : to_string(b.kind) + " rays";
            legend_done[k] = true;
            figure.add_line(xs, zs, plot::LineStyle{branch_colour(b.kind), 1.2, "", 0.9}, legend);
        }
    std::vector<double> source_x{x_from}, source_z{z_from};
    figure.add_markers(source_x, source_z, plot::MarkerStyle{"#d62728", 4.0, "circle"}, "launch point");
    return figure.svg();
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
    const FirnModel model = a.model_path.empty() ? default_model() : load_model_file(a.model_path);
    const auto shared_model = std::make_shared<const FirnModel>(model);

    double x_from, z_from;
    parse_point(a.from, x_from, z_from);  // checked by the option's validator
    std::vector<double> zenith_deg;
    parse_angles(a.zenith_range.empty() ? a.zenith_list : a.zenith_range, !a.zenith_range.empty(), zenith_deg);

    TraceOptions options;
    options.max_distance_m = a.max_distance_m;
    options.max_length_m = a.max_length_m;
    options.floor_z_m = a.floor_z_m;
    options.ceiling_z_m = std::isnan(a.ceiling_z_m) ? std::max(50.0, z_from) : a.ceiling_z_m;
    options.tolerances.relative = a.relative_tolerance;
    options.tolerances.absolute = a.absolute_tolerance;
    options.max_surface_interactions = a.max_interactions;
    options.max_branches = a.max_branches;
    const RayTracer tracer(shared_model, options);

    std::vector<RayTrace> rays;
    rays.reserve(zenith_deg.size());
    for (const double angle : zenith_deg) {
        const RayLaunch launch{x_from, z_from, deg_to_rad(angle)};
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
    const std::string text = a.format == "json" ? trace_json(model, rays) : trace_csv(rays);
    const std::string svg = a.plot_path.empty() ? std::string() : fan_svg(model, rays, x_from, z_from);
    if (!a.plot_path.empty()) write_text_file(a.plot_path, svg);
    write_text_file(a.output, text);
    return 0;
}

}  // namespace

void add_trace_command(CLI::App& app, CommandSlot& slot) {
    auto args = std::make_shared<TraceArguments>();
    CLI::App* cmd = app.add_subcommand(
        "trace", "Trace a fan of rays from a point: curved rays in the ice, straight lines in the air, Fresnel "
                 "reflection and transmission at the surface, reflection at the model's bottom");
    cmd->add_option("--model", args->model_path, "Model file (TOML); default: the built-in generic polar firn model");
    cmd->add_option("--from", args->from, "Launch point X,Z in metres (z up; z > 0 starts in the air)")
        ->required()
        ->check(point_check());
    auto* list = cmd->add_option("--zenith-deg", args->zenith_list, "Launch zenith angles, a list: 60,80,100")
                     ->check(angles_check(false));
    auto* range = cmd->add_option("--zenith-range", args->zenith_range,
                                  "Launch zenith angles, a range START:STOP:STEP in degrees (STOP included)")
                      ->check(angles_check(true));
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
    cmd->callback([cmd, args, &slot] {
        if (args->zenith_list.empty() && args->zenith_range.empty())
            throw CLI::RequiredError("--zenith-deg or --zenith-range");
        (void)cmd;
        slot.run = [args] { return run_trace(*args); };
    });
}

}  // namespace firnray::cli
