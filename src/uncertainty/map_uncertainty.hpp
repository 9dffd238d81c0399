// The model's uncertainty carried into the maps: the shadow boundary of each depth row with its
// 1σ (only the boundary is recomputed per model, from the receivers' tables, never the grid of
// cells) and the volumes of a receiver-depth scan with theirs (docs/uncertainty.md).
#pragma once

#include <cstddef>
#include <cstdint>
#include <optional>
#include <span>
#include <string>
#include <vector>

#include "core/cancel.hpp"
#include "solver/make_solver.hpp"
#include "station/depth_scan.hpp"
#include "station/station.hpp"
#include "station/visibility_map.hpp"
#include "uncertainty/model_perturbation.hpp"
#include "uncertainty/propagation.hpp"

namespace firnray {

// How a propagation was made, for every output to state it.
struct PropagationSummary {
    PropagationMethod method = PropagationMethod::linearised;
    int samples = 0;              // Monte Carlo draws asked for (0 when linearised)
    std::uint64_t seed = 0;       // Monte Carlo seed
    std::size_t models = 0;       // models evaluated, the nominal one included
    std::size_t rejected = 0;     // draws or steps that made no valid profile (left out)
    std::string uncertainty;      // ModelPerturbation::describe()
};

// The boundary of each depth row (VisibilityMap::boundary_m) with its 1σ.
struct BoundaryUncertainty {
    PropagationSummary summary;
    // Per depth row: the boundary at the nominal model (NaN: none visible, +inf: unbounded) and
    // its 1σ over the models that have a finite boundary there (NaN where it cannot be given: the
    // nominal boundary is not finite, fewer than 2 draws have one, or, linearised, a step model
    // lacks one).
    std::vector<double> nominal_m, sigma_m;
    // Per depth row, Monte Carlo: the valid draws with no visible distance, and with an unbounded
    // one. Linearised: 1 when the nominal model or a step model is so, else 0.
    std::vector<std::size_t> without_boundary, unbounded;
};

// Throws what compute_visibility_boundary, make_solver and propagate_uncertainty throw. The map
// options' threads are ignored: models are evaluated `propagation.threads` at a time, one thread
// each, so that the result does not depend on the thread count. Progress through `control`.
BoundaryUncertainty propagate_boundary_uncertainty(const ModelPerturbation& perturbation, SolverChoice solver,
                                                   std::span<const Receiver> receivers, const MapGrid& grid,
                                                   const VisibilityOptions& options,
                                                   const PropagationOptions& propagation,
                                                   const RunControl& control = {});

// The volume columns of each scanned depth (DepthScanRow) with their 1σ. Every volume exists in
// every valid model (0 is a volume), so none is ever absent; strong_volume only with a threshold.
struct DepthScanUncertaintyRow {
    double visible_volume_sigma_m3 = 0.0;
    double two_path_volume_sigma_m3 = 0.0;
    double ducted_only_volume_sigma_m3 = 0.0;
    double bottom_only_volume_sigma_m3 = 0.0;
    std::optional<double> strong_volume_sigma_m3;
};

struct DepthScanUncertainty {
    PropagationSummary summary;
    std::vector<DepthScanUncertaintyRow> rows;  // one per receiver depth of the scan
};

// Each model is scanned whole on the scan's grid (scan_receiver_depths, one thread), so the cost
// is that of one scan per model. Throws what scan_receiver_depths, make_solver and
// propagate_uncertainty throw.
DepthScanUncertainty propagate_depth_scan_uncertainty(const ModelPerturbation& perturbation, SolverChoice solver,
                                                      const DepthScanOptions& options,
                                                      const PropagationOptions& propagation,
                                                      const RunControl& control = {});

}  // namespace firnray
