// The 1σ that a model's [uncertainty] gives the paths of `connect` and the times and time
// differences of `delays` (docs/uncertainty.md, "connect and delays"): every perturbed model finds
// the paths again, and each is matched to a nominal path by its kind and its rank within that kind.
#pragma once

#include <cstddef>
#include <cstdint>
#include <optional>
#include <string>
#include <vector>

#include "core/cancel.hpp"
#include "paths/find_paths.hpp"
#include "paths/pair_formatter.hpp"
#include "solver/make_solver.hpp"
#include "station/delay_table.hpp"
#include "uncertainty/propagation.hpp"

namespace firnray {

// What every output with an uncertainty says about it: the method, the models per propagation,
// the seed and what the uncertainty is made of.
struct UncertaintyReport {
    PropagationMethod method = PropagationMethod::linearised;
    int samples = 0;                // Monte Carlo draws (0 when linearised)
    std::uint64_t seed = 0;         // Monte Carlo seed
    double step_sigma = 0.5;        // linearised step along each component, in σ
    std::size_t components = 0;     // of the ModelPerturbation
    std::string description;        // ModelPerturbation::describe()

    const char* method_name() const;              // "linearised" or "monte-carlo"
    std::size_t perturbed_models() const;         // 2 × components, or the draws
    // One line, shaped like the one of shadow and depths: "linearised, ±0.5σ along 3 components,
    // 7 models per propagation; 3 parameters (n_surface, n_deep, scale_depth_m)" or "Monte Carlo,
    // 400 draws, seed 7, 401 models per propagation; …" (the nominal model counted).
    std::string summary() const;
};

UncertaintyReport make_uncertainty_report(const ModelPerturbation& perturbation, const PropagationOptions& options);

// How the paths of a perturbed model are found: the same solver and path options as the nominal run.
struct PathSolverSetup {
    SolverChoice solver = SolverChoice::automatic;
    double numeric_tolerance = 0.0;
    PathOptions paths;
};

// Whether two paths found in two nearby models count as one kind: equal kinds, or direct and
// refracted (a small change of the profile turns one into the other continuously, when the
// turning point crosses the depth of the shallower end).
bool same_path_kind(PathKind a, PathKind b);

// The path of `candidates` that has the kind of nominal[index] and the same rank among the paths
// of that kind (the second refracted path matches the second refracted path), or nothing. Direct
// and refracted count as one kind here: a small change of the profile turns one into the other
// continuously (the turning point crosses the depth of the shallower end).
std::optional<std::size_t> matching_path(const std::vector<ConnectedPath>& candidates,
                                         const std::vector<ConnectedPath>& nominal, std::size_t index);

// The 1σ of the time and of the launch and arrival angles of each nominal path of one pair. The
// pair is propagated on its own; a perturbed model whose path search fails counts as lacking
// every path. Sets result.spreads and result.spread_models. Throws NumericalError when too few
// perturbed models make a valid profile.
void add_path_spreads(const ModelPerturbation& perturbation, const PathSolverSetup& setup,
                      const PropagationOptions& options, const Point& source, const Point& receiver,
                      PairPaths& result, const RunControl& control = {});

// The 1σ of every time and time difference of one source at every receiver (the columns of
// station/delay_table.hpp), all from ONE propagation, so that the differences carry the
// correlation of the times they are made of (one profile for every channel). Fills
// ReceiverArrivals::spreads of every channel that did not fail; throws NumericalError when too
// few perturbed models make a valid profile.
void add_delay_spreads(const ModelPerturbation& perturbation, const PathSolverSetup& setup,
                       const PropagationOptions& options, const std::vector<Receiver>& receivers,
                       std::size_t reference, const Point& source, SourceDelays& delays,
                       const RunControl& control = {});

}  // namespace firnray
