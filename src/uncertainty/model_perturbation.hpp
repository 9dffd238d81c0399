// A model's uncertainty ([uncertainty] of its file, model/firn_model.hpp) written as K independent
// standard-normal components u, so that every propagation draws or differentiates the same way
// (docs/uncertainty.md): the model at u has the parameters θ0 + Σ_k √λ_k v_k u_k, with λ_k, v_k
// the eigenpairs of their covariance, and, for a table, the values n_i + Σ_k √μ_k w_ik u_k with
// μ_k, w_k the leading eigenpairs of the per-point covariance σ_i σ_j exp(-(d_i - d_j)² / (2ℓ²)).
#pragma once

#include <cstddef>
#include <cstdint>
#include <span>
#include <string>
#include <vector>

#include "model/firn_model.hpp"

namespace firnray {

class ModelPerturbation {
public:
    // Throws ModelInputError when the model has no [uncertainty] (naming the model and saying how
    // to add one) or when its covariance has no variance at all.
    explicit ModelPerturbation(const FirnModel& model);

    // Number of components (eigenvectors kept: every one of a parameter covariance with a
    // non-zero eigenvalue, those of a table's covariance that hold 99.9 % of its variance).
    std::size_t dimension() const { return directions_.size(); }
    // The model at u (dimension() values, each in units of σ along its component); the nominal
    // model at u = 0. Throws ModelInputError (from the profile's checks) when the values make no
    // valid profile, e.g. n_surface above n_deep far out in a tail.
    FirnModel model_at(std::span<const double> u) const;
    const FirnModel& nominal() const { return nominal_; }
    // "3 parameters (n_surface, n_deep, scale_depth_m)" or "index of 120 table points, 14 components".
    std::string describe() const;

private:
    FirnModel nominal_;
    bool table_ = false;
    std::vector<double> base_;                     // parameter values, or tabulated n
    std::vector<std::vector<double>> directions_;  // √λ v, one per component, over base_
};

// The standard-normal vector of Monte Carlo draw `draw` for `seed`: the same numbers whatever
// the thread that asks, so outputs do not depend on --threads (SplitMix64 seeded by seed and
// draw, then Box–Muller).
std::vector<double> standard_normal_draw(std::uint64_t seed, std::size_t draw, std::size_t dimension);

}  // namespace firnray
