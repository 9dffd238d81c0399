// firnray locate: source positions, emission times and their covariance from measured arrival
// times at the channels of a station (docs/locate.md).
#include <memory>
#include <optional>

#include <fmt/format.h>

#include "cli/commands.hpp"
#include "cli/common.hpp"
#include "cli/exit_codes.hpp"
#include "cli/output_set.hpp"
#include "locate/arrival_events.hpp"
#include "locate/source_fit.hpp"
#include "output/locate_output.hpp"
#include "solver/make_solver.hpp"
#include "uncertainty/locate_uncertainty.hpp"

namespace firnray::cli {

namespace {

struct LocateArguments {
    std::string model_path, station_path, arrivals_path;
    double timing_sigma_ns = 0.5;
    int max_bounces = 1;
    std::string solver = "auto", format = "text", output = "-";
    UncertaintyArguments uncertainty;
    RunOptions run;
};

int run_locate(const LocateArguments& args) {
    OutputSet outputs;
    outputs.declare("--output", args.output, output_format_named(args.format));
    const Station station = load_station_file(args.station_path);
    const std::vector<ArrivalEvent> events = read_arrival_events(args.arrivals_path, station, args.timing_sigma_ns);
    const auto model = load_model_or_default(args.model_path);
    const auto solver = make_solver(model, parse_solver_choice(args.solver));
    // Checked before the nominal fits: ModelInputError (exit 3) when the model has no [uncertainty].
    const auto propagation = propagation_options(args.uncertainty, args.run);
    std::optional<ModelPerturbation> perturbation;
    if (propagation) perturbation.emplace(*model);

    LocateOptions options;
    options.paths.max_bounces = args.max_bounces;
    options.expected_events = events.size();  // whether the travel-time table pays (locate/source_fit.hpp)
    options.threads = args.run.thread_count();
    options.control = make_run_control(args.run, "locate: search table");
    const SourceLocator locator(*solver, station, options);
    finish_progress(args.run);
    const RunControl control = make_run_control(args.run, "locate");
    const std::vector<EventFit> fits = locate_events(locator, events, args.run.thread_count(), control);
    finish_progress(args.run);
    // The profile's part: every event fitted again in each perturbed model (docs/uncertainty.md).
    std::optional<LocateProfileUncertainty> profile_part;
    if (perturbation) {
        const LocateRefitSetup setup{parse_solver_choice(args.solver), options};
        profile_part.emplace(LocateProfileUncertainty{
            make_uncertainty_report(*perturbation, *propagation),
            profile_position_spreads(*perturbation, setup, station, events, fits, *propagation,
                                     make_run_control(args.run, "locate: profile uncertainty"))});
        finish_progress(args.run);
    }
    const LocateProfileUncertainty* uncertainty = profile_part ? &*profile_part : nullptr;

    outputs.set_writer(args.output, [&](std::ostream& out) {
        if (args.format == "json") write_locate_json(out, fits, locator, *model, uncertainty);
        else if (args.format == "csv") write_locate_csv(out, fits, locator, uncertainty);
        else write_locate_text(out, fits, locator, *model, uncertainty);
    });
    outputs.write_all();
    std::size_t failed = 0;
    for (const EventFit& f : fits) failed += f.best ? 0 : 1;
    if (failed > 0) {
        fmt::print(stderr, "firnray: {} of {} events could not be fitted; their rows carry the error\n", failed,
                   fits.size());
        return exit_partial;
    }
    return exit_ok;
}

}  // namespace

void add_locate_command(CLI::App& app, CommandSlot& slot) {
    auto args = std::make_shared<LocateArguments>();
    CLI::App* cmd = app.add_subcommand("locate", "Source positions and their uncertainty from measured arrival times at a station");
    add_model_option(cmd, args->model_path);
    cmd->add_option("--station", args->station_path, "station file (TOML, docs/station-files.md)")->required()->type_name("FILE");
    cmd->add_option("--arrivals", args->arrivals_path,
                    "CSV of measured pulses: columns event, channel (a receiver name), time_ns, optional sigma_ns")
        ->required()
        ->type_name("FILE.csv");
    cmd->add_option("--timing-sigma-ns", args->timing_sigma_ns, "1σ timing uncertainty of a pulse without sigma_ns (ns)")
        ->capture_default_str()
        ->check(finite_positive());
    cmd->add_option("--max-bounces", args->max_bounces, "most surface/bottom bounces per path (default 1)")->check(CLI::Range(0, 32));
    add_solver_option(cmd, args->solver);
    cmd->add_option("--format", args->format, "text, csv (one event per line) or json")
        ->capture_default_str()
        ->check(one_of({"text", "csv", "json"}));
    cmd->add_option("--output,-o", args->output, "output file, written whole or not at all (default: stdout)")->type_name("FILE");
    add_uncertainty_options(cmd, args->uncertainty);
    add_run_options(cmd, args->run);
    cmd->footer(R"(
Each event's pulses (one or two per channel, unlabelled) are fitted with the source position and
the emission time as unknowns: the fit tries every assignment of pulses to the paths the model
predicts, starts from a coarse search over the region the station sees and refines by
Levenberg-Marquardt. chi2 and ndof (pulses - 4) say how well it fits; covariance_m2 is the 3x3
covariance of x, y, z (m^2, marginal over the emission time, not rescaled by chi2/ndof); distance,
depth, zenith and azimuth are seen from the mean receiver position, with their 1 sigma.
alternatives lists other minima within chi2 + 10 (the mirror position when the pulses come from
two strings). An event that cannot be fitted gets an error naming its line and the rest goes on;
the exit code is then 7. Two paths closer than a pulse width give one pulse: list it once, and
the fit matches it to the nearer predicted path (docs/locate.md).

--uncertainty (linearised) or --uncertainty-samples N (Monte Carlo, --seed S) add the profile's
part of the position covariance, from the model's [uncertainty]: every event is fitted again in
each perturbed model (linearised: at +-0.5 sigma along each component, the derivative of the
fitted position; Monte Carlo: one refit per draw), keeping the nominal matching of pulses to
paths where a reported minimum has it. covariance_profile_m2 stands beside covariance_m2 (the
timing part); sigma_*_profile and sigma_*_combined (both parts added) beside the timing sigmas.
Each perturbed model builds its own search table: this multiplies the run time by the number of
models (7 for 3 parameters linearised). A model without [uncertainty] is refused (exit 3).

Example: reconstruct events recorded by the demo station
  firnray locate --station demo/station.toml --arrivals demo/locate-events.csv --format json -o fits.json)");
    cmd->callback([args, &slot] { slot.run = [args] { return run_locate(*args); }; });
}

}  // namespace firnray::cli
