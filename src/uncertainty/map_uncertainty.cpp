#include "uncertainty/map_uncertainty.hpp"

#include <algorithm>
#include <atomic>
#include <cmath>
#include <limits>
#include <memory>

#include "core/errors.hpp"

namespace firnray {

namespace {

constexpr double absent_value = std::numeric_limits<double>::quiet_NaN();

PropagationSummary summary_of(const ModelPerturbation& perturbation, const PropagationOptions& propagation,
                              const PropagatedValues& values) {
    PropagationSummary summary;
    summary.method = propagation.method;
    summary.samples = propagation.method == PropagationMethod::monte_carlo ? propagation.samples : 0;
    summary.seed = propagation.seed;
    summary.models = values.models;
    summary.rejected = values.rejected;
    summary.uncertainty = perturbation.describe();
    return summary;
}

// Models a propagation evaluates: the nominal one, then 2K steps or N draws.
std::size_t models_to_evaluate(const ModelPerturbation& perturbation, const PropagationOptions& propagation) {
    return 1 + (propagation.method == PropagationMethod::monte_carlo ? static_cast<std::size_t>(propagation.samples)
                                                                      : 2 * perturbation.dimension());
}

// Progress over every model's work: each model adds `steps` when done (or step by step), so that
// a long propagation reports more often than once per batch of models. Thread-safe.
class ModelProgress {
public:
    ModelProgress(const RunControl& control, std::size_t total) : control_(control), total_(total) {}
    void step() const {
        const std::size_t done = ++done_;
        if (control_.progress) control_.progress(std::min(done, total_), total_);
    }

private:
    const RunControl& control_;
    std::size_t total_;
    mutable std::atomic<std::size_t> done_{0};
};

// The control passed to propagate_uncertainty: cancellation only, progress comes from ModelProgress.
RunControl cancel_only(const RunControl& control) {
    RunControl out;
    out.cancel = control.cancel;
    return out;
}

std::unique_ptr<RaySolver> solver_for(const FirnModel& model, SolverChoice choice) {
    return make_solver(std::make_shared<const FirnModel>(model), choice);
}

}  // namespace

BoundaryUncertainty propagate_boundary_uncertainty(const ModelPerturbation& perturbation, SolverChoice solver,
                                                   std::span<const Receiver> receivers, const MapGrid& grid,
                                                   const VisibilityOptions& options,
                                                   const PropagationOptions& propagation, const RunControl& control) {
    VisibilityOptions one_model = options;
    one_model.threads = 1;
    one_model.control = {};
    one_model.control.cancel = control.cancel;
    const std::size_t rows = static_cast<std::size_t>(grid.depth_cells);
    const ModelProgress progress(control, models_to_evaluate(perturbation, propagation));
    // Two outputs per row: the boundary where it is finite, and a marker that is absent exactly
    // where the boundary is unbounded, so that the absent counts tell "none" from "unbounded".
    const auto evaluate = [&](const FirnModel& model) {
        const auto model_solver = solver_for(model, solver);
        const std::vector<double> boundary = compute_visibility_boundary(*model_solver, receivers, grid, one_model);
        std::vector<double> out(2 * rows);
        for (std::size_t j = 0; j < rows; ++j) {
            out[j] = std::isfinite(boundary[j]) ? boundary[j] : absent_value;
            out[rows + j] = std::isinf(boundary[j]) ? absent_value : 0.0;
        }
        progress.step();
        return out;
    };
    const PropagatedValues values = propagate_uncertainty(perturbation, evaluate, propagation, cancel_only(control));

    // The nominal boundary from the nominal outputs: the marker is absent exactly where it is
    // unbounded, and a boundary that is absent but marked is none (NaN).
    BoundaryUncertainty result;
    result.summary = summary_of(perturbation, propagation, values);
    result.nominal_m.resize(rows);
    for (std::size_t j = 0; j < rows; ++j)
        result.nominal_m[j] = std::isnan(values.nominal[rows + j]) ? std::numeric_limits<double>::infinity()
                                                                   : values.nominal[j];
    result.sigma_m.assign(rows, absent_value);
    result.without_boundary.assign(rows, 0);
    result.unbounded.assign(rows, 0);
    for (std::size_t j = 0; j < rows; ++j) {
        if (std::isfinite(result.nominal_m[j])) result.sigma_m[j] = values.sigma[j];
        result.unbounded[j] = values.absent[rows + j];
        result.without_boundary[j] = values.absent[j] >= result.unbounded[j] ? values.absent[j] - result.unbounded[j] : 0;
        // A linearised derivative is a central difference that does not look at the nominal
        // model: its flags say whether a step model lacks the output, so add the nominal's own.
        if (propagation.method == PropagationMethod::linearised) {
            if (std::isinf(result.nominal_m[j])) result.unbounded[j] = 1;
            if (std::isnan(result.nominal_m[j])) result.without_boundary[j] = 1;
        }
    }
    return result;
}

DepthScanUncertainty propagate_depth_scan_uncertainty(const ModelPerturbation& perturbation, SolverChoice solver,
                                                      const DepthScanOptions& options,
                                                      const PropagationOptions& propagation, const RunControl& control) {
    DepthScanOptions one_model = options;
    one_model.threads = 1;
    one_model.control = {};
    one_model.control.cancel = control.cancel;
    const std::size_t depths = options.receiver_depths_m.size();
    // Progress per scanned depth of every model.
    const ModelProgress progress(control, depths * models_to_evaluate(perturbation, propagation));
    one_model.control.progress = [&progress](std::size_t, std::size_t) { progress.step(); };
    constexpr std::size_t per_depth = 5;  // visible, two-path, ducted only, bottom only, strong
    const bool strong = options.amplitude_threshold_per_m.has_value();
    const auto evaluate = [&](const FirnModel& model) {
        const auto model_solver = solver_for(model, solver);
        const DepthScan scan = scan_receiver_depths(*model_solver, one_model);
        std::vector<double> out(per_depth * depths, absent_value);
        for (std::size_t k = 0; k < depths; ++k) {
            const DepthScanRow& row = scan.rows[k];
            out[per_depth * k + 0] = row.visible_volume_m3;
            out[per_depth * k + 1] = row.two_path_volume_m3;
            out[per_depth * k + 2] = row.ducted_only_volume_m3;
            out[per_depth * k + 3] = row.bottom_only_volume_m3;
            if (row.strong_volume_m3) out[per_depth * k + 4] = *row.strong_volume_m3;
        }
        return out;
    };
    const PropagatedValues values = propagate_uncertainty(perturbation, evaluate, propagation, cancel_only(control));
    DepthScanUncertainty result;
    result.summary = summary_of(perturbation, propagation, values);
    for (std::size_t k = 0; k < depths; ++k) {
        DepthScanUncertaintyRow row;
        row.visible_volume_sigma_m3 = values.sigma[per_depth * k + 0];
        row.two_path_volume_sigma_m3 = values.sigma[per_depth * k + 1];
        row.ducted_only_volume_sigma_m3 = values.sigma[per_depth * k + 2];
        row.bottom_only_volume_sigma_m3 = values.sigma[per_depth * k + 3];
        if (strong) row.strong_volume_sigma_m3 = values.sigma[per_depth * k + 4];
        result.rows.push_back(row);
    }
    return result;
}

}  // namespace firnray
