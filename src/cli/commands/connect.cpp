// firnray connect: every ray path between a source and a receiver (direct, refracted, reflected,
// transmitted through the surface, bottom-reflected) with its time, angles, length, ray parameter
// and amplitude factors; one pair from the command line or a CSV batch of pairs.
#include <memory>
#include <string>
#include <optional>

#include <fmt/format.h>

#include "cli/commands.hpp"
#include "cli/common.hpp"
#include "cli/exit_codes.hpp"
#include "output/path_output.hpp"
#include "cli/output_set.hpp"
#include "core/errors.hpp"
#include "paths/pair_batch.hpp"
#include "solver/make_solver.hpp"
#include "uncertainty/path_uncertainty.hpp"

namespace firnray::cli {

namespace {

struct ConnectArguments {
    std::string model_path, source, receiver, pairs_path;
    std::string solver = "auto", format = "text", output = "-";
    int max_bounces = PathOptions{}.max_bounces;
    UncertaintyArguments uncertainty;
    RunOptions run;
};

// Per-step tolerance of the numeric solver here (its default is 1e-10): on pairs up to 3 km apart
// times stay within 0.004 ps and angles within 4e-6 degrees of the closed form (exponential model)
// and of the 1e-10 integration (a table), far inside the 1 ps and 1e-4 degrees promised, at 1.7
// times the speed (docs/performance-connect.md).
constexpr double numeric_tolerance = 1e-8;

int run_connect(const ConnectArguments& args) {
    const bool batch = !args.pairs_path.empty();
    if (batch && (!args.source.empty() || !args.receiver.empty()))
        throw UsageError("--pairs", "give either --pairs FILE.csv or --source with --receiver, not both");
    if (!batch && args.source.empty() && args.receiver.empty())
        throw UsageError("--source", "give --source X,Z and --receiver X,Z (or --pairs FILE.csv for a batch)");
    if (!batch && args.source.empty()) throw UsageError("--source", "--receiver needs --source X,Z (m, z up)");
    if (!batch && args.receiver.empty()) throw UsageError("--receiver", "--source needs --receiver X,Z (m, z up)");
    // Points are checked before the model is read, so that a typo is reported as such.
    const Point source = batch ? Point{} : parse_point(args.source, "--source");
    const Point receiver = batch ? Point{} : parse_point(args.receiver, "--receiver");
    OutputSet outputs;
    outputs.declare("--output", args.output, output_format_named(args.format));

    const auto model = load_model_or_default(args.model_path);
    const auto solver = make_solver(model, parse_solver_choice(args.solver), numeric_tolerance);
    PathOptions options;
    options.max_bounces = args.max_bounces;
    const PathFormat format = parse_path_format(args.format);
    PathOutputContext context{model, solver->name(), std::nullopt};
    // With --uncertainty or --uncertainty-samples: each pair's paths are found again in every
    // perturbed model (docs/uncertainty.md); ModelInputError (exit 3) when the model has no [uncertainty].
    const auto propagation = propagation_options(args.uncertainty, args.run);
    std::optional<ModelPerturbation> perturbation;
    const PathSolverSetup setup{parse_solver_choice(args.solver), numeric_tolerance, options};
    if (propagation) {
        perturbation.emplace(*model);
        context.uncertainty = make_uncertainty_report(*perturbation, *propagation);
    }

    if (!batch) {
        PairPaths result;
        result.paths = find_paths(*solver, source, receiver, options);
        if (perturbation) {
            add_path_spreads(*perturbation, setup, *propagation, source, receiver, result,
                             make_run_control(args.run, "connect: uncertainty"));
            finish_progress(args.run);
        }
        outputs.set_writer(args.output,
                           [&](std::ostream& out) { write_paths(out, format, context, source, receiver, result); });
        outputs.write_all();
        return exit_ok;
    }
    // Pairs are propagated each on its own, one pair per thread (the models of a pair one after
    // the other); an error of the propagation fails that pair alone.
    PairAddition addition;
    if (perturbation) {
        PropagationOptions per_pair = *propagation;
        per_pair.threads = 1;
        addition = [&perturbation, &setup, per_pair](const PathPair& pair, PairPaths& result) {
            try {
                add_path_spreads(*perturbation, setup, per_pair, pair.source, pair.receiver, result);
            } catch (const NumericalError& e) {
                result.error = std::string("uncertainty: ") + e.what();
            } catch (const InputError& e) {
                result.error = std::string("uncertainty: ") + e.what();
            }
        };
    }
    // The batch streams from the pairs file to the output, a block of pairs at a time.
    PathPairReader reader(args.pairs_path);
    if (reader.uses_old_id_column())
        fmt::print(stderr, "firnray: warning: {}: the pairs column 'id' is deprecated and will not be read in the "
                           "next release; name it 'name'\n", args.pairs_path);
    // Only the text table needs the longest name up front (it aligns its name column).
    std::vector<PathPair> width_example(1);
    if (format == PathFormat::text) width_example[0].name.assign(longest_pair_name(args.pairs_path), ' ');
    const BatchFormatter formatter(format, context, width_example);
    BatchTotals run;
    outputs.set_writer(args.output, [&](std::ostream& out) {
        run = connect_batch_stream(*solver, reader, options, formatter, out, args.run.thread_count(),
                                   make_run_control(args.run, "connect"), addition);
    });
    outputs.write_all();
    finish_progress(args.run);
    if (run.failed > 0) {
        fmt::print(stderr, "firnray: {} of {} pairs failed; their rows carry the error\n", run.failed, run.pairs);
        return exit_partial;
    }
    return exit_ok;
}

}  // namespace

void add_connect_command(CLI::App& app, CommandSlot& slot) {
    auto args = std::make_shared<ConnectArguments>();
    CLI::App* cmd = app.add_subcommand(
        "connect",
        "Every ray path between a source and a receiver, with its time, angles and amplitude, for one pair or a CSV batch");
    add_model_option(cmd, args->model_path);
    cmd->add_option("--source", args->source, "source point X,Z or X,Y,Z in metres (z up, ice z < 0)")->type_name("X,Z");
    cmd->add_option("--receiver", args->receiver, "receiver point X,Z or X,Y,Z in metres (z up, ice z < 0)")
        ->type_name("X,Z");
    cmd->add_option("--pairs", args->pairs_path,
                    "CSV batch of pairs: columns source_x_m, source_z_m, receiver_x_m, receiver_z_m, optional "
                    "source_y_m, receiver_y_m and name; streamed, so its size is not limited by memory")
        ->type_name("FILE.csv");
    add_solver_option(cmd, args->solver);
    cmd->add_option("--max-bounces", args->max_bounces,
                    "most turns back per path: every turning point, surface reflection and bottom reflection "
                    "counts one (default 1: direct, refracted or reflected, turning below, and one bottom "
                    "reflection when the model has a bottom; ducted paths need 2 or more)")
        ->check(CLI::Range(0, 32));
    cmd->add_option("--format", args->format, "text (a table for people), csv (one row per path) or json")
        ->capture_default_str()
        ->check(one_of({"text", "csv", "json"}));
    cmd->add_option("--output,-o", args->output, "output file, written whole or not at all (default: stdout)")
        ->type_name("FILE");
    add_uncertainty_options(cmd, args->uncertainty);
    add_run_options(cmd, args->run);
    cmd->footer(R"(
Conventions: z is up (m), the surface is z = 0, the ice z < 0 and the air z > 0; angles are zenith
angles of the direction of travel (0 = up, 90 = horizontal, 180 = down); times in ns.

Paths are sorted by arrival time. Their kinds: direct (monotone in depth), refracted (turns below
the surface), reflected (off the surface), transmitted (through the surface: one end in the air),
bottom (off the model's bottom), refracted-below (turns below both ends, where n falls with depth
under them), ducted (turns two or more times in a duct, never at the bottom). Each has its time
(ns), launch and arrival zenith angles (deg), arc length (m), ray parameter n sin(zenith), first
turning z (m), bounces, its events (every turn, reflection and surface crossing with its z and
offset from the source: what tells two ducted paths apart), and amplitude factors: the Fresnel
factors for s and p, the spreading distance L_eff (m) and the attenuation field factor.

Solvers (--solver): auto is the closed form on exponential and constant profiles and the
stratified quadrature on every other; numeric integrates the ray equations (a cross-check; it
refuses a model whose index falls with depth). Whatever the solver, a pair with both ends in the
ice goes through the stratified path finder when both ends are at one depth, when the model's
index falls with depth somewhere, or
when n_deep - n at the shallower end is below 1e-6 n (deep ice). See docs/connect.md.
In 3-D (X,Y,Z) the horizontal distance is used and the azimuth (from +x toward +y) reported.
No path at all means the receiver is in the shadow zone: "paths": [] in JSON, exit code 0.

A batch (--pairs) gives each path a row carrying the input line and name of its pair; a pair in the shadow
zone gets one row of kind "none", a bad row one row with the error, and the rest still runs (exit
code 7 when any row failed). --threads does not change the output. See docs/connect.md.

--uncertainty (linearised) or --uncertainty-samples N (Monte Carlo, --seed S) carry the model's
[uncertainty] into a 1-sigma of every path's time and launch and arrival angles: each perturbed
model finds the paths again, matched to the nominal ones by kind and rank within the kind; a path
that some models lack gets no sigma in a linearised run, and in every run sigma_absent_models
says how many lacked it. CSV opens with a "# uncertainty:" line, JSON has an "uncertainty" object,
text an "uncertainty:" line. In a batch each pair is propagated on its own. A model without an
[uncertainty] table is refused (exit 3). See docs/uncertainty.md.

Examples:
  firnray connect --source 250,-20 --receiver 0,-100     # refracted and reflected
  firnray connect --source 300,-20 --receiver 0,-100     # the shadow zone: no path
  firnray connect --source 0,0,-150 --receiver 120,80,-30 --format json
  firnray connect --pairs demo/pairs.csv --format csv -o paths.csv
  firnray connect --model site.toml --source 250,-20 --receiver 0,-100 --uncertainty-samples 200)");
    cmd->callback([args, &slot] { slot.run = [args] { return run_connect(*args); }; });
}

}  // namespace firnray::cli
