// Test-only index profiles and attenuation with known closed forms, for checks of the tracer
// and the solvers against outside references. Not part of the library.
#pragma once

#include <algorithm>
#include <cmath>
#include <cstddef>
#include <functional>
#include <string>
#include <vector>

#include "model/firn_model.hpp"
#include "model/index_profile.hpp"

namespace firnray::test {

// Two exponential stages joined continuously in n at z_join (dn/dz jumps there): the layered
// picture of physics notes §2 (fast densification above, slow below).
class TwoStageProfile final : public IndexProfile {
public:
    TwoStageProfile(double n_deep, double n_surface, double upper_scale_m, double z_join, double lower_scale_m)
        : n_deep_(n_deep), upper_b_(n_deep - n_surface), upper_scale_(upper_scale_m), z_join_(z_join),
          lower_scale_(lower_scale_m) {
        lower_b_ = upper_b_ * std::exp(z_join / upper_scale_m);
    }
    double index(double z) const override {
        z = std::min(z, 0.0);
        return z >= z_join_ ? n_deep_ - upper_b_ * std::exp(z / upper_scale_)
                            : n_deep_ - lower_b_ * std::exp((z - z_join_) / lower_scale_);
    }
    double gradient(double z) const override {
        z = std::min(z, 0.0);
        return z >= z_join_ ? -upper_b_ * std::exp(z / upper_scale_) / upper_scale_
                            : -lower_b_ * std::exp((z - z_join_) / lower_scale_) / lower_scale_;
    }
    std::string kind() const override { return "layered"; }
    std::string describe() const override { return "test: two exponential stages"; }
    double z_join() const { return z_join_; }

private:
    double n_deep_, upper_b_, upper_scale_, z_join_, lower_scale_, lower_b_ = 0.0;
};

// n(z) = mean + amplitude·cos(z / wavelength_scale): not monotone, for root bracketing.
class WavyProfile final : public IndexProfile {
public:
    WavyProfile(double mean, double amplitude, double scale_m) : mean_(mean), amplitude_(amplitude), scale_(scale_m) {}
    double index(double z) const override { return mean_ + amplitude_ * std::cos(std::min(z, 0.0) / scale_); }
    double gradient(double z) const override { return -amplitude_ * std::sin(std::min(z, 0.0) / scale_) / scale_; }
    std::string kind() const override { return "table"; }
    std::string describe() const override { return "test: wavy"; }

private:
    double mean_, amplitude_, scale_;
};

// Tabulated-like: a natural cubic spline (C², the interpolation physics notes §2 asks of tables)
// through samples of `shape` every `spacing_m` metres from z = 0 down to −depth_m; constant
// below. The third derivative of n jumps at every knot, as it does for a table: the integrator
// and its dense output must cope with that.
class SplineProfile final : public IndexProfile {
public:
    SplineProfile(const std::function<double(double)>& shape, double spacing_m, double depth_m) : h_(spacing_m) {
        const std::size_t count = static_cast<std::size_t>(std::ceil(depth_m / spacing_m)) + 1;
        n_.resize(count);
        for (std::size_t i = 0; i < count; ++i) n_[i] = shape(-h_ * static_cast<double>(i));
        // Second derivatives (in depth) of a natural spline: tridiagonal system, Thomas algorithm.
        m_.assign(count, 0.0);
        std::vector<double> c(count, 0.0), d(count, 0.0);
        for (std::size_t i = 1; i + 1 < count; ++i) {
            const double rhs = 6.0 * (n_[i + 1] - 2.0 * n_[i] + n_[i - 1]) / (h_ * h_);
            const double denominator = 4.0 - c[i - 1];
            c[i] = 1.0 / denominator;
            d[i] = (rhs - d[i - 1]) / denominator;
        }
        for (std::size_t i = count - 2; i >= 1; --i) m_[i] = d[i] - c[i] * m_[i + 1];
    }
    double index(double z) const override {
        double n, g;
        index_and_gradient(z, n, g);
        return n;
    }
    double gradient(double z) const override {
        double n, g;
        index_and_gradient(z, n, g);
        return g;
    }
    // The spline runs in depth t = −z, so dn/dz = −dn/dt.
    void index_and_gradient(double z, double& n, double& dn_dz) const override {
        const double t = std::max(-z, 0.0);
        const std::size_t last = n_.size() - 1;
        if (t >= h_ * static_cast<double>(last)) {
            n = n_[last];
            dn_dz = 0.0;
            return;
        }
        const std::size_t i = std::min(static_cast<std::size_t>(t / h_), last - 1);
        const double a = (h_ * static_cast<double>(i + 1) - t) / h_, b = 1.0 - a;
        n = a * n_[i] + b * n_[i + 1] + ((a * a * a - a) * m_[i] + (b * b * b - b) * m_[i + 1]) * h_ * h_ / 6.0;
        const double dn_dt =
            (n_[i + 1] - n_[i]) / h_ + ((3.0 * b * b - 1.0) * m_[i + 1] - (3.0 * a * a - 1.0) * m_[i]) * h_ / 6.0;
        dn_dz = -dn_dt;
    }
    std::string kind() const override { return "table"; }
    std::string describe() const override { return "test: cubic spline through samples"; }
    // The samples' z, lowest first: where quadratures should split.
    std::vector<double> knots() const {
        std::vector<double> z(n_.size());
        for (std::size_t i = 0; i < z.size(); ++i) z[i] = -h_ * static_cast<double>(z.size() - 1 - i);
        return z;
    }

private:
    double h_;
    std::vector<double> n_, m_;
};

class ConstantAttenuation final : public AttenuationProfile {
public:
    explicit ConstantAttenuation(double length_m) : length_(length_m) {}
    double length_m(double) const override { return length_; }
    std::string describe() const override { return "test: constant"; }

private:
    double length_;
};

inline std::shared_ptr<FirnModel> model_with(std::shared_ptr<const IndexProfile> profile, double n_air = 1.0) {
    auto model = std::make_shared<FirnModel>();
    model->name = "test";
    model->origin = "test";
    model->index = std::move(profile);
    model->n_air = n_air;
    return model;
}

}  // namespace firnray::test
