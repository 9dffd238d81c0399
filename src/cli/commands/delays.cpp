// firnray delays: for a station and a list or grid of source positions, the arrival time of each
// path at each receiver, differences to a reference channel and between the first two paths,
// and optionally the derivatives of each time with respect to the source position.
#include <cmath>

#include <fmt/format.h>

#include "cli/commands.hpp"
#include "cli/common.hpp"
#include "cli/exit_codes.hpp"
#include "cli/output_set.hpp"
#include "core/constants.hpp"
#include "core/text.hpp"
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
    double memory_limit_mb = default_memory_limit_mb;
    RunOptions run;
};

// Sources computed and written per block, so that the arrivals of a large grid are never all held.
constexpr std::size_t sources_per_block = 1024;
// Rough sizes, for the memory check: a source, one path of one receiver, one CSV row.
constexpr double source_bytes = 200.0;
constexpr double path_bytes = sizeof(ConnectedPath) + sizeof(ReceiverArrivals::Gradient) + 64.0;
constexpr double csv_row_bytes = 260.0;
constexpr double paths_per_receiver = 2.0;

void check_memory(const DelaysArguments& args, std::size_t sources, std::size_t receivers) {
    const double rows = static_cast<double>(sources) * receivers * paths_per_receiver;
    const double output = rows * csv_row_bytes;
    const double held_sources = static_cast<double>(std::min(sources, sources_per_block * 2));
    double memory = static_cast<double>(sources) * source_bytes +
                    held_sources * receivers * (paths_per_receiver * path_bytes + sizeof(ReceiverArrivals));
    if (args.format == "json") memory += output + static_cast<double>(sources) * receivers * (paths_per_receiver * path_bytes);
    check_memory_estimate(fmt::format("a delay table of {} sources x {} receivers", sources, receivers), memory, output,
                          args.memory_limit_mb);
}

std::vector<DelaySource> grid_sources(const DelaysArguments& args, const std::vector<Receiver>& receivers) {
    const auto distances = parse_list_or_range(args.grid_distance, "--source-distance");
    const auto depths = parse_list_or_range(args.grid_depth, "--source-depth");
    for (double depth : depths)
        if (depth < 0.0)
            throw UsageError("--source-depth", fmt::format("{} is not a depth: depths are positive, down (m)",
                                                           number_for_message(depth)));
    check_memory(args, distances.size() * depths.size(), receivers.size());  // before the grid is built
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

// Computes the delays of `sources` a block at a time and writes each block's CSV rows.
std::size_t write_delays_csv(std::ostream& out, const RaySolver& solver, const std::vector<Receiver>& receivers,
                             const std::vector<DelaySource>& sources, const DelayOptions& options, bool derivatives) {
    std::size_t failed = 0;
    DelayOptions block_options = options;
    for (std::size_t first = 0; first < sources.size(); first += sources_per_block) {
        const std::size_t count = std::min(sources_per_block, sources.size() - first);
        const std::vector<DelaySource> block(sources.begin() + static_cast<std::ptrdiff_t>(first),
                                             sources.begin() + static_cast<std::ptrdiff_t>(first + count));
        if (options.control.progress)
            block_options.control.progress = [&options, first, &sources](std::size_t done, std::size_t) {
                options.control.progress(first + done, sources.size());
            };
        const auto delays = compute_delays(solver, receivers, block, block_options);
        for (const auto& d : delays) failed += !d.error.empty();
        const std::string text = delay_table_csv(block, delays, receivers, options, derivatives);
        const std::size_t body = first == 0 ? 0 : text.find('\n') + 1;  // the header once
        out.write(text.data() + body, static_cast<std::streamsize>(text.size() - body));
        if (!out) break;  // a write error or Ctrl-C: the output set reports it
    }
    return failed;
}

int run_delays(const DelaysArguments& args) {
    if (args.sources_path.empty() == args.grid_distance.empty())
        throw UsageError("--sources", "give either --sources FILE.csv or --source-distance with --source-depth");
    if (!args.grid_distance.empty() && args.grid_depth.empty())
        throw UsageError("--source-depth", "--source-distance needs --source-depth (source depths, m, positive down)");
    OutputSet outputs;
    outputs.declare("--output", args.output, output_format_named(args.format));
    const Station station = load_station_file(args.station_path);
    DelayOptions options;
    options.reference = args.reference.empty() ? 0 : station.index_of(receiver_named(station, args.reference, "--reference").name);
    options.paths.max_bounces = args.max_bounces;
    options.threads = args.run.thread_count();
    const std::vector<DelaySource> sources =
        args.sources_path.empty() ? grid_sources(args, station.receivers) : read_delay_sources(args.sources_path);
    check_memory(args, sources.size(), station.receivers.size());
    const auto model = load_model_or_default(args.model_path);
    const auto solver = make_solver(model, parse_solver_choice(args.solver));
    options.control = make_run_control(args.run, "delays");

    std::size_t failed = 0;
    std::vector<SourceDelays> delays;  // JSON only: the CSV is computed and written a block at a time
    if (args.format == "json") {
        delays = compute_delays(*solver, station.receivers, sources, options);
        for (const auto& d : delays) failed += !d.error.empty();
        outputs.set_writer(args.output, [&](std::ostream& out) {
            out << delay_table_json(sources, delays, station.receivers, options, args.derivatives, model->name);
        });
    } else {
        outputs.set_writer(args.output, [&](std::ostream& out) {
            failed = write_delays_csv(out, *solver, station.receivers, sources, options, args.derivatives);
        });
    }
    outputs.write_all();
    finish_progress(args.run);
    if (failed > 0) {
        fmt::print(stderr, "firnray: {} of {} sources failed; their rows carry the error\n", failed, sources.size());
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
    cmd->add_option("--sources", args->sources_path, "CSV of sources: columns x_m, z_m (m, z up), optional y_m and name")->type_name("FILE.csv");
    auto* distance = cmd->add_option("--source-distance", args->grid_distance,
                                     "or a grid of sources: horizontal distances from the station centre (m), a list "
                                     "a,b,c or START:STOP:STEP")
                         ->type_name("LIST|START:STOP:STEP");
    auto* depth = cmd->add_option("--source-depth", args->grid_depth,
                                  "grid source depths (m, positive down), a list or START:STOP:STEP")
                      ->type_name("LIST|START:STOP:STEP");
    add_deprecated_option(cmd, "--grid-distance", distance, [args](const std::string& v) { args->grid_distance = v; });
    add_deprecated_option(cmd, "--grid-depth", depth, [args](const std::string& v) { args->grid_depth = v; });
    cmd->add_option("--azimuth-deg", args->azimuth_deg, "direction of the grid from the station centre (degrees from +x toward +y)")
        ->check(finite_in_range(-360.0, 360.0));
    cmd->add_option("--reference", args->reference, "reference channel for the differences (default: the first receiver)")
        ->type_name("NAME");
    cmd->add_flag("--derivatives", args->derivatives, "add dT/dx, dT/dy, dT/dz of each arrival with respect to the source position (ns/m)");
    cmd->add_option("--max-bounces", args->max_bounces, "most surface/bottom bounces per path (default 1)")->check(CLI::Range(0, 32));
    add_solver_option(cmd, args->solver);
    cmd->add_option("--format", args->format, "csv (long format: one row per source, receiver and path) or json")
        ->capture_default_str()
        ->check(one_of({"csv", "json"}));
    add_memory_limit_option(cmd, args->memory_limit_mb);
    cmd->add_option("--output,-o", args->output, "output file, written whole or not at all (default: stdout)")->type_name("FILE");
    add_run_options(cmd, args->run);
    cmd->footer(R"(
Times are in ns. minus_reference_same_kind_ns is this path's time minus the time of the path of
the same kind (and rank) at the reference receiver; first_minus_reference_first_ns compares the
first arrivals; second_minus_first_ns is the time between the first two paths at this receiver.
A receiver that no path reaches (shadow zone) gets one row of kind "none". A bad source row gets
an error row and the rest still runs; the exit code is then 7. A grid of sources is
--source-distance x --source-depth, along --azimuth-deg from the mean receiver position.

Example: the demo calibration pulsers at every channel, relative to channel A1
  firnray delays --station demo/station.toml --sources demo/calibration-sources.csv \
      --reference A1 --derivatives -o delays.csv)");
    cmd->callback([args, &slot] { slot.run = [args] { return run_delays(*args); }; });
}

}  // namespace firnray::cli
