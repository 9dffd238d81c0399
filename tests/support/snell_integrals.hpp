// Reference values for ray legs from the Snell integrals of a stratified medium, evaluated with
// Boost.Math tanh_sinh quadrature (the general-purpose reference library of docs/validation.md):
//   x = ∫ ξ/Q dz,  c·T = ∫ n²/Q dz,  s = ∫ n/Q dz,  ∂x/∂ξ = ∫ n²/Q³ dz,  Q = √(n² − ξ²).
// tanh_sinh copes with the 1/√ singularity of a turning end when n − ξ is given accurately
// near it (the `gap` callback receives the distance to the upper end for that).
#pragma once

#include <cmath>
#include <functional>
#include <vector>

#include <boost/math/quadrature/tanh_sinh.hpp>

#include "model/index_profile.hpp"

namespace firnray::test {

struct SnellIntegrals {
    double distance_m = 0.0, optical_path_m = 0.0, length_m = 0.0, distance_derivative = 0.0;
};

// gap(z, below_top) = n(z) − ξ, where below_top = z_high − z is exact near the upper end.
// Pieces are split at `breaks` (kinks of the profile). The derivative is skipped when
// with_derivative is false (it diverges at a turning end).
inline SnellIntegrals snell_integrals(const IndexProfile& profile, double xi, double z_low, double z_high,
                                      const std::function<double(double, double)>& gap,
                                      std::vector<double> breaks = {}, bool with_derivative = true) {
    std::vector<double> edges{z_low};
    for (double b : breaks)
        if (b > z_low && b < z_high) edges.push_back(b);
    edges.push_back(z_high);
    boost::math::quadrature::tanh_sinh<double> quad;
    SnellIntegrals out;
    for (std::size_t i = 0; i + 1 < edges.size(); ++i) {
        const double a = edges[i], b = edges[i + 1];
        const bool top_piece = i + 2 == edges.size();
        auto q_of = [&](double z, double zc) {
            const double below_top = top_piece && zc >= 0.0 ? zc : z_high - z;
            const double n = profile.index(z);
            const double g = gap(z, below_top);
            return std::make_pair(n, std::sqrt(g * (n + xi)));
        };
        out.distance_m += quad.integrate([&](double z, double zc) { auto [n, q] = q_of(z, zc); return xi / q; }, a, b);
        out.optical_path_m += quad.integrate([&](double z, double zc) { auto [n, q] = q_of(z, zc); return n * n / q; }, a, b);
        out.length_m += quad.integrate([&](double z, double zc) { auto [n, q] = q_of(z, zc); return n / q; }, a, b);
        if (with_derivative)
            out.distance_derivative +=
                quad.integrate([&](double z, double zc) { auto [n, q] = q_of(z, zc); return n * n / (q * q * q); }, a, b);
    }
    return out;
}

// The plain gap n(z) − ξ, for legs with no turning end.
inline std::function<double(double, double)> plain_gap(const IndexProfile& profile, double xi) {
    return [&profile, xi](double z, double) { return profile.index(z) - xi; };
}

}  // namespace firnray::test
