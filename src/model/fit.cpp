#include "model/fit.hpp"

#include "core/text.hpp"
#include "model/model_limits.hpp"

#include <algorithm>
#include <cmath>
#include <set>
#include <vector>

#include <Eigen/Dense>
#include <fmt/format.h>

#include "core/errors.hpp"

namespace firnray {

namespace {

// The free parameters: (n_deep, n_surface, ln z0), or (n_surface, ln z0) with n_deep held.
// Fitting ln z0 keeps the scale depth positive without constraints.
struct Problem {
    std::span<const double> depth, n;
    std::optional<double> fixed_n_deep;

    std::size_t parameter_count() const { return fixed_n_deep ? 2 : 3; }
    void unpack(const Eigen::VectorXd& theta, double& a, double& s, double& z0) const {
        if (fixed_n_deep) {
            a = *fixed_n_deep;
            s = theta[0];
            z0 = std::exp(theta[1]);
        } else {
            a = theta[0];
            s = theta[1];
            z0 = std::exp(theta[2]);
        }
    }
    // Residuals n_i - model(d_i) and the Jacobian of the model with respect to theta.
    double evaluate(const Eigen::VectorXd& theta, Eigen::VectorXd& residual, Eigen::MatrixXd* jacobian) const {
        double a, s, z0;
        unpack(theta, a, s, z0);
        const std::size_t count = depth.size();
        residual.resize(static_cast<Eigen::Index>(count));
        if (jacobian) jacobian->resize(static_cast<Eigen::Index>(count), static_cast<Eigen::Index>(parameter_count()));
        for (std::size_t i = 0; i < count; ++i) {
            const auto row = static_cast<Eigen::Index>(i);
            const double e = std::exp(-depth[i] / z0);
            residual[row] = n[i] - (a - (a - s) * e);
            if (!jacobian) continue;
            const double d_log_scale = -(a - s) * e * depth[i] / z0;  // ∂model/∂(ln z0)
            if (fixed_n_deep) {
                (*jacobian)(row, 0) = e;
                (*jacobian)(row, 1) = d_log_scale;
            } else {
                (*jacobian)(row, 0) = 1.0 - e;
                (*jacobian)(row, 1) = e;
                (*jacobian)(row, 2) = d_log_scale;
            }
        }
        return residual.squaredNorm();
    }
};

// For a given z0 the model is linear in (n_deep, n_surface): solve that exactly. Scanning z0 on a
// geometric grid this way gives a start close to the global minimum whatever the data.
Eigen::VectorXd starting_point(const Problem& problem) {
    const double deepest = *std::max_element(problem.depth.begin(), problem.depth.end());
    const double shallowest = *std::min_element(problem.depth.begin(), problem.depth.end());
    const double span = std::max(deepest - shallowest, 1e-3);
    double best_ssr = INFINITY;
    Eigen::VectorXd best(static_cast<Eigen::Index>(problem.parameter_count()));
    const int steps = 60;
    for (int k = 0; k <= steps; ++k) {
        const double z0 = span / 50.0 * std::pow(1000.0, static_cast<double>(k) / steps);  // span/50 .. 20 span
        double a, s;
        // Normal equations of the linear problem m = a (1 - e) + s e.
        double see = 0, sff = 0, sef = 0, sen = 0, sfn = 0;
        for (std::size_t i = 0; i < problem.depth.size(); ++i) {
            const double e = std::exp(-problem.depth[i] / z0), f = 1.0 - e;
            see += e * e;
            sff += f * f;
            sef += e * f;
            sen += e * problem.n[i];
            sfn += f * problem.n[i];
        }
        if (problem.fixed_n_deep) {
            a = *problem.fixed_n_deep;
            if (see <= 0.0) continue;
            s = (sen - a * sef) / see;
        } else {
            const double det = see * sff - sef * sef;
            if (!(std::abs(det) > 1e-14 * see * sff)) continue;
            s = (sen * sff - sfn * sef) / det;
            a = (sfn * see - sen * sef) / det;
        }
        double ssr = 0;
        for (std::size_t i = 0; i < problem.depth.size(); ++i) {
            const double r = problem.n[i] - (a - (a - s) * std::exp(-problem.depth[i] / z0));
            ssr += r * r;
        }
        if (ssr < best_ssr) {
            best_ssr = ssr;
            if (problem.fixed_n_deep) best << s, std::log(z0);
            else best << a, s, std::log(z0);
        }
    }
    if (!std::isfinite(best_ssr))
        throw NumericalError("the exponential fit found no starting point (the depths may be too close together)");
    return best;
}

void validate(std::span<const double> depth, std::span<const double> n, const ExponentialFitOptions& options,
              const char* value_name) {
    if (depth.size() != n.size())
        throw DataInputError(fmt::format("{} depths but {} {} values", depth.size(), n.size(), value_name));
    const std::size_t parameters = options.fixed_n_deep ? 2 : 3;
    if (depth.size() < parameters + 1)
        throw DataInputError(fmt::format("{} point{} are too few to fit {} parameters (at least {} are needed)",
                                         depth.size(), depth.size() == 1 ? "" : "s", parameters, parameters + 1));
    for (std::size_t i = 0; i < depth.size(); ++i) {
        if (!std::isfinite(depth[i]) || depth[i] < 0.0)
            throw DataInputError(fmt::format("point {}: depth {} m must be finite and >= 0", i + 1, depth[i]));
        if (!std::isfinite(n[i]))
            throw DataInputError(fmt::format("point {}: the {} value is not finite", i + 1, value_name));
    }
    if (std::set<double>(depth.begin(), depth.end()).size() < parameters)
        throw DataInputError(fmt::format("the points lie at fewer than {} different depths: the fit needs the "
                                         "profile's shape",
                                         parameters));
    if (options.fixed_n_deep && (!std::isfinite(*options.fixed_n_deep) || *options.fixed_n_deep < 1.0))
        throw DataInputError(fmt::format("the fixed n_deep = {} must be finite and >= 1", *options.fixed_n_deep));
}

}  // namespace

// A least-squares optimum can lie where no firn is (data far from the exponential shape pull
// n_surface below 1 or the scale depth to zero): that is a failed fit, never a model to write.
static void check_physical(const ExponentialFit& fit) {
    const auto outside = [](double value, const NumberRange& range) {
        return !(value >= range.low && value <= range.high);
    };
    std::string what;
    if (outside(fit.n_surface, model_limits::index))
        what = fmt::format("n_surface = {}", number_for_message(fit.n_surface));
    else if (outside(fit.n_deep, model_limits::index))
        what = fmt::format("n_deep = {}", number_for_message(fit.n_deep));
    else if (outside(fit.scale_depth_m, model_limits::scale_depth))
        what = fmt::format("scale depth {} m", number_for_message(fit.scale_depth_m));
    if (!what.empty())
        throw NumericalError(fmt::format(
            "the best exponential fit has {}, outside what firn can be (n between 1 and 2, scale depth "
            "0.01 to 10000 m): the data do not follow the exponential model; check them, or hold n_deep fixed",
            what));
}

ExponentialFit fit_exponential(std::span<const double> depth_m, std::span<const double> n,
                               const ExponentialFitOptions& options) {
    validate(depth_m, n, options, "n");
    for (std::size_t i = 0; i < n.size(); ++i) {
        if (n[i] < 1.0) throw DataInputError(fmt::format("point {}: n = {} is below 1", i + 1, n[i]));
        if (n[i] > model_limits::index.high)
            throw DataInputError(fmt::format("point {}: n = {} is above 2, which no snow, firn or ice reaches", i + 1,
                                             number_for_message(n[i])));
    }

    const Problem problem{depth_m, n, options.fixed_n_deep};
    const auto p = static_cast<Eigen::Index>(problem.parameter_count());
    Eigen::VectorXd theta = starting_point(problem);
    Eigen::VectorXd residual, trial_residual;
    Eigen::MatrixXd jacobian;
    double ssr = problem.evaluate(theta, residual, &jacobian);

    // Levenberg-Marquardt with Marquardt's diagonal scaling (Nocedal & Wright, Numerical
    // Optimization, §10.3); the damping shrinks after a good step and grows after a bad one.
    double damping = 1e-3;
    int iteration = 0;
    bool converged = false;
    while (iteration < options.max_iterations) {
        ++iteration;
        const Eigen::MatrixXd normal = jacobian.transpose() * jacobian;
        const Eigen::VectorXd gradient = jacobian.transpose() * residual;
        // The undamped (Gauss-Newton) step tells how far the minimum still is. The sum of squares is
        // flat to rounding within about sqrt(machine epsilon) of the minimum, so that is the floor.
        const Eigen::VectorXd newton = normal.ldlt().solve(gradient);
        const double newton_size = (newton.array().abs() / (theta.array().abs() + 1e-8)).maxCoeff();
        if (ssr == 0.0 || (std::isfinite(newton_size) && newton_size < 1e-9)) {
            converged = true;
            break;
        }
        bool accepted = false;
        while (damping < 1e20) {
            Eigen::MatrixXd damped = normal;
            for (Eigen::Index k = 0; k < p; ++k) damped(k, k) += damping * std::max(normal(k, k), 1e-300);
            const Eigen::VectorXd step = damped.ldlt().solve(gradient);
            const Eigen::VectorXd trial = theta + step;
            const double trial_ssr = problem.evaluate(trial, trial_residual, nullptr);
            if (std::isfinite(trial_ssr) && trial_ssr <= ssr) {
                const double relative_gain = (ssr - trial_ssr) / ssr;
                theta = trial;
                ssr = problem.evaluate(theta, residual, &jacobian);
                damping = std::max(damping / 3.0, 1e-12);
                accepted = true;
                if (relative_gain < 1e-14 && newton_size < 1e-6) converged = true;
                break;
            }
            damping *= 4.0;
        }
        if (!accepted) {
            // Even tiny steps do not lower the sum of squares: at the minimum to rounding if the
            // Newton step is already small, otherwise stuck.
            converged = std::isfinite(newton_size) && newton_size < 1e-6;
            break;
        }
        if (converged) break;
    }
    if (!converged)
        throw NumericalError(fmt::format("the exponential fit did not converge in {} iterations", options.max_iterations));

    ExponentialFit fit;
    problem.unpack(theta, fit.n_deep, fit.n_surface, fit.scale_depth_m);
    fit.n_deep_fixed = options.fixed_n_deep.has_value();
    fit.iterations = iteration;
    fit.points = depth_m.size();
    fit.parameters = static_cast<std::size_t>(p);
    fit.residual_rms = std::sqrt(ssr / static_cast<double>(fit.points));
    fit.residual_sigma = std::sqrt(ssr / static_cast<double>(fit.points - fit.parameters));
    check_physical(fit);
    if (fit.n_surface > fit.n_deep)
        throw DataInputError(fmt::format("the data do not rise with depth: the best fit has n_surface = {:.5g} above "
                                         "n_deep = {:.5g}",
                                         fit.n_surface, fit.n_deep));

    // Covariance in the reported parameters (n_deep, n_surface, z0): the Jacobian column for
    // ln z0 times 1/z0 is the column for z0.
    Eigen::MatrixXd j = jacobian;
    j.col(p - 1) /= fit.scale_depth_m;
    const Eigen::MatrixXd normal = j.transpose() * j;
    const Eigen::JacobiSVD<Eigen::MatrixXd> svd(normal);
    const double largest = svd.singularValues()(0), smallest = svd.singularValues()(p - 1);
    if (!(smallest > 1e-13 * largest))
        throw NumericalError("the data cannot determine all fitted parameters (the normal matrix is singular); "
                             "sample deeper or hold n_deep fixed");
    const Eigen::MatrixXd covariance = fit.residual_sigma * fit.residual_sigma * normal.inverse();
    const Eigen::Index offset = fit.n_deep_fixed ? 1 : 0;  // where the fitted block sits in the 3x3
    for (Eigen::Index r = 0; r < p; ++r)
        for (Eigen::Index c = 0; c < p; ++c) fit.covariance(r + offset, c + offset) = covariance(r, c);
    fit.n_deep_sigma = std::sqrt(fit.covariance(0, 0));
    fit.n_surface_sigma = std::sqrt(fit.covariance(1, 1));
    fit.scale_depth_sigma_m = std::sqrt(fit.covariance(2, 2));
    return fit;
}

ExponentialFit fit_exponential_to_density(std::span<const double> depth_m, std::span<const double> density_g_cm3,
                                          DensityRule rule, const ExponentialFitOptions& options) {
    validate(depth_m, density_g_cm3, options, "density");
    std::vector<double> n(density_g_cm3.size());
    for (std::size_t i = 0; i < n.size(); ++i) {
        if (density_g_cm3[i] < lowest_plausible_density_g_cm3 || density_g_cm3[i] > highest_plausible_density_g_cm3)
            throw DataInputError(fmt::format("point {}: density {} g/cm3 is not a snow, firn or ice density", i + 1,
                                             density_g_cm3[i]));
        n[i] = index_from_density(density_g_cm3[i], rule);
    }
    return fit_exponential(depth_m, n, options);
}

}  // namespace firnray
