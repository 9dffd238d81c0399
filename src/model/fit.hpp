// Least-squares fit of the exponential firn model n(d) = n_deep - (n_deep - n_surface) exp(-d / z0)
// to measured (depth, n) points, or to densities converted with a published relation
// (docs/physics.md §1). Levenberg-Marquardt on Eigen, with 1σ uncertainties from the covariance.
#pragma once

#include <optional>
#include <span>

#include <Eigen/Core>

#include "model/density.hpp"
#include "model/index_profile.hpp"

namespace firnray {

struct ExponentialFitOptions {
    std::optional<double> fixed_n_deep;  // hold n_deep at this value and fit the other two
    int max_iterations = 200;
};

struct ExponentialFit {
    double n_deep = 0.0, n_surface = 0.0, scale_depth_m = 0.0;
    // 1σ uncertainties: sqrt of the diagonal of the covariance s² (JᵀJ)⁻¹, with s² the residual
    // variance SSR / (points - parameters). Zero for a parameter held fixed.
    double n_deep_sigma = 0.0, n_surface_sigma = 0.0, scale_depth_sigma_m = 0.0;
    bool n_deep_fixed = false;
    Eigen::Matrix3d covariance = Eigen::Matrix3d::Zero();  // order (n_deep, n_surface, scale_depth_m)
    double residual_rms = 0.0;    // sqrt(SSR / points)
    double residual_sigma = 0.0;  // s = sqrt(SSR / (points - parameters))
    int iterations = 0;           // Levenberg-Marquardt iterations taken
    std::size_t points = 0;
    std::size_t parameters = 0;   // 3, or 2 with n_deep fixed

    ExponentialProfile profile() const { return ExponentialProfile(n_deep, n_surface, scale_depth_m); }
};

// Fits to index values n at depths depth_m (>= 0, m). Throws DataInputError for mismatched
// lengths, non-finite values, negative depths, n < 1, too few points (parameters + 1) or distinct
// depths (one per parameter), or data that do not rise with depth; NumericalError when the
// iteration does not converge or the data cannot determine the parameters.
ExponentialFit fit_exponential(std::span<const double> depth_m, std::span<const double> n,
                               const ExponentialFitOptions& options = {});

// The same for densities (g/cm³), converted to n with `rule` first.
ExponentialFit fit_exponential_to_density(std::span<const double> depth_m, std::span<const double> density_g_cm3,
                                          DensityRule rule, const ExponentialFitOptions& options = {});

}  // namespace firnray
