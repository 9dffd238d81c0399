#include "model/index_profile.hpp"

#include <cmath>

#include <fmt/format.h>

#include "core/errors.hpp"

namespace firnray {

void IndexProfile::piece_index(std::size_t, double z, double& n, double& dn_dz, double& d2n_dz2) const {
    constexpr double h = 1e-3;  // m, as the ray equations' own difference
    index_and_gradient(z, n, dn_dz);
    double n_1, g_1, n_2, g_2;
    if (z + h <= 0.0) {
        index_and_gradient(z + h, n_1, g_1);
        index_and_gradient(z - h, n_2, g_2);
        d2n_dz2 = (g_1 - g_2) / (2.0 * h);
        return;
    }
    // Within h of the surface, from below only (a profile is not defined above it, and is
    // commonly held at its surface value there): the one-sided difference of the same order,
    // (3g(z) − 4g(z − h) + g(z − 2h)) / 2h (common practice).
    index_and_gradient(z - h, n_1, g_1);
    index_and_gradient(z - 2.0 * h, n_2, g_2);
    d2n_dz2 = (3.0 * dn_dz - 4.0 * g_1 + g_2) / (2.0 * h);
}

static void require_index(double n, const char* key) {
    if (!std::isfinite(n)) throw ModelInputError(fmt::format("{} must be a finite number", key), {"", 0, key});
    if (n < 1.0) throw ModelInputError(fmt::format("{} = {} is below 1 (no medium is faster than vacuum)", key, n), {"", 0, key});
}

ConstantProfile::ConstantProfile(double n) : n_(n) { require_index(n, "n"); }

std::string ConstantProfile::describe() const { return fmt::format("constant: n {}", n_); }

ExponentialProfile::ExponentialProfile(double n_deep, double n_surface, double scale_depth_m)
    : n_deep_(n_deep), n_surface_(n_surface), scale_depth_m_(scale_depth_m) {
    require_index(n_deep, "n_deep");
    require_index(n_surface, "n_surface");
    if (n_surface > n_deep)
        throw ModelInputError(fmt::format("n_surface = {} exceeds n_deep = {}: the index must not fall with depth",
                                          n_surface, n_deep),
                              {"", 0, "n_surface"});
    if (!std::isfinite(scale_depth_m) || scale_depth_m <= 0.0)
        throw ModelInputError(fmt::format("scale_depth_m must be a positive finite length in metres (got {})", scale_depth_m),
                              {"", 0, "scale_depth_m"});
}

double ExponentialProfile::index(double z) const {
    if (z > 0.0) z = 0.0;
    return n_deep_ - (n_deep_ - n_surface_) * std::exp(z / scale_depth_m_);
}

double ExponentialProfile::gradient(double z) const {
    if (z > 0.0) z = 0.0;
    return -(n_deep_ - n_surface_) * std::exp(z / scale_depth_m_) / scale_depth_m_;
}

void ExponentialProfile::index_and_gradient(double z, double& n, double& dn_dz) const {
    if (z > 0.0) z = 0.0;
    const double e = (n_deep_ - n_surface_) * std::exp(z / scale_depth_m_);
    n = n_deep_ - e;
    dn_dz = -e / scale_depth_m_;
}

std::string ExponentialProfile::describe() const {
    return fmt::format("exponential: n_deep {}, n_surface {}, scale depth {} m", n_deep_, n_surface_, scale_depth_m_);
}

}  // namespace firnray
