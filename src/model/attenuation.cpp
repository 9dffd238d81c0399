#include "model/attenuation.hpp"

#include <cmath>

#include <fmt/format.h>

#include "core/errors.hpp"
#include "model/table_checks.hpp"

namespace firnray {

ConstantAttenuation::ConstantAttenuation(double length_m) : length_m_(length_m) {
    if (!std::isfinite(length_m) || length_m <= 0.0)
        throw ModelInputError(fmt::format("length_m must be a positive finite length in metres (got {})", length_m),
                              {"", 0, "length_m"});
}

std::string ConstantAttenuation::describe() const { return fmt::format("constant attenuation length {} m", length_m_); }

namespace {

MonotoneCubic build_curve(std::vector<double> depth, std::vector<double> length) {
    require_table_depths(depth, length.size(), TableAttenuation::minimum_points, "an attenuation table", "length_m");
    for (std::size_t i = 0; i < depth.size(); ++i) {
        if (!std::isfinite(length[i]) || length[i] <= 0.0)
            throw ModelInputError(fmt::format("point {}: attenuation length {} m must be positive and finite", i + 1,
                                              length[i]),
                                  {"", 0, "length_m"});
    }
    return MonotoneCubic(std::move(depth), std::move(length));
}

}  // namespace

TableAttenuation::TableAttenuation(std::vector<double> depth_m, std::vector<double> length_m)
    : curve_(build_curve(std::move(depth_m), std::move(length_m))) {}

double TableAttenuation::length_m(double z) const { return curve_.value(z < 0.0 ? -z : 0.0); }

std::string TableAttenuation::describe() const {
    const auto& d = curve_.x();
    const auto& l = curve_.y();
    return fmt::format("attenuation table: {} points, L {} m at {} m to {} m at {} m", d.size(), l.front(), d.front(),
                       l.back(), d.back());
}

}  // namespace firnray
