// Writing the paths between sources and receivers (find_paths results) for people and programs:
// an aligned text table, CSV with one row per path, or JSON. Used for one pair and, piece by
// piece, for batches (paths/pair_batch.hpp), where each pair's piece is made on its own so that
// pieces can be formatted in parallel and joined in input order. Numbers that are not finite are
// refused (NumericalError naming the field); absent values (no turning point, no amplitude at a
// caustic) are written as empty fields, "-" or null.
#pragma once

#include <cstddef>
#include <memory>
#include <optional>
#include <ostream>
#include <string>
#include <vector>

#include "io/json_writer.hpp"
#include "model/firn_model.hpp"
#include "paths/connected_path.hpp"
#include "paths/find_paths.hpp"
#include "paths/pair_formatter.hpp"
#include "uncertainty/path_uncertainty.hpp"

namespace firnray {

enum class PathFormat { text, csv, json };

// "text", "csv" or "json"; throws DataInputError otherwise.
PathFormat parse_path_format(const std::string& text);

// What every output names: the model and the solver that made the paths. The text names the
// model; the JSON describes it as every JSON output does (output/model_json.hpp).
struct PathOutputContext {
    std::shared_ptr<const FirnModel> model;  // never null
    std::string solver_name;                 // "closed" or "numeric"
    // With connect --uncertainty or --uncertainty-samples: every output says how the 1σ were
    // made, and each path gets its own (PairPaths::spreads, docs/uncertainty.md). Without it the
    // outputs are exactly those described below.
    std::optional<UncertaintyReport> uncertainty = std::nullopt;
};

// One pair given on its own (the command line).
//   text: a header naming the model, solver, ends, distance and azimuth, then an aligned table with
//         units in the headings, or a line saying that the pair is in the shadow zone.
//   csv:  a header line and one row per path (no row in the shadow zone). Columns: path, kind,
//         time_ns, launch_zenith_deg, arrival_zenith_deg, length_m, ray_parameter, turning_z_m,
//         turning_points, surface_bounces, bottom_bounces, horizontal_distance_m, azimuth_deg,
//         fresnel_s_re, fresnel_s_im, fresnel_p_re, fresnel_p_im, flux_factor, spreading_m,
//         attenuation, field_s_re, field_s_im, field_p_re, field_p_im, caustic.
//   json: one object with model, solver, conventions, source, receiver, horizontal_distance_m,
//         azimuth_deg and an array `paths` (see docs/connect.md).
// The events of a path in one line, in order from the source: "turning z=-12.35 x=45.68;surface
// reflection z=0.00 x=100.00", z and x (the horizontal offset from the source) in metres with
// `decimals` decimals. Empty for a path without events. The CSV column `events` of connect and
// delays and the text column of connect; JSON writes them as an array of objects instead.
std::string format_events(const std::vector<PathEvent>& events, int decimals);

void write_paths(std::ostream& out, PathFormat format, const PathOutputContext& context, const Point& source,
                 const Point& receiver, const std::vector<ConnectedPath>& paths);
// The same with the 1σ of each path (context.uncertainty set): CSV opens with a "# uncertainty:"
// comment line and gains the columns time_sigma_ns, launch_zenith_sigma_deg,
// arrival_zenith_sigma_deg, sigma_models and sigma_absent_models after events; JSON gains an
// `uncertainty` object, sigma_models per pair and those sigma fields per path; text a line naming
// the uncertainty and σ columns before the events. A σ that cannot be given is empty, "-" or null.
void write_paths(std::ostream& out, PathFormat format, const PathOutputContext& context, const Point& source,
                 const Point& receiver, const PairPaths& result);
// The `uncertainty` member of every JSON output with 1σ: method ("linearised" or "monte-carlo"),
// samples and seed (Monte Carlo) or step_sigma (linearised), models (per propagation, the nominal
// one included), components and uncertainty (what it is made of), as shadow and depths write it.
void write_uncertainty_report_json(JsonWriter& json, const UncertaintyReport& report);

std::string format_paths(PathFormat format, const PathOutputContext& context, const Point& source,
                         const Point& receiver, const std::vector<ConnectedPath>& paths);

// A batch is written as begin + one piece per pair, in input order + end.
//   text: an aligned table whose rows start with the input line and name; a pair in the shadow zone
//         has one row of kind "none", a failed pair one row "error" with the reason.
//   csv:  columns input_line, name, then the single-pair columns, then error; shadow-zone pairs
//         have one row of kind "none", failed pairs one row with only input_line, name and error.
//   json: {model, solver, conventions, pairs: [...], pairs_failed}; each pair on one line, shaped
//         like the single-pair object (input_line and name added, `error` instead of the paths).
class BatchFormatter : public PairFormatter {
public:
    // The pairs are needed up front only to size the name column of the text table.
    BatchFormatter(PathFormat format, PathOutputContext context, const std::vector<PathPair>& pairs);

    std::string begin() const override;
    // Appends the piece of pair `index` (0-based position in the batch) to `out`. Thread-safe.
    void append_pair(std::string& out, std::size_t index, const PathPair& pair, const PairPaths& result) const override;
    std::string end(std::size_t pairs, std::size_t failed) const override;

    PathFormat format() const { return format_; }

private:
    PathFormat format_;
    PathOutputContext context_;
    std::size_t name_width_ = 4;  // at least the heading "name"
};

}  // namespace firnray
