// Carrying a model's uncertainty into any set of numbers computed from the model (times, time
// differences, a boundary distance, a volume): linearised, with central differences along each
// component of the ModelPerturbation, or by Monte Carlo over profiles drawn from the covariance
// (docs/uncertainty.md). An output may be absent in a model (a path that a perturbed profile no
// longer has): NaN marks it, and it is counted rather than averaged.
#pragma once

#include <cstddef>
#include <cstdint>
#include <functional>
#include <vector>

#include "core/cancel.hpp"
#include "uncertainty/model_perturbation.hpp"

namespace firnray {

enum class PropagationMethod { linearised, monte_carlo };

struct PropagationOptions {
    PropagationMethod method = PropagationMethod::linearised;
    int samples = 100;                 // Monte Carlo draws
    std::uint64_t seed = 20261203;     // Monte Carlo seed (the front end's --seed)
    int threads = 1;                   // models evaluated at once; results do not depend on it
    // Linearised: the step of the central differences along each component, in units of its σ.
    // A secant over ±0.5σ follows the curvature of a near-linear output better than a tangent
    // at 0 and stays far from the tails where a profile becomes invalid.
    double step_sigma = 0.5;
};

struct PropagatedValues {
    std::vector<double> nominal;                  // the outputs at the nominal model (NaN: absent)
    std::vector<std::vector<double>> covariance;  // their covariance (NaN where it cannot be given)
    std::vector<double> sigma;                    // √ of its diagonal
    // Linearised: 0, or 1 for an output that a model within ±step lacks. Monte Carlo: the number
    // of valid draws in which the output was absent.
    std::vector<std::size_t> absent;
    std::size_t models = 0;    // models evaluated, the nominal one included
    std::size_t rejected = 0;  // draws or steps that made no valid profile (left out)
};

// The outputs of `evaluate` (which returns the same number of values for every model, NaN for an
// absent one, and must be safe to call from several threads at once) with their covariance.
// Monte Carlo: the covariance of the valid draws about their mean, each element over the draws
// that have both outputs (at least 2, else NaN). Linearised: J Jᵀ with J by central differences
// (one-sided when one side makes no valid profile). Progress and cancellation through `control`.
PropagatedValues propagate_uncertainty(const ModelPerturbation& perturbation,
                                       const std::function<std::vector<double>(const FirnModel&)>& evaluate,
                                       const PropagationOptions& options, const RunControl& control = {});

}  // namespace firnray
