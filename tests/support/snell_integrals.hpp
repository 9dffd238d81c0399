// Reference values for ray legs from the Snell integrals of a stratified medium, evaluated with
// Boost.Math tanh_sinh quadrature (the general-purpose reference library of docs/validation.md):
//   x = ∫ ξ/Q dz,  c·T = ∫ n²/Q dz,  s = ∫ n/Q dz,  ∂x/∂ξ = ∫ n²/Q³ dz,  Q = √(n² − ξ²).
// tanh_sinh copes with the 1/√ singularity of a turning end when n − ξ is given accurately
// near it (the `gap` callback receives the distance to the upper end for that).
#pragma once

#include <algorithm>
#include <cmath>
#include <functional>
#include <vector>

#include <boost/math/quadrature/tanh_sinh.hpp>

#include "core/constants.hpp"
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

// A path turning above both ends (family U) of a table profile, from the Snell integrals above:
// the turning point by bisection on the table's own n(z) (the shallowest depth below which n > ξ
// all the way down to the ends, searched upward in 1 mm steps), and n − ξ in its piece written
// about it by the Taylor series of the piece's cubic.
struct TurnAbove {
    double distance_m = 0.0, time_s = 0.0, turning_z = 0.0;
};

inline std::size_t piece_holding(const IndexProfile& profile, double z) {
    std::size_t piece = 0;
    for (double join : profile.joins_z())
        if (z < join) ++piece;
    return piece;
}

inline TurnAbove turn_above(const IndexProfile& table, double xi, double z_source, double z_receiver) {
    const std::vector<double> knots(table.joins_z().begin(), table.joins_z().end());  // highest first
    const std::vector<double> breaks(knots.rbegin(), knots.rend());
    double inside = std::max(z_source, z_receiver), outside = 0.0;
    for (double z = inside; z < 0.0; z += 1e-3)
        if (table.index(z) <= xi) {
            outside = z;
            break;
        }
    for (int i = 0; i < 200; ++i) {
        const double middle = 0.5 * (inside + outside);
        (table.index(middle) > xi ? inside : outside) = middle;
    }
    const double z_t = inside;
    const std::size_t piece = piece_holding(table, z_t - 1e-12);
    double n_t, g_t, k_t, n_b, g_b, k_b;
    table.piece_index(piece, z_t, n_t, g_t, k_t);
    table.piece_index(piece, z_t - 1e-3, n_b, g_b, k_b);
    const double third = (k_t - k_b) / 1e-3;
    const double piece_bottom = piece < knots.size() ? knots[piece] : -1e9;
    // n − ξ in the turning point's piece as n(z) − n(z_t): the integrals of ξ' = n(z_t), within a
    // rounding error of ξ (which moves X by ∂X/∂ξ·1e-16, nothing), where adding n(z_t) − ξ itself
    // would move the root of the 1/√ singularity by 1e-16/n′ and X by √ of that (1e-5 m and more
    // where n′ is small).
    auto gap = [&](double z, double below_top) {
        if (z < piece_bottom) return table.index(z) - xi;
        const double w = below_top;
        return w * (-g_t + w * (0.5 * k_t - w * third / 6.0));
    };
    TurnAbove out;
    out.turning_z = z_t;
    for (double z_end : {z_source, z_receiver}) {
        const auto leg = snell_integrals(table, xi, z_end, z_t, gap, breaks, false);
        out.distance_m += leg.distance_m;
        out.time_s += leg.optical_path_m / speed_of_light;
    }
    return out;
}

}  // namespace firnray::test
