#include "uncertainty/propagation.hpp"

#include <cmath>
#include <limits>
#include <optional>

#include <fmt/format.h>

#include "core/errors.hpp"
#include "core/parallel.hpp"

namespace firnray {

namespace {

constexpr double absent_value = std::numeric_limits<double>::quiet_NaN();

// The outputs at u, or nothing when u makes no valid profile.
std::optional<std::vector<double>> outputs_at(const ModelPerturbation& perturbation, const std::vector<double>& u,
                                              const std::function<std::vector<double>(const FirnModel&)>& evaluate,
                                              std::size_t expected) {
    FirnModel model;
    try {
        model = perturbation.model_at(u);
    } catch (const ModelInputError&) {
        return std::nullopt;
    }
    std::vector<double> out = evaluate(model);
    if (expected != 0 && out.size() != expected)
        throw NumericalError(fmt::format("a perturbed model gave {} outputs instead of {}", out.size(), expected));
    return out;
}

PropagatedValues linearised(const ModelPerturbation& perturbation,
                            const std::function<std::vector<double>(const FirnModel&)>& evaluate,
                            const PropagationOptions& options, const RunControl& control, PropagatedValues result) {
    const std::size_t k = perturbation.dimension();
    const std::size_t m = result.nominal.size();
    const double h = options.step_sigma;
    std::vector<std::optional<std::vector<double>>> sides(2 * k);
    parallel_for(2 * k, options.threads, control, [&](std::size_t i) {
        std::vector<double> u(k, 0.0);
        u[i / 2] = i % 2 == 0 ? h : -h;
        sides[i] = outputs_at(perturbation, u, evaluate, m);
    });
    result.models += 2 * k;
    std::vector<std::vector<double>> jacobian(m, std::vector<double>(k, 0.0));
    std::vector<bool> unknown(m, false);
    for (std::size_t c = 0; c < k; ++c) {
        const auto& plus = sides[2 * c];
        const auto& minus = sides[2 * c + 1];
        result.rejected += (plus ? 0 : 1) + (minus ? 0 : 1);
        if (!plus && !minus)
            throw NumericalError(fmt::format("both steps of ±{}σ along component {} of the model's uncertainty make "
                                             "no valid profile: the covariance is too wide for a linearised "
                                             "propagation",
                                             h, c + 1));
        for (std::size_t i = 0; i < m; ++i) {
            const double f0 = result.nominal[i];
            const double fp = plus ? (*plus)[i] : absent_value;
            const double fm = minus ? (*minus)[i] : absent_value;
            double derivative = absent_value;
            if (plus && minus) derivative = (fp - fm) / (2.0 * h);
            else if (plus) derivative = (fp - f0) / h;
            else derivative = (f0 - fm) / h;
            if (!std::isfinite(derivative)) unknown[i] = true;
            jacobian[i][c] = derivative;
        }
    }
    result.covariance.assign(m, std::vector<double>(m, absent_value));
    for (std::size_t i = 0; i < m; ++i) {
        result.absent[i] = unknown[i] ? 1 : 0;
        for (std::size_t j = 0; j <= i; ++j) {
            if (unknown[i] || unknown[j]) continue;
            double sum = 0.0;
            for (std::size_t c = 0; c < k; ++c) sum += jacobian[i][c] * jacobian[j][c];
            result.covariance[i][j] = result.covariance[j][i] = sum;
        }
    }
    return result;
}

PropagatedValues monte_carlo(const ModelPerturbation& perturbation,
                             const std::function<std::vector<double>(const FirnModel&)>& evaluate,
                             const PropagationOptions& options, const RunControl& control, PropagatedValues result) {
    if (options.samples < 2) throw DataInputError("a Monte Carlo propagation needs at least 2 samples");
    const std::size_t n = static_cast<std::size_t>(options.samples);
    const std::size_t k = perturbation.dimension();
    const std::size_t m = result.nominal.size();
    std::vector<std::optional<std::vector<double>>> draws(n);
    parallel_for(n, options.threads, control, [&](std::size_t s) {
        draws[s] = outputs_at(perturbation, standard_normal_draw(options.seed, s, k), evaluate, m);
    });
    result.models += n;
    // Means and covariances over the draws that have the outputs, summed in draw order so that
    // the result does not depend on the thread count.
    std::vector<double> mean(m, 0.0);
    std::vector<std::size_t> count(m, 0);
    for (const auto& d : draws) {
        if (!d) {
            ++result.rejected;
            continue;
        }
        for (std::size_t i = 0; i < m; ++i)
            if (std::isfinite((*d)[i])) {
                mean[i] += (*d)[i];
                ++count[i];
            }
    }
    const std::size_t valid = n - result.rejected;
    if (valid < 2)
        throw NumericalError(fmt::format("only {} of {} Monte Carlo draws made a valid profile: the covariance is "
                                         "too wide for this model",
                                         valid, n));
    for (std::size_t i = 0; i < m; ++i) {
        mean[i] = count[i] > 0 ? mean[i] / static_cast<double>(count[i]) : absent_value;
        result.absent[i] = valid - count[i];
    }
    result.covariance.assign(m, std::vector<double>(m, absent_value));
    for (std::size_t i = 0; i < m; ++i)
        for (std::size_t j = 0; j <= i; ++j) {
            double sum = 0.0;
            std::size_t both = 0;
            for (const auto& d : draws) {
                if (!d || !std::isfinite((*d)[i]) || !std::isfinite((*d)[j])) continue;
                sum += ((*d)[i] - mean[i]) * ((*d)[j] - mean[j]);
                ++both;
            }
            if (both >= 2) result.covariance[i][j] = result.covariance[j][i] = sum / static_cast<double>(both - 1);
        }
    return result;
}

}  // namespace

PropagatedValues propagate_uncertainty(const ModelPerturbation& perturbation,
                                       const std::function<std::vector<double>(const FirnModel&)>& evaluate,
                                       const PropagationOptions& options, const RunControl& control) {
    if (!(options.step_sigma > 0.0 && options.step_sigma <= 3.0))
        throw DataInputError(fmt::format("the linearisation step {}σ is not in (0, 3]", options.step_sigma));
    PropagatedValues result;
    result.nominal = evaluate(perturbation.nominal());
    result.models = 1;
    result.absent.assign(result.nominal.size(), 0);
    result = options.method == PropagationMethod::linearised
                 ? linearised(perturbation, evaluate, options, control, std::move(result))
                 : monte_carlo(perturbation, evaluate, options, control, std::move(result));
    result.sigma.resize(result.nominal.size());
    for (std::size_t i = 0; i < result.nominal.size(); ++i) {
        const double v = result.covariance[i][i];
        result.sigma[i] = std::isfinite(v) ? std::sqrt(std::max(v, 0.0)) : absent_value;
    }
    return result;
}

}  // namespace firnray
