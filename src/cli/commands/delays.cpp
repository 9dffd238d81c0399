// firnray delays: for a station and a list or grid of source positions, the arrival time of each
// path at each receiver, differences to a reference channel and between the first two paths,
// and optionally the derivatives of each time with respect to the source position.
#include <cmath>

#include <fmt/format.h>

#include "cli/commands.hpp"
#include "cli/common.hpp"
#include "cli/exit_codes.hpp"
#include "core/constants.hpp"
#include "solver/make_solver.hpp"
#include "output/delay_output.hpp"
#include "station/delay_table.hpp"

namespace firnray::cli {

namespace {

struct DelaysArguments {
    std::string model_path, station_path, sources_path, grid_distance, grid_depth, reference;
    double azimuth_deg = 0.0;
    bool derivatives = false;
    int max_bounces = 1;
    std::string solver = "auto", format = "csv", output = "-";
    RunOptions run;
};

std::vector<DelaySource> grid_sources(const DelaysArguments& args, const std::vector<Receiver>& receivers) {
    const auto distances = parse_list_or_range(args.grid_distance, "--grid-distance");
    const auto depths = parse_list_or_range(args.grid_depth, "--grid-depth");
    double cx = 0.0, cy = 0.0;
    for (const Receiver& r : receivers) {
        cx += r.x_m / static_cast<double>(receivers.size());
        cy += r.y_m / static_cast<double>(receivers.size());
    }
    const double az = deg_to_rad(args.azimuth_deg);
    std::vector<DelaySource> sources;
    for (double depth : depths)
        for (double r : distances) {
            DelaySource s;
            s.name = fmt::format("r{:g}_d{:g}", r, depth);
            s.position = {cx + r * std::cos(az), cy + r * std::sin(az), -depth};
            sources.push_back(s);
        }
    return sources;
}

int run_delays(const DelaysArguments& args) {
    const auto model = load_model_or_default(args.model_path);
    const auto solver = make_solver(model, parse_solver_choice(args.solver));
    const Station station = load_station_file(args.station_path);
    DelayOptions options;
    options.reference = args.reference.empty() ? 0 : station.index_of(args.reference);
    options.paths.max_bounces = args.max_bounces;
    options.threads = args.run.thread_count();
    options.control = make_run_control(args.run, "delays");
    if (args.sources_path.empty() == args.grid_distance.empty())
        throw UsageError("--sources", "give either --sources FILE.csv or --grid-distance with --grid-depth");
    if (!args.grid_distance.empty() && args.grid_depth.empty())
        throw UsageError("--grid-depth", "--grid-distance needs --grid-depth (source depths, m, positive down)");
    const std::vector<DelaySource> sources =
        args.sources_path.empty() ? grid_sources(args, station.receivers) : read_delay_sources(args.sources_path);
    const auto delays = compute_delays(*solver, station.receivers, sources, options);
    finish_progress(args.run);
    const std::string text =
        args.format == "json"
            ? delay_table_json(sources, delays, station.receivers, options, args.derivatives, model->name)
            : delay_table_csv(sources, delays, station.receivers, options, args.derivatives);
    emit(args.output, text);
    std::size_t failed = 0;
    for (const auto& d : delays) failed += !d.error.empty();
    if (failed > 0) {
        fmt::print(stderr, "firnray: {} of {} sources failed; their rows carry the error\n", failed, delays.size());
        return exit_partial;
    }
    return exit_ok;
}

}  // namespace

void add_delays_command(CLI::App& app, CommandSlot& slot) {
    auto args = std::make_shared<DelaysArguments>();
    CLI::App* cmd = app.add_subcommand("delays", "Arrival times and time differences of source positions at every channel of a station");
    add_model_option(cmd, args->model_path);
    cmd->add_option("--station", args->station_path, "station file (TOML, docs/station-files.md)")->required()->type_name("FILE");
    cmd->add_option("--sources", args->sources_path, "CSV of sources: columns x_m, z_m, optional y_m and name")->type_name("FILE.csv");
    cmd->add_option("--grid-distance", args->grid_distance,
                    "or a grid: horizontal distances from the station centre (m), list or START:STOP:STEP");
    cmd->add_option("--grid-depth", args->grid_depth, "grid source depths (m, positive down), list or START:STOP:STEP");
    cmd->add_option("--azimuth-deg", args->azimuth_deg, "direction of the grid from the station centre (degrees from +x toward +y)");
    cmd->add_option("--reference", args->reference, "reference channel for the differences (default: the first receiver)")
        ->type_name("NAME");
    cmd->add_flag("--derivatives", args->derivatives, "add dT/dx, dT/dy, dT/dz of each arrival with respect to the source position (ns/m)");
    cmd->add_option("--max-bounces", args->max_bounces, "most surface/bottom bounces per path (default 1)")->check(CLI::Range(0, 32));
    add_solver_option(cmd, args->solver);
    cmd->add_option("--format", args->format, "csv (long format: one row per source, receiver and path) or json")
        ->capture_default_str()
        ->check(CLI::IsMember({"csv", "json"}));
    cmd->add_option("--output,-o", args->output, "output file (default: stdout)")->type_name("FILE");
    add_run_options(cmd, args->run);
    cmd->footer(R"(
Times are in ns. minus_reference_same_kind_ns is this path's time minus the time of the path of
the same kind (and rank) at the reference receiver; first_minus_reference_first_ns compares the
first arrivals; second_minus_first_ns is the time between the first two paths at this receiver.
A receiver that no path reaches (shadow zone) gets one row of kind "none". A bad source row gets
an error row and the rest still runs; the exit code is then 7.

Example: the demo calibration pulsers at every channel, relative to channel A1
  firnray delays --station demo/station.toml --sources demo/calibration-sources.csv \
      --reference A1 --derivatives -o delays.csv)");
    cmd->callback([args, &slot] { slot.run = [args] { return run_delays(*args); }; });
}

}  // namespace firnray::cli
