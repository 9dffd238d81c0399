// Test-only index profiles and attenuation with known closed forms, for checks of the tracer
// and the solvers against outside references. Not part of the library.
#pragma once

#include <algorithm>
#include <cmath>
#include <string>

#include "core/constants.hpp"
#include "model/firn_model.hpp"
#include "model/index_profile.hpp"

namespace firnray::test {

// Two exponential stages joined continuously in n at z_join (dn/dz jumps there): the layered
// picture of docs/physics.md §1.3 (fast densification above, slow below).
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

// A linear velocity gradient v(z) = v_surface + g z, n = c / v (g > 0: slower, denser below).
// Rays are circular arcs centred on the line v = 0 and the time between two points a distance d
// apart is T = arccosh(1 + g²d²/(2 v1 v2))/|g| (Shearer, Introduction to Seismology; Červený 2001).
class LinearVelocityProfile final : public IndexProfile {
public:
    LinearVelocityProfile(double v_surface, double g) : v_surface_(v_surface), g_(g) {}
    double velocity(double z) const { return v_surface_ + g_ * z; }
    double index(double z) const override { return speed_of_light / velocity(std::min(z, 0.0)); }
    double gradient(double z) const override {
        const double v = velocity(std::min(z, 0.0));
        return -speed_of_light * g_ / (v * v);
    }
    std::string kind() const override { return "test"; }
    std::string describe() const override { return "test: linear velocity gradient"; }
    double v_surface() const { return v_surface_; }
    double g() const { return g_; }

private:
    double v_surface_, g_;
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
