// Test-only index profiles and attenuation with known closed forms, for checks of the tracer
// and the solvers against outside references. Not part of the library.
#pragma once

#include <cmath>
#include <string>

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
