// firnray delays: for a station and a list or grid of source positions, the arrival time of each
// path at each receiver, differences to a reference channel and between the first two paths,
// and optionally the derivatives of each time with respect to the source position.
#include <cmath>
#include <memory>
#include <optional>
#include <string>
#include <utility>

#include <fmt/format.h>
#include <fmt/ranges.h>

#include "cli/commands.hpp"
#include "cli/common.hpp"
#include "cli/exit_codes.hpp"
#include "cli/output_set.hpp"
#include "core/constants.hpp"
#include "core/text.hpp"
#include "solver/make_solver.hpp"
#include "output/delay_output.hpp"
#include "station/delay_table.hpp"
#include "uncertainty/path_uncertainty.hpp"

namespace firnray::cli {

namespace {

struct DelaysArguments {
    std::string model_path, station_path, sources_path, grid_distance, grid_depth, reference;
    double azimuth_deg = 0.0;
    bool derivatives = false;
    int max_bounces = 1;
    std::string solver = "auto", format = "csv", output = "-";
    double memory_limit_mb = default_memory_limit_mb;
    UncertaintyArguments uncertainty;
    RunOptions run;
};

// Sources read, computed and written per block, so that neither the sources nor their arrivals
// are ever all held, whatever the length of the file or the size of the grid.
constexpr std::size_t sources_per_block = 1024;
// Rough sizes, for the memory check: a source, one path of one receiver, one CSV row (the JSON
// text of a path is about twice that).
constexpr double source_bytes = 200.0;
constexpr double path_bytes = sizeof(ConnectedPath) + sizeof(ReceiverArrivals::Gradient) + 64.0;
constexpr double csv_row_bytes = 260.0;
constexpr double paths_per_receiver = 2.0;

// What is held is one block of sources with their arrivals and the writer's buffer, whatever the
// number of sources; the output grows with it. `sources` is the grid's size, or one block for a
// file (whose length is not known before it is read).
void check_memory(const DelaysArguments& args, std::size_t sources, std::size_t receivers, bool whole) {
    const double rows = static_cast<double>(sources) * receivers * paths_per_receiver;
    const double output = rows * csv_row_bytes * (args.format == "json" ? 2.0 : 1.0);
    const double held_sources = static_cast<double>(std::min(sources, sources_per_block));
    const double memory =
        held_sources * (source_bytes + receivers * (paths_per_receiver * path_bytes + sizeof(ReceiverArrivals))) +
        static_cast<double>(1 << 16);  // the writer's buffer
    check_memory_estimate(fmt::format("{} of {} sources x {} receivers", whole ? "a delay table" : "each block", sources,
                                      receivers),
                          memory, output, args.memory_limit_mb);
}

// The sources of one run, handed out a block at a time: from the --sources file or a grid.
class SourceBlocks {
public:
    SourceBlocks(const DelaysArguments& args, const std::vector<Receiver>& receivers) {
        if (!args.sources_path.empty()) {
            file_ = std::make_unique<DelaySourceReader>(args.sources_path);
            check_memory(args, sources_per_block, receivers.size(), false);
            return;
        }
        distances_ = parse_list_or_range(args.grid_distance, "--source-distance");
        depths_ = parse_list_or_range(args.grid_depth, "--source-depth");
        for (double depth : depths_)
            if (depth < 0.0)
                throw UsageError("--source-depth", fmt::format("{} is not a depth: depths are positive, down (m)",
                                                               number_for_message(depth)));
        total_ = distances_.size() * depths_.size();
        check_memory(args, total_, receivers.size(), true);
        for (const Receiver& r : receivers) {
            centre_x_ += r.x_m / static_cast<double>(receivers.size());
            centre_y_ += r.y_m / static_cast<double>(receivers.size());
        }
        azimuth_rad_ = deg_to_rad(args.azimuth_deg);
    }

    // Replaces `sources` with the next block; false when none were left. The first call on a
    // file with no sources throws DataInputError.
    bool next(std::vector<DelaySource>& sources) {
        if (file_) return file_->read_block(sources, sources_per_block);
        sources.clear();
        for (; next_ < total_ && sources.size() < sources_per_block; ++next_) {
            const double depth = depths_[next_ / distances_.size()], r = distances_[next_ % distances_.size()];
            DelaySource s;
            s.name = fmt::format("r{:g}_d{:g}", r, depth);
            s.position = {centre_x_ + r * std::cos(azimuth_rad_), centre_y_ + r * std::sin(azimuth_rad_), -depth};
            sources.push_back(std::move(s));
        }
        return !sources.empty();
    }

    // (done, total) for progress: bytes of the file, or sources of the grid.
    std::pair<std::size_t, std::size_t> progress(std::size_t sources_done) const {
        if (file_) return {file_->bytes_read(), std::max(file_->bytes_read(), file_->file_bytes())};
        return {sources_done, total_};
    }

private:
    std::unique_ptr<DelaySourceReader> file_;
    std::vector<double> distances_, depths_;
    std::size_t total_ = 0, next_ = 0;
    double centre_x_ = 0.0, centre_y_ = 0.0, azimuth_rad_ = 0.0;
};

struct DelayTotals {
    std::size_t sources = 0, failed_sources = 0;
    std::size_t channels = 0, failed_channels = 0;  // of the sources that were computed
};

// With --uncertainty or --uncertainty-samples: what each source's times are propagated with.
struct DelayPropagation {
    ModelPerturbation perturbation;
    PropagationOptions options;
    PathSolverSetup setup;
};

// Reads, computes and writes the sources a block at a time: the output is the same for any
// block size and any number of threads (each block is computed in parallel, written in order).
// With a propagation, each source's times and differences are propagated together, one source
// after the other, the models of one source on every thread.
DelayTotals stream_delays(std::ostream& out, SourceBlocks& blocks, const RaySolver& solver, const FirnModel& model,
                          const std::vector<Receiver>& receivers, const DelayOptions& options, DelayTableFormat format,
                          bool derivatives, const DelayPropagation* propagation) {
    DelayTotals totals;
    std::vector<DelaySource> sources;
    if (!blocks.next(sources)) return totals;  // (a grid always has a source; an empty file threw)
    DelayTableWriter writer(out, format, receivers, options, derivatives);
    if (propagation) writer.set_uncertainty(make_uncertainty_report(propagation->perturbation, propagation->options));
    writer.begin(&model);
    DelayOptions block_options = options;
    block_options.control.progress = nullptr;  // reported after each block
    do {
        auto delays = compute_delays(solver, receivers, sources, block_options);
        if (propagation)
            for (std::size_t i = 0; i < sources.size(); ++i) {
                try {
                    add_delay_spreads(propagation->perturbation, propagation->setup, propagation->options, receivers,
                                      options.reference, sources[i].position, delays[i], block_options.control);
                } catch (const NumericalError& e) {  // this source alone fails
                    delays[i].error = std::string("uncertainty: ") + e.what();
                }
                if (options.control.progress) {  // a propagation takes a while: progress per source
                    const auto [done, total] = blocks.progress(totals.sources + i + 1);
                    options.control.progress(done, total);
                }
            }
        for (const SourceDelays& d : delays) {
            if (!d.error.empty()) {
                ++totals.failed_sources;
                continue;
            }
            totals.channels += d.receivers.size();
            totals.failed_channels += d.failed_channels();
        }
        totals.sources += sources.size();
        writer.add(sources, delays);
        if (options.control.progress) {
            const auto [done, total] = blocks.progress(totals.sources);
            options.control.progress(done, total);
        }
        if (!out) return totals;  // a write error or Ctrl-C: the output set reports it
        options.control.throw_if_cancelled();
    } while (blocks.next(sources));
    writer.finish();
    return totals;
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
    SourceBlocks blocks(args, station.receivers);  // checks the columns of a file, or the grid
    const auto model = load_model_or_default(args.model_path);
    const auto solver = make_solver(model, parse_solver_choice(args.solver));
    options.control = make_run_control(args.run, "delays");
    // ModelInputError (exit 3) here when the model has no [uncertainty]
    std::optional<DelayPropagation> propagation;
    if (const auto propagation_wanted = propagation_options(args.uncertainty, args.run))
        propagation.emplace(DelayPropagation{ModelPerturbation(*model), *propagation_wanted,
                                             PathSolverSetup{parse_solver_choice(args.solver), 0.0, options.paths}});

    DelayTotals totals;
    const DelayTableFormat format = args.format == "json" ? DelayTableFormat::json : DelayTableFormat::csv;
    outputs.set_writer(args.output, [&](std::ostream& out) {
        totals = stream_delays(out, blocks, *solver, *model, station.receivers, options, format, args.derivatives,
                               propagation ? &*propagation : nullptr);
    });
    outputs.write_all();
    finish_progress(args.run);
    std::vector<std::string> failures;
    if (totals.failed_sources > 0)
        failures.push_back(fmt::format("{} of {} sources failed", totals.failed_sources, totals.sources));
    if (totals.failed_channels > 0)
        failures.push_back(fmt::format("{} of {} channels failed", totals.failed_channels, totals.channels));
    if (!failures.empty()) {
        fmt::print(stderr, "firnray: {}; their rows carry the error\n", fmt::join(failures, ", "));
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
    cmd->add_option("--max-bounces", args->max_bounces, "most turns back per path: every turning point, surface reflection and bottom reflection counts one "
                    "(default 1; ducted paths need 2 or more)")->check(CLI::Range(0, 32));
    add_solver_option(cmd, args->solver);
    cmd->add_option("--format", args->format, "csv (long format: one row per source, receiver and path) or json")
        ->capture_default_str()
        ->check(one_of({"csv", "json"}));
    add_memory_limit_option(cmd, args->memory_limit_mb);
    add_uncertainty_options(cmd, args->uncertainty);
    cmd->add_option("--output,-o", args->output, "output file, written whole or not at all (default: stdout)")->type_name("FILE");
    add_run_options(cmd, args->run);
    cmd->footer(R"(
Times are in ns. minus_reference_same_kind_ns is this path's time minus the time of the path of
the same kind (and rank) at the reference receiver; first_minus_reference_first_ns compares the
first arrivals; second_minus_first_ns is the time between the first two paths at this receiver.
A receiver that no path reaches (shadow zone) gets one row of kind "none". A bad source row gets
an error row, a channel that fails (a source at a receiver's own position) an error row naming
the receiver, and the rest still runs; the exit code is then 7. --sources files stream: their
length is not limited by memory, and --threads does not change the output. A grid of sources is
--source-distance x --source-depth, along --azimuth-deg from the mean receiver position.

--uncertainty (linearised) or --uncertainty-samples N (Monte Carlo, --seed S) add the 1-sigma
that the model's [uncertainty] gives every time and every difference: time_sigma_ns,
minus_reference_same_kind_sigma_ns, first_minus_reference_first_sigma_ns and
second_minus_first_sigma_ns. All channels see one profile, so their times are correlated: the
times and differences of a source are propagated together and each difference gets the sigma of
the difference itself (smaller than the quadrature sum of its two times for nearby channels).
A path that some models lack gets no sigma in a linearised run (sigma_absent_models counts them).
A model without [uncertainty] is refused (exit 3). See docs/uncertainty.md.

Example: the demo calibration pulsers at every channel, relative to channel A1
  firnray delays --station demo/station.toml --sources demo/calibration-sources.csv \
      --reference A1 --derivatives -o delays.csv)");
    cmd->callback([args, &slot] { slot.run = [args] { return run_delays(*args); }; });
}

}  // namespace firnray::cli
