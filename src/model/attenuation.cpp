#include "model/attenuation.hpp"

#include <cmath>

#include <fmt/format.h>

#include "core/errors.hpp"

namespace firnray {

ConstantAttenuation::ConstantAttenuation(double length_m) : length_m_(length_m) {
    if (!std::isfinite(length_m) || length_m <= 0.0)
        throw ModelInputError(fmt::format("length_m must be a positive finite length in metres (got {})", length_m),
                              {"", 0, "length_m"});
}

std::string ConstantAttenuation::describe() const { return fmt::format("constant attenuation length {} m", length_m_); }

namespace {

MonotoneCubic build_curve(std::vector<double> depth, std::vector<double> length) {
    if (depth.size() != length.size())
        throw ModelInputError(fmt::format("the table has {} depths but {} lengths", depth.size(), length.size()),
                              {"", 0, "length_m"});
    if (depth.size() < TableAttenuation::minimum_points)
        throw ModelInputError(fmt::format("an attenuation table needs at least {} points (got {})",
                                          TableAttenuation::minimum_points, depth.size()),
                              {"", 0, "depth_m"});
    for (std::size_t i = 0; i < depth.size(); ++i) {
        if (!std::isfinite(depth[i]) || depth[i] < 0.0)
            throw ModelInputError(fmt::format("point {}: depth {} m must be a finite depth at or below the surface",
                                              i + 1, depth[i]),
                                  {"", 0, "depth_m"});
        if (i > 0 && !(depth[i] > depth[i - 1]))
            throw ModelInputError(fmt::format("point {}: depth {} m is not deeper than the point before ({} m); "
                                              "depths must increase strictly",
                                              i + 1, depth[i], depth[i - 1]),
                                  {"", 0, "depth_m"});
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
