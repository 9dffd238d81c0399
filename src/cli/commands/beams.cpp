// firnray beams: trigger beams of a phased array (one vertical string of a station) in firn:
// plane-wave delays per beam, array factor, coverage map of the source region with the best beam
// and its coherent-sum efficiency, and a design scan (docs/beams.md).
#include <algorithm>
#include <cmath>

#include <fmt/format.h>

#include "beams/array_factor.hpp"
#include "beams/beam_coverage.hpp"
#include "beams/beam_table.hpp"
#include "cli/commands.hpp"
#include "cli/common.hpp"
#include "cli/output_set.hpp"
#include "core/errors.hpp"
#include "core/text.hpp"
#include "output/beam_output.hpp"
#include "solver/make_solver.hpp"

namespace firnray::cli {

namespace {

struct BeamsArguments {
    std::string model_path, station_path, string_name, reference;
    std::string beam_zeniths, zenith_range;
    int beam_count = 0;
    double sample_rate_ghz = 0.0, frequency_mhz = 300.0, pulse_fwhm_ns = 1.0;
    std::string format = "text", output = "-", plot_path;
    // The coverage map.
    std::string map_path, map_plot_path;
    std::string distance_range = "0:2000", depth_range = "0:500";
    int distance_cells = 400, depth_cells = 200;
    double threshold = -1.0, azimuth_deg = 0.0;  // threshold < 0: not given
    // The design scan.
    std::string scan, scan_values, scan_output, scan_plot;
    std::string solver = "auto";
    int ray_parameters = 1500;
    int max_bounces = CoverageOptions{}.max_bounces;
    bool no_bottom = false;
    double memory_limit_mb = default_memory_limit_mb;
    RunOptions run;
};

// Zeniths of the array-factor figure.
constexpr double figure_step_deg = 0.1;
// Rough sizes, for the memory check: a coverage cell held and written as CSV, an arrival-table
// entry per antenna, an SVG cell (two panels).
constexpr double coverage_bytes_per_cell = sizeof(CoverageCell);
constexpr double coverage_csv_bytes_per_cell = 60.0;
constexpr double arrival_bytes_per_ray_parameter = 200.0;
constexpr double svg_bytes_per_cell = 120.0;

std::vector<double> beam_zeniths(const BeamsArguments& args, double& first, double& last) {
    std::vector<double> zeniths;
    if (!args.beam_zeniths.empty()) {
        zeniths = parse_list(args.beam_zeniths, "--beam-zenith-deg");
        for (double z : zeniths) require_in_range(z, 0.0, 180.0, "--beam-zenith-deg", "an arrival zenith (deg)");
        first = *std::min_element(zeniths.begin(), zeniths.end());
        last = *std::max_element(zeniths.begin(), zeniths.end());
        return zeniths;
    }
    if (args.beam_count < 1 || args.zenith_range.empty())
        throw UsageError("--beam-zenith-deg", "give the beams: --beam-zenith-deg LIST, or --beam-count B with --zenith-range A:B");
    const auto colon = args.zenith_range.find(':');
    if (colon == std::string::npos || args.zenith_range.find(':', colon + 1) != std::string::npos)
        throw UsageError("--zenith-range", fmt::format("expected A:B (the first and last beam zeniths, deg), not '{}'",
                                                       printable_excerpt(args.zenith_range)));
    first = parse_number(args.zenith_range.substr(0, colon), "--zenith-range");
    last = parse_number(args.zenith_range.substr(colon + 1), "--zenith-range");
    require_in_range(first, 0.0, 180.0, "--zenith-range", "an arrival zenith (deg)");
    require_in_range(last, 0.0, 180.0, "--zenith-range", "an arrival zenith (deg)");
    return evenly_spaced_zeniths(args.beam_count, first, last);
}

PhasedArray array_of(const BeamsArguments& args) {
    const Station station = load_station_file(args.station_path);
    std::vector<std::string> strings;
    for (const Receiver& r : station.receivers)
        if (!r.string_name.empty() && std::find(strings.begin(), strings.end(), r.string_name) == strings.end())
            strings.push_back(r.string_name);
    if (std::find(strings.begin(), strings.end(), args.string_name) == strings.end())
        throw UsageError("--string", fmt::format("the station has no string named '{}'{}{}",
                                                 printable_excerpt(args.string_name), did_you_mean(args.string_name, strings),
                                                 strings.empty() ? " (its receivers are not grouped in strings)" : ""));
    PhasedArray array = make_phased_array(station, args.string_name);
    if (!args.reference.empty()) {
        std::vector<std::string> names;
        for (const Receiver& r : array.antennas) names.push_back(r.name);
        if (std::find(names.begin(), names.end(), args.reference) == names.end())
            throw UsageError("--reference", fmt::format("string '{}' has no antenna named '{}'{}",
                                                        printable_excerpt(args.string_name),
                                                        printable_excerpt(args.reference), did_you_mean(args.reference, names)));
        set_reference(array, args.reference);
    }
    return array;
}

MapGrid region_of(const BeamsArguments& args) {
    return parse_source_region(args.distance_range, args.depth_range, args.distance_cells, args.depth_cells,
                               "the string");
}

int run_beams(const BeamsArguments& args) {
    const bool with_map = !args.map_path.empty() || !args.map_plot_path.empty();
    const bool with_scan = !args.scan.empty();
    if (with_scan && args.scan_values.empty()) throw UsageError("--scan-values", "--scan needs --scan-values LIST");
    if (!with_scan && (!args.scan_values.empty() || !args.scan_output.empty() || !args.scan_plot.empty()))
        throw UsageError("--scan", "--scan-values, --scan-output and --scan-plot need --scan depth|spacing|beams");
    if (with_scan && args.scan_output.empty() && args.scan_plot.empty())
        throw UsageError("--scan", "a scan needs --scan-output FILE or --scan-plot FILE.svg");
    if (args.threshold == 0.0) throw UsageError("--threshold", "an efficiency threshold must be above 0 (and at most 1)");
    if (args.threshold > 0.0 && !with_map && !with_scan)
        throw UsageError("--threshold", "a threshold applies to a coverage map or a scan: add --map, --map-plot or --scan");

    OutputSet outputs;
    outputs.declare("--plot", args.plot_path, OutputFormat::svg);
    outputs.declare("--map", args.map_path, OutputFormat::csv);
    outputs.declare("--map-plot", args.map_plot_path, OutputFormat::svg);
    outputs.declare("--scan-output", args.scan_output, args.format == "json" ? OutputFormat::json : OutputFormat::csv);
    outputs.declare("--scan-plot", args.scan_plot, OutputFormat::svg);
    outputs.declare("--output", args.output, output_format_named(args.format));

    double first_zenith = 0.0, last_zenith = 0.0;
    const std::vector<double> zeniths = beam_zeniths(args, first_zenith, last_zenith);
    const MapGrid region = region_of(args);
    std::vector<double> scan_values;
    if (with_scan) scan_values = parse_list_or_range(args.scan_values, "--scan-values");
    const PhasedArray array = array_of(args);

    const double cells = static_cast<double>(region.cells());
    const double maps = (with_map ? 1.0 : 0.0) + (with_scan ? 1.0 : 0.0);
    if (maps > 0.0)
        check_memory_estimate(fmt::format("a beam coverage map of {} x {} cells", region.distance_cells, region.depth_cells),
                              cells * coverage_bytes_per_cell +
                                  static_cast<double>(array.antennas.size()) * args.ray_parameters *
                                      arrival_bytes_per_ray_parameter +
                                  (args.map_plot_path.empty() ? 0.0 : cells * svg_bytes_per_cell),
                              args.map_path.empty() ? 0.0 : cells * coverage_csv_bytes_per_cell, args.memory_limit_mb);

    const auto model = load_model_or_default(args.model_path);
    const StratifiedProfile profile(model->index, model->bottom ? std::optional<double>(model->bottom->z_m) : std::nullopt);
    const std::optional<double> sample_rate =
        args.sample_rate_ghz > 0.0 ? std::optional<double>(args.sample_rate_ghz * 1e9) : std::nullopt;
    const BeamTable table = make_beam_table(profile, array, zeniths, args.frequency_mhz * 1e6, sample_rate);

    std::vector<ArrayFactorCurve> curves;
    if (!args.plot_path.empty()) {
        std::vector<double> figure_zeniths;
        const int steps = static_cast<int>(std::lround(180.0 / figure_step_deg));
        for (int i = 0; i <= steps; ++i) figure_zeniths.push_back(i * figure_step_deg);
        const auto sweep = plane_wave_sweep(profile, array, figure_zeniths);
        for (const PlaneWaveOffsets& beam : table.beams) curves.push_back(array_factor_curve(sweep, beam, table.frequency_hz));
    }

    CoverageOptions coverage_options;
    coverage_options.pulse.fwhm_s = args.pulse_fwhm_ns * 1e-9;
    if (args.threshold > 0.0) coverage_options.threshold = args.threshold;
    coverage_options.azimuth_deg = args.azimuth_deg;
    coverage_options.ray_parameters = args.ray_parameters;
    coverage_options.max_bounces = args.max_bounces;
    coverage_options.bottom_paths = !args.no_bottom;
    coverage_options.threads = args.run.thread_count();
    std::unique_ptr<RaySolver> solver;
    if (with_map || with_scan) solver = make_solver(model, parse_solver_choice(args.solver));

    std::optional<BeamCoverage> coverage;
    if (with_map) {
        coverage_options.control = make_run_control(args.run, "beam coverage map");
        coverage = compute_beam_coverage(*solver, array, table.beams, region, coverage_options);
        finish_progress(args.run);
    }
    std::optional<DesignScan> scan;
    if (with_scan) {
        DesignScanOptions options;
        options.parameter = parse_design_parameter(args.scan);
        options.values = scan_values;
        options.beam_zeniths_deg = zeniths;
        options.first_zenith_deg = first_zenith;
        options.last_zenith_deg = last_zenith;
        options.region = region;
        options.coverage = coverage_options;
        options.coverage.control = make_run_control(args.run, "beam design scan");
        scan = scan_array_design(*solver, profile, array, options);
        finish_progress(args.run);
    }

    const BeamCoverage* coverage_summary = coverage ? &*coverage : nullptr;
    outputs.set_writer(args.output, [&](std::ostream& out) {
        if (args.format == "json") write_beam_table_json(out, table, *model, coverage_summary);
        else if (args.format == "csv") write_beam_table_csv(out, table);
        else write_beam_table_text(out, table, *model, coverage_summary);
    });
    outputs.set_writer(args.plot_path, [&](std::ostream& out) { write_array_factor_svg(out, table, curves, *model); });
    outputs.set_writer(args.map_path, [&](std::ostream& out) { write_coverage_csv(out, *coverage, table); });
    outputs.set_writer(args.map_plot_path, [&](std::ostream& out) { write_coverage_svg(out, *coverage, table, *model); });
    outputs.set_writer(args.scan_output, [&](std::ostream& out) {
        if (args.format == "json") write_design_scan_json(out, *scan, *model, region, table);
        else write_design_scan_csv(out, *scan);
    });
    outputs.set_writer(args.scan_plot, [&](std::ostream& out) { write_design_scan_svg(out, *scan, *model); });
    outputs.write_all();
    return 0;
}

}  // namespace

void add_beams_command(CLI::App& app, CommandSlot& slot) {
    auto args = std::make_shared<BeamsArguments>();
    CLI::App* cmd = app.add_subcommand(
        "beams", "Trigger beams of a phased array (one vertical string): delays per beam, array factor, coverage map, design scan");
    add_model_option(cmd, args->model_path);
    cmd->add_option("--station", args->station_path, "station file (TOML, docs/station-files.md)")
        ->type_name("FILE")
        ->required();
    cmd->add_option("--string", args->string_name, "the string whose receivers form the array, in depth order")
        ->type_name("NAME")
        ->required();
    cmd->add_option("--reference", args->reference, "reference antenna (default: the top one)")->type_name("NAME");
    auto* list = cmd->add_option("--beam-zenith-deg", args->beam_zeniths,
                                 "beams as arrival zeniths at the reference, a list a,b,c (deg; < 90 up-going, > 90 down-going)")
                     ->type_name("LIST");
    auto* count = cmd->add_option("--beam-count", args->beam_count, "number of beams, evenly spread over --zenith-range")
                      ->type_name("B")
                      ->check(CLI::Range(1, 1000));
    auto* range = cmd->add_option("--zenith-range", args->zenith_range, "first and last beam zenith A:B (deg)")
                      ->type_name("A:B");
    list->excludes(count)->excludes(range);
    count->needs(range);
    range->needs(count);
    cmd->add_option("--sample-rate-ghz", args->sample_rate_ghz, "also give the offsets in whole samples at this rate (GHz)")
        ->type_name("F")
        ->check(finite_positive());
    cmd->add_option("--frequency-mhz", args->frequency_mhz, "frequency of the array factor and beam widths (MHz)")
        ->type_name("F")
        ->capture_default_str()
        ->check(finite_positive());
    cmd->add_option("--pulse-fwhm-ns", args->pulse_fwhm_ns,
                    "the pulse of the coherent-sum efficiency: a Gaussian of this full width at half maximum (ns)")
        ->type_name("F")
        ->capture_default_str()
        ->check(finite_positive());
    cmd->add_option("--format", args->format, "text, csv (one row per beam and antenna) or json")
        ->capture_default_str()
        ->check(one_of({"text", "csv", "json"}));
    cmd->add_option("--output,-o", args->output, "the beam table (default: stdout)")->type_name("FILE");
    cmd->add_option("--plot", args->plot_path, "SVG of the array factor of every beam, grating lobes marked")
        ->type_name("FILE.svg");
    cmd->add_option("--map", args->map_path, "coverage map CSV: best beam and efficiency per source position")
        ->type_name("FILE.csv");
    cmd->add_option("--map-plot", args->map_plot_path, "coverage map SVG: beam regions and the shadow boundary")
        ->type_name("FILE.svg");
    cmd->add_option("--source-distance", args->distance_range, "source region: horizontal distance MIN:MAX (m from the string)")
        ->type_name("MIN:MAX")
        ->capture_default_str();
    cmd->add_option("--distance-cells", args->distance_cells, "grid columns")->capture_default_str()->check(CLI::Range(1, 20000));
    cmd->add_option("--source-depth", args->depth_range, "source region: depth MIN:MAX (m, positive down)")
        ->type_name("MIN:MAX")
        ->capture_default_str();
    cmd->add_option("--depth-cells", args->depth_cells, "grid rows")->capture_default_str()->check(CLI::Range(1, 20000));
    cmd->add_option("--threshold", args->threshold,
                    "coherent-sum efficiency (0 to 1] at which the trigger sees a source: adds the triggered volume")
        ->type_name("EFF")
        ->check(finite_in_range(0.0, 1.0));
    cmd->add_option("--azimuth-deg", args->azimuth_deg,
                    "direction of the map plane from the string, degrees from +x toward +y (default 0)")
        ->check(finite_in_range(-360.0, 360.0));
    cmd->add_option("--scan", args->scan, "design scan of the efficiency-weighted visible volume against depth, spacing or beams")
        ->check(one_of({"depth", "spacing", "beams"}));
    cmd->add_option("--scan-values", args->scan_values,
                    "values of the scan: top-antenna depths (m), spacings (m) or beam counts, a list or START:STOP:STEP")
        ->type_name("LIST");
    cmd->add_option("--scan-output", args->scan_output, "design scan table (CSV, or JSON with --format json)")
        ->type_name("FILE");
    cmd->add_option("--scan-plot", args->scan_plot, "design scan SVG")->type_name("FILE.svg");
    add_solver_option(cmd, args->solver);
    add_ray_parameters_option(cmd, args->ray_parameters);
    add_map_path_options(cmd, args->max_bounces, args->no_bottom);
    add_memory_limit_option(cmd, args->memory_limit_mb);
    add_run_options(cmd, args->run);
    cmd->footer(R"(
The array is the receivers of one string, top first. A beam is an arrival zenith at the reference
antenna (direction of travel: below 90 the wave travels up, above 90 down; at exactly 90 the branch
that travels down). Its offsets are the plane wave's arrival time at each antenna minus that at the
reference, from the vertical slowness integral of the model (exact for any stratified profile);
"-" / null where the wave turns before reaching an antenna, with the reason. The coverage map gives
at each source position the beam whose delays add the pulse best, and that coherent-sum efficiency
(1 = a perfect match), for the first and the second arrival at the antennas.

Example: 8 beams from 60 to 120 deg, offsets in samples at 1.5 GHz
  firnray beams --station demo/station.toml --string PA --beam-count 8 --zenith-range 60:120 \
      --sample-rate-ghz 1.5 --plot array-factor.svg
Example: coverage map and triggered volume at efficiency 0.7, and a depth scan
  firnray beams --station demo/station.toml --string PA --beam-count 8 --zenith-range 60:120 \
      --map cover.csv --map-plot cover.svg --threshold 0.7 --source-distance 0:1500 --source-depth 0:300
  firnray beams --station demo/station.toml --string PA --beam-count 8 --zenith-range 60:120 \
      --scan depth --scan-values 40:200:20 --scan-output scan.csv --scan-plot scan.svg)");
    cmd->callback([args, &slot] { slot.run = [args] { return run_beams(*args); }; });
}

}  // namespace firnray::cli
