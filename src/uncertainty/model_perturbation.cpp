#include "uncertainty/model_perturbation.hpp"

#include <algorithm>
#include <cmath>
#include <numbers>

#include <Eigen/Eigenvalues>
#include <fmt/format.h>
#include <fmt/ranges.h>

#include "core/errors.hpp"
#include "model/model_parameters.hpp"
#include "model/table_profile.hpp"

namespace firnray {

namespace {

// Fraction of a table covariance's variance (its trace) that the kept components must hold.
constexpr double kept_table_variance = 0.999;

}  // namespace

ModelPerturbation::ModelPerturbation(const FirnModel& model) : nominal_(model) {
    if (!model.uncertainty)
        throw ModelInputError(fmt::format("model '{}' ({}) has no [uncertainty] table, so there is nothing to "
                                          "propagate: add the covariance of its parameters (profile --fit and "
                                          "calibrate --write-model write one; docs/uncertainty.md)",
                                          model.name, model.origin),
                              InputLocation{model.origin, 0, "uncertainty"});
    const ModelUncertainty& u = *model.uncertainty;
    if (u.parameters) {
        const auto names = profile_parameter_names(*model.index);
        base_ = profile_parameter_values(*model.index);
        const std::size_t m = u.parameters->names.size();
        Eigen::MatrixXd c(m, m);
        for (std::size_t r = 0; r < m; ++r)
            for (std::size_t k = 0; k < m; ++k) c(r, k) = u.parameters->matrix[r][k];
        const Eigen::SelfAdjointEigenSolver<Eigen::MatrixXd> eigen(0.5 * (c + c.transpose()));
        const double largest = eigen.eigenvalues().maxCoeff();
        std::vector<std::size_t> position(m);
        for (std::size_t r = 0; r < m; ++r)
            position[r] = parameter_position(names, u.parameters->names[r], u.where,
                                             fmt::format("the {} profile", model.index->kind()));
        for (Eigen::Index k = m - 1; k >= 0; --k) {  // largest first
            const double lambda = eigen.eigenvalues()(k);
            if (!(lambda > 1e-14 * largest)) continue;
            std::vector<double> direction(base_.size(), 0.0);
            for (std::size_t r = 0; r < m; ++r) direction[position[r]] = std::sqrt(lambda) * eigen.eigenvectors()(r, k);
            directions_.push_back(std::move(direction));
        }
    } else if (u.index) {
        const auto* table = dynamic_cast<const TableProfile*>(model.index.get());
        if (table == nullptr)
            throw ModelInputError("a 1-sigma per point needs a table profile", u.where);
        table_ = true;
        base_ = table->tabulated_n();
        const auto& depth = table->depth_m();
        const std::size_t k = base_.size();
        const double ell = u.index->correlation_length_m;
        Eigen::MatrixXd c(k, k);
        for (std::size_t i = 0; i < k; ++i)
            for (std::size_t j = 0; j < k; ++j) {
                const double d = depth[i] - depth[j];
                const double rho = ell > 0.0 ? std::exp(-d * d / (2.0 * ell * ell)) : (i == j ? 1.0 : 0.0);
                c(i, j) = u.index->sigma_n[i] * u.index->sigma_n[j] * rho;
            }
        const Eigen::SelfAdjointEigenSolver<Eigen::MatrixXd> eigen(c);
        const double trace = c.trace();
        double held = 0.0;
        for (Eigen::Index e = k - 1; e >= 0 && held < kept_table_variance * trace; --e) {
            const double mu = eigen.eigenvalues()(e);
            if (!(mu > 1e-14 * eigen.eigenvalues().maxCoeff())) break;
            held += mu;
            std::vector<double> direction(k);
            for (std::size_t i = 0; i < k; ++i) direction[i] = std::sqrt(mu) * eigen.eigenvectors()(i, e);
            directions_.push_back(std::move(direction));
        }
    }
    if (directions_.empty())
        throw ModelInputError(fmt::format("the [uncertainty] of model '{}' has no variance at all (every 1-sigma is 0)",
                                          model.name),
                              u.where);
}

FirnModel ModelPerturbation::model_at(std::span<const double> u) const {
    if (u.size() != directions_.size())
        throw NumericalError(fmt::format("{} components given for a perturbation of {}", u.size(), directions_.size()));
    std::vector<double> values = base_;
    for (std::size_t k = 0; k < directions_.size(); ++k)
        if (u[k] != 0.0)
            for (std::size_t i = 0; i < values.size(); ++i) values[i] += u[k] * directions_[k][i];
    FirnModel out = nominal_;
    out.uncertainty.reset();
    out.warnings.clear();
    out.index = table_ ? table_with_index(*nominal_.index, values) : profile_with_parameters(*nominal_.index, values);
    return out;
}

std::string ModelPerturbation::describe() const {
    if (table_)
        return fmt::format("index at {} table points, {} components", base_.size(), directions_.size());
    const auto& names = nominal_.uncertainty->parameters->names;
    return fmt::format("{} parameter{} ({})", names.size(), names.size() == 1 ? "" : "s", fmt::join(names, ", "));
}

std::vector<double> standard_normal_draw(std::uint64_t seed, std::size_t draw, std::size_t dimension) {
    // SplitMix64 (Steele, Lea & Flood 2014): a fixed, portable stream for each (seed, draw).
    std::uint64_t state = seed * 0x9E3779B97F4A7C15ULL + (static_cast<std::uint64_t>(draw) + 1) * 0xD1B54A32D192ED03ULL;
    const auto next = [&state] {
        std::uint64_t z = (state += 0x9E3779B97F4A7C15ULL);
        z = (z ^ (z >> 30)) * 0xBF58476D1CE4E5B9ULL;
        z = (z ^ (z >> 27)) * 0x94D049BB133111EBULL;
        return z ^ (z >> 31);
    };
    const auto uniform = [&] { return (static_cast<double>(next() >> 11) + 0.5) * 0x1.0p-53; };  // in (0, 1)
    std::vector<double> out(dimension);
    for (std::size_t i = 0; i < dimension; i += 2) {
        const double radius = std::sqrt(-2.0 * std::log(uniform()));
        const double angle = 2.0 * std::numbers::pi * uniform();
        out[i] = radius * std::cos(angle);
        if (i + 1 < dimension) out[i + 1] = radius * std::sin(angle);
    }
    return out;
}

}  // namespace firnray
