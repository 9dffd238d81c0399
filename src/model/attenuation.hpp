// Attenuation-length profiles L(z) of the radio field in the ice (the field factor along a path is
// exp(-∫ ds / L)): one length for the whole ice, or a table against depth.
#pragma once

#include <optional>
#include <string>
#include <vector>

#include "model/firn_model.hpp"
#include "model/interpolation.hpp"

namespace firnray {

class ConstantAttenuation final : public AttenuationProfile {
public:
    explicit ConstantAttenuation(double length_m);  // throws ModelInputError unless finite and > 0
    double length_m(double) const override { return length_m_; }
    std::optional<double> constant_length_m() const override { return length_m_; }
    std::string kind() const override { return "constant"; }
    std::string describe() const override;
    double length() const { return length_m_; }

private:
    double length_m_;
};

// L against depth: monotone piecewise-cubic interpolation between the points (continuous, C¹, and
// never outside the range of neighbouring points, so L stays positive), held at the end values
// above the shallowest and below the deepest point.
class TableAttenuation final : public AttenuationProfile {
public:
    static constexpr std::size_t minimum_points = 2;

    // depth_m >= 0 strictly increasing, length_m finite and > 0. Throws ModelInputError
    // (key "depth_m" or "length_m") naming the offending point (counting from 1).
    TableAttenuation(std::vector<double> depth_m, std::vector<double> length_m);
    double length_m(double z) const override;
    std::string kind() const override { return "table"; }
    std::string describe() const override;

    const std::vector<double>& depth_m() const { return curve_.x(); }
    const std::vector<double>& lengths_m() const { return curve_.y(); }

private:
    MonotoneCubic curve_;
};

}  // namespace firnray
