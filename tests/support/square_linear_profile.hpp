// A test profile whose n² is linear in z on each piece between knots, n²(z) = a + b z, and the
// closed form of its rays: Q = √(n² − ξ²) is linear in z under the root, so rays are parabolas,
//   x(z) − x0 = 2ξ (Q − Q0)/b,   c·T(z) − c·T0 = (2/(3b))(Q³ − Q0³) + 2ξ²(Q − Q0)/b,
//   s(z) − s0 = [Q n + ξ² ln(Q + n)]/b evaluated between the two ends (∫ √(Q² + ξ²) dQ),
// (the linear layer: Budden, The Propagation of Radio Waves, 1985; Červený, Seismic Ray Theory,
// 2001). Below the last knot n is constant (b = 0: straight lines). Not part of the library.
#pragma once

#include <algorithm>
#include <cmath>
#include <limits>
#include <optional>
#include <string>
#include <vector>

#include "model/index_profile.hpp"

namespace firnray::test {

class SquareLinearProfile final : public IndexProfile {
public:
    // knots_z from 0 downward (strictly decreasing, first 0), n² at each knot.
    SquareLinearProfile(std::vector<double> knots_z, std::vector<double> n2) : z_(std::move(knots_z)), n2_(std::move(n2)) {
        joins_.assign(z_.begin() + 1, z_.end());
    }
    // Piece p lies between knot p and knot p+1; the last piece (p = knots − 1) is the constant below.
    std::size_t piece_of(double z) const {
        std::size_t p = 0;
        while (p + 1 < z_.size() && z < z_[p + 1]) ++p;
        return p;
    }
    double slope(std::size_t p) const {  // b of piece p
        if (p + 1 >= z_.size()) return 0.0;
        return (n2_[p] - n2_[p + 1]) / (z_[p] - z_[p + 1]);
    }
    double square(std::size_t p, double z) const { return n2_[std::min(p, z_.size() - 1)] + slope(p) * (z - z_[std::min(p, z_.size() - 1)]); }
    double index(double z) const override {
        z = std::min(z, 0.0);
        return std::sqrt(square(piece_of(z), z));
    }
    double gradient(double z) const override {
        z = std::min(z, 0.0);
        const std::size_t p = piece_of(z);
        return slope(p) / (2.0 * std::sqrt(square(p, z)));
    }
    std::span<const double> joins_z() const override { return joins_; }
    void piece_index(std::size_t piece, double z, double& n, double& dn_dz, double& d2n_dz2) const override {
        const double b = slope(piece), n2 = square(piece, z);
        n = std::sqrt(n2);
        dn_dz = b / (2.0 * n);
        d2n_dz2 = -b * b / (4.0 * n * n2);
    }
    std::string kind() const override { return "test"; }
    std::string describe() const override { return "test: n² piecewise linear in z"; }

    // ---- closed form ----
    struct Leg {
        double distance = 0.0, optical = 0.0, length = 0.0;
    };
    // A leg between z1 and z2 for ξ, n > ξ inside (an end may be a turning point, Q = 0).
    Leg leg(double xi, double z1, double z2) const {
        const double lo = std::min(z1, z2), hi = std::max(z1, z2);
        Leg out;
        const double x2 = xi * xi;
        for (std::size_t p = 0; p < z_.size(); ++p) {
            const double top = z_[p], bottom = p + 1 < z_.size() ? z_[p + 1] : -std::numeric_limits<double>::infinity();
            const double a = std::max(lo, bottom), c = std::min(hi, top);
            if (!(c > a)) continue;
            const double b = slope(p);
            auto q_at = [&](double z) { return std::sqrt(std::max(0.0, square(p, z) - x2)); };
            const double qa = q_at(a), qc = q_at(c);
            if (b == 0.0) {
                const double n = std::sqrt(square(p, a));
                out.distance += xi * (c - a) / qa;
                out.optical += n * n * (c - a) / qa;
                out.length += n * (c - a) / qa;
            } else {
                auto s_anti = [&](double q) {
                    const double n = std::sqrt(q * q + x2);
                    return (q * n + x2 * std::log(q + n)) / b;
                };
                out.distance += std::abs(2.0 * xi * (qc - qa) / b);
                out.optical += std::abs((2.0 / (3.0 * b)) * (qc * qc * qc - qa * qa * qa) + 2.0 * x2 * (qc - qa) / b);
                out.length += std::abs(s_anti(qc) - s_anti(qa));
            }
        }
        return out;
    }
    // The ends of the interval around z where n > ξ: upper (turning z or 0 for the surface) and
    // lower (turning z, or empty when unbounded), found piece by piece from n² = ξ exactly.
    struct Ends {
        double upper = 0.0;
        bool upper_turning = false;
        std::optional<double> lower;
    };
    Ends ends(double xi, double z) const {
        const double x2 = xi * xi;
        Ends out;
        std::size_t p = piece_of(z);
        for (std::size_t q = p + 1; q-- > 0;) {  // upward: knot q is the top of piece q
            if (z_[q] >= z && square(q, z_[q]) <= x2) {
                out.upper = (x2 - n2_[q]) / slope(q) + z_[q];
                out.upper_turning = true;
                break;
            }
        }
        for (std::size_t q = p; q + 1 < z_.size(); ++q) {  // downward: knot q+1 is the bottom of piece q
            if (z_[q + 1] <= z && n2_[q + 1] <= x2) {
                out.lower = (x2 - n2_[q]) / slope(q) + z_[q];
                break;
            }
        }
        return out;
    }

private:
    std::vector<double> z_, n2_, joins_;
};

}  // namespace firnray::test
