#include "model/uncertainty_section.hpp"

#include <algorithm>
#include <cmath>
#include <set>

#include <Eigen/Eigenvalues>
#include <fmt/format.h>

#include "core/errors.hpp"
#include "core/text.hpp"
#include "model/model_parameters.hpp"
#include "model/table_profile.hpp"

namespace firnray {

void check_parameter_covariance(const ParameterCovariance& covariance, const InputLocation& where) {
    const std::size_t n = covariance.names.size();
    if (covariance.matrix.size() != n)
        throw ModelInputError(fmt::format("the covariance has {} rows for {} parameters", covariance.matrix.size(), n),
                              where);
    double largest_diagonal = 0.0;
    for (std::size_t r = 0; r < n; ++r) {
        if (covariance.matrix[r].size() != n)
            throw ModelInputError(fmt::format("row {} of the covariance ({}) has {} numbers, not {}", r + 1,
                                              covariance.names[r], covariance.matrix[r].size(), n),
                                  where);
        for (double v : covariance.matrix[r])
            if (!std::isfinite(v)) throw ModelInputError("the covariance holds a value that is not finite", where);
        if (covariance.matrix[r][r] < 0.0)
            throw ModelInputError(fmt::format("the variance of {} is negative ({}): a covariance has no negative "
                                              "diagonal element",
                                              covariance.names[r], number_for_message(covariance.matrix[r][r])),
                                  where);
        largest_diagonal = std::max(largest_diagonal, covariance.matrix[r][r]);
    }
    Eigen::MatrixXd m(n, n);
    for (std::size_t r = 0; r < n; ++r)
        for (std::size_t c = 0; c < n; ++c) {
            m(r, c) = covariance.matrix[r][c];
            const double asymmetry = std::abs(covariance.matrix[r][c] - covariance.matrix[c][r]);
            if (c > r && asymmetry > 1e-9 * largest_diagonal)
                throw ModelInputError(
                    fmt::format("the covariance is not symmetric: element ({}, {}) = {} but ({}, {}) = {} "
                                "(parameters {} and {})",
                                r + 1, c + 1, number_for_message(covariance.matrix[r][c]), c + 1, r + 1,
                                number_for_message(covariance.matrix[c][r]), covariance.names[r], covariance.names[c]),
                    where);
        }
    if (n == 0) return;
    const Eigen::SelfAdjointEigenSolver<Eigen::MatrixXd> eigen(0.5 * (m + m.transpose()), Eigen::EigenvaluesOnly);
    const double largest = eigen.eigenvalues().maxCoeff();
    const double smallest = eigen.eigenvalues().minCoeff();
    if (smallest < -1e-9 * std::max(largest, 0.0) || (largest <= 0.0 && smallest < 0.0))
        throw ModelInputError(fmt::format("the covariance is not positive semi-definite: its smallest eigenvalue is "
                                          "{} (largest {}); a correlation above 1 in size is the usual cause",
                                          number_for_message(smallest), number_for_message(largest)),
                              where);
}

namespace {

ParameterCovariance read_parameter_covariance(const TomlTable& t, const IndexProfile& profile) {
    const std::vector<std::string> known = profile_parameter_names(profile);
    if (known.empty())
        t.fail("parameters", fmt::format("a {} profile has no parameters: give index_sigma (a 1σ of n per point) "
                                         "instead",
                                         profile.kind()));
    if (!t.has("covariance")) t.fail("covariance", "missing: 'parameters' needs a covariance matrix, one row per parameter");
    ParameterCovariance out;
    std::set<std::string> seen;
    for (const auto& name : t.texts("parameters")) {
        parameter_position(known, name.value, name.where, fmt::format("the {} profile", profile.kind()));
        if (!seen.insert(name.value).second)
            throw ModelInputError(fmt::format("'{}' is named twice", name.value), name.where);
        out.names.push_back(name.value);
    }
    if (out.names.empty()) t.fail("parameters", "is empty: name at least one parameter");
    const auto rows = t.number_rows("covariance");
    if (rows.size() != out.names.size())
        t.fail("covariance", fmt::format("has {} rows for {} parameters", rows.size(), out.names.size()));
    for (std::size_t r = 0; r < rows.size(); ++r) {
        if (rows[r].size() != out.names.size())
            throw ModelInputError(fmt::format("row {} ({}) has {} numbers for {} parameters", r + 1, out.names[r],
                                              rows[r].size(), out.names.size()),
                                  rows[r].empty() ? t.where("covariance") : rows[r].front().where);
        std::vector<double> row;
        for (const auto& v : rows[r]) row.push_back(v.value);
        out.matrix.push_back(std::move(row));
    }
    check_parameter_covariance(out, t.where("covariance"));
    return out;
}

IndexUncertainty read_index_uncertainty(const TomlTable& t, const IndexProfile& profile) {
    const auto* table = dynamic_cast<const TableProfile*>(&profile);
    if (table == nullptr)
        t.fail("index_sigma", fmt::format("a 1σ per point needs a table profile, not {}: give parameters and "
                                          "covariance instead",
                                          profile.kind()));
    const std::size_t points = table->depth_m().size();
    IndexUncertainty out;
    const NumberRange sigma_range{0.0, 0.5, "", "a 1σ of n", "n itself lies between 1 and about 1.8"};
    if (!t.holds_array("index_sigma")) {
        out.sigma_n.assign(points, t.number("index_sigma", "index_sigma", sigma_range));
    } else {
        const auto values = t.numbers("index_sigma");
        if (values.size() != points)
            t.fail("index_sigma", fmt::format("has {} values for the {} points of the table (give one number for "
                                              "all, or one per point)",
                                              values.size(), points));
        for (const auto& v : values) {
            TomlTable::check_range(v.value, v.where, "index_sigma", sigma_range);
            out.sigma_n.push_back(v.value);
        }
    }
    out.correlation_length_m =
        t.optional_number("correlation_length_m",
                          NumberRange{0.0, 1e4, "m", "a correlation length", "0 means independent points"})
            .value_or(0.0);
    return out;
}

}  // namespace

ModelUncertainty read_uncertainty_section(const TomlTable& t, const IndexProfile& profile) {
    t.allow_only({"parameters", "covariance", "index_sigma", "correlation_length_m"}, "in [uncertainty]");
    ModelUncertainty out;
    out.where = InputLocation{t.origin(), t.line(), t.path()};
    if (t.has("parameters") || t.has("covariance")) {
        if (!t.has("parameters"))
            t.fail("parameters", "missing: name the parameters of the covariance's rows, e.g. "
                                 "parameters = [\"n_surface\", \"n_deep\", \"scale_depth_m\"]");
        out.parameters = read_parameter_covariance(t, profile);
    }
    if (t.has("index_sigma")) out.index = read_index_uncertainty(t, profile);
    else if (t.has("correlation_length_m"))
        t.fail("correlation_length_m", "goes with index_sigma, which is missing");
    if (!out.parameters && !out.index)
        t.fail("parameters", "[uncertainty] is empty: give parameters and covariance, or index_sigma for a table");
    return out;
}

void write_uncertainty_section(const ModelUncertainty& uncertainty, TomlWriter& out) {
    if (!uncertainty.parameters && !uncertainty.index) return;
    out.table("uncertainty");
    if (uncertainty.parameters) {
        out.value("parameters", uncertainty.parameters->names);
        out.value("covariance", uncertainty.parameters->matrix);
    }
    if (uncertainty.index) {
        out.value("index_sigma", uncertainty.index->sigma_n);
        out.value("correlation_length_m", uncertainty.index->correlation_length_m);
    }
}

}  // namespace firnray
