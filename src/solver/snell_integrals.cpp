#include "solver/snell_integrals.hpp"

#include <algorithm>
#include <array>
#include <cmath>
#include <limits>
#include <optional>
#include <vector>

#include <fmt/format.h>

#include "core/constants.hpp"
#include "core/errors.hpp"
#include "core/text.hpp"
#include "model/firn_model.hpp"

namespace firnray {

namespace {

constexpr double infinity = std::numeric_limits<double>::infinity();

// Gauss–Legendre nodes and weights on [−1, 1] (Newton on the Legendre recurrence).
struct GaussRule {
    std::vector<double> nodes, weights;
};
GaussRule make_gauss_rule(int points) {
    GaussRule rule;
    for (int i = 1; i <= points; ++i) {
        double x = std::cos(pi * (i - 0.25) / (points + 0.5)), derivative = 0.0;
        for (int iteration = 0; iteration < 100; ++iteration) {
            double p0 = 1.0, p1 = x;
            for (int k = 2; k <= points; ++k) {
                const double p2 = ((2.0 * k - 1.0) * x * p1 - (k - 1.0) * p0) / k;
                p0 = p1;
                p1 = p2;
            }
            derivative = points * (x * p1 - p0) / (x * x - 1.0);
            const double step = p1 / derivative;
            x -= step;
            if (std::abs(step) < 1e-16) break;
        }
        rule.nodes.push_back(x);
        rule.weights.push_back(2.0 / ((1.0 - x * x) * derivative * derivative));
    }
    return rule;
}
const GaussRule& rule(int points) {
    static const std::array<GaussRule, 4> rules{make_gauss_rule(4), make_gauss_rule(6), make_gauss_rule(10),
                                                make_gauss_rule(16)};
    switch (points) {
        case 4: return rules[0];
        case 6: return rules[1];
        case 10: return rules[2];
        default: return rules[3];
    }
}

struct Sums {
    double x = 0.0, optical = 0.0, length = 0.0, derivative = 0.0, attenuation = 0.0;
};

// Taylor coefficients a0 … a6 of Q² = n² − ξ² about a point, with n taken as the cubic
// n + n′δ + n″δ²/2 + n‴δ³/6 there (exact for a table's cells). By Fujiwara's bound every zero of
// a0 + a1 δ + … + a6 δ⁶ has |δ| >= 1 / (2 max_k |a_k/a0|^(1/k)), so a panel of half-width h
// centred there has no zero of Q² within t·h when |a_k| <= a0 (1/(2 t h))^k for every k.
struct SquareTaylor {
    double a0 = 0.0;
    double a[6] = {0.0, 0.0, 0.0, 0.0, 0.0, 0.0};

    SquareTaylor(double gap, double n, double xi, double n1, double n2, double n3) {
        a0 = gap * (n + xi);
        const double m2 = 0.5 * n2, m3 = n3 / 6.0;
        a[0] = 2.0 * n * n1;
        a[1] = n1 * n1 + 2.0 * n * m2;
        a[2] = 2.0 * n * m3 + 2.0 * n1 * m2;
        a[3] = m2 * m2 + 2.0 * n1 * m3;
        a[4] = 2.0 * m2 * m3;
        a[5] = m3 * m3;
    }
    bool zero_free_within(double radius) const {
        if (!(a0 > 0.0)) return false;
        const double s = 0.5 / radius;
        double power = s;
        for (double ak : a) {
            if (std::abs(ak) > a0 * power) return false;
            power *= s;
        }
        return true;
    }
};

class LegQuadrature {
public:
    // attenuation: a depth-dependent attenuation length to integrate ∫ ds/L along (or null).
    LegQuadrature(const StratifiedProfile& profile, const RayLevel& level, bool with_time, bool with_derivative,
                  const AttenuationProfile* attenuation)
        : profile_(profile), level_(level), xi_(level.ray_parameter), with_time_(with_time),
          with_derivative_(with_derivative), attenuation_(attenuation) {}

    // Panels of [low, high] inside one cell, none of which ends at a zero of Q.
    void regular(std::size_t cell, double low, double high, int depth = 0) {
        if (!(high > low) || failed_) return;
        const double centre = 0.5 * (low + high), half = 0.5 * (high - low);
        double n, dn, d2n;
        profile_.evaluate(cell, centre, n, dn, d2n);
        const double g = profile_.gap_in_cell(level_, cell, centre, n);
        if (!(g > 0.0) || ++panels_ > max_panels) {
            fail();
            return;
        }
        const SquareTaylor taylor(g, n, xi_, dn, d2n, profile_.third_derivative(cell, centre));
        // Gauss–Legendre with m points errs like ρ^(−2m), ρ = t + √(t² − 1), with t·half the
        // distance to the nearest zero of Q²: these thresholds keep that near 1e-13 (Fujiwara's
        // bound is a lower bound, often by a factor ~2).
        int points = 0;
        if (taylor.zero_free_within(16.0 * half)) points = 4;
        else if (taylor.zero_free_within(5.0 * half)) points = 6;
        else if (taylor.zero_free_within(2.1 * half) || depth >= 60) points = 10;
        if (points == 0) {
            regular(cell, low, centre, depth + 1);
            regular(cell, centre, high, depth + 1);
            return;
        }
        const GaussRule& r = rule(points);
        for (std::size_t i = 0; i < r.nodes.size(); ++i) {
            const double z = centre + half * r.nodes[i], w = half * r.weights[i];
            double nz, dnz, d2nz;
            profile_.evaluate(cell, z, nz, dnz, d2nz);
            const double gz = profile_.gap_in_cell(level_, cell, z, nz);
            if (!(gz > 0.0)) {
                fail();
                return;
            }
            const double q2 = gz * (nz + xi_), inverse_q = 1.0 / std::sqrt(q2);
            sums_.x += w * xi_ * inverse_q;
            if (with_time_) {
                sums_.optical += w * nz * nz * inverse_q;
                sums_.length += w * nz * inverse_q;
                if (attenuation_) sums_.attenuation += w * nz * inverse_q / attenuation_->length_m(z);
            }
            if (with_derivative_) sums_.derivative += w * nz * nz * inverse_q / q2;
        }
    }

    // Everything from the middle of the leg between its end pieces, cell by cell.
    void middle(double low, double high) {
        if (!(high > low)) return;
        for (std::size_t cell = profile_.cell_at(high, -1); cell < profile_.cell_count(); ++cell) {
            const double top = std::min(high, profile_.cell_top(cell)), bottom = std::max(low, profile_.cell_bottom(cell));
            if (cell + 1 == profile_.cell_count()) {
                regular(cell, low, top);
                break;
            }
            regular(cell, bottom, top);
            if (bottom <= low) break;
        }
    }

    struct EndPiece {
        bool used = false;
        double length = 0.0;
    };

    // How much of the leg next to one end is integrated in u (z = root ± u²).
    EndPiece plan_end(double z_end, LegEnd kind, int inward, double available, std::size_t& cell, double& g0,
                      double& slope_in, bool& double_root) {
        cell = profile_.cell_at(z_end, inward);
        // An end within rounding of the cell's far boundary (a turning point found just beside a
        // knot) takes the next cell's formula, continued over that sliver.
        const double room = inward > 0 ? profile_.cell_top(cell) - z_end : z_end - profile_.cell_bottom(cell);
        const std::size_t next = inward > 0 ? cell - 1 : cell + 1;
        if (room <= 1e-9 * std::max(1.0, std::abs(z_end)) && next < profile_.cell_count()) cell = next;
        double n, dn, d2n;
        profile_.evaluate(cell, z_end, n, dn, d2n);
        slope_in = dn * inward;
        double_root = false;
        EndPiece piece;
        if (kind == LegEnd::turning) {
            g0 = 0.0;
            if (!(slope_in > 0.0)) {
                double_root = true;
                return piece;
            }
        } else {
            g0 = std::max(0.0, profile_.gap_in_cell(level_, cell, z_end, n));
            if (!(slope_in > 0.0)) return piece;  // n does not fall toward a root beyond this end
        }
        const double q1 = 2.0 * n * dn, q2 = 2.0 * (dn * dn + n * d2n);
        const double curvature_length = q2 == 0.0 ? infinity : std::abs(q1 / q2);
        const double cell_room = std::max(0.0, inward > 0 ? profile_.cell_top(cell) - z_end : z_end - profile_.cell_bottom(cell));
        piece.length = std::min({available, 0.125 * curvature_length, cell_room});
        const double virtual_root_distance = g0 / slope_in;
        piece.used = piece.length > 0.0 && (kind == LegEnd::turning || virtual_root_distance < piece.length);
        return piece;
    }

    // ∫ over the end piece in u. The end is at z_end, the root (n = ξ, real or extrapolated) at
    // distance e = g0/slope_in beyond it; u runs from √e to √(e + length).
    void end_piece(double z_end, LegEnd kind, int inward, std::size_t cell, double g0, double slope_in, double length) {
        if (failed_) return;
        const double e = kind == LegEnd::turning ? 0.0 : g0 / slope_in;
        const double u0 = std::sqrt(e), u1 = std::sqrt(e + length);
        // One panel from a turning point; from a root beyond a fixed end, panels doubling in u,
        // because ∂x/∂ξ there goes like 1/u² (the other integrands are smooth in u either way).
        std::vector<std::pair<double, double>> panels;
        if (u0 == 0.0 || u1 <= 2.0 * u0) {
            panels.emplace_back(u0, u1);
        } else {
            for (double a = u0; a < u1; a *= 2.0) panels.emplace_back(a, std::min(u1, 2.0 * a));
        }
        const GaussRule& r = rule(panels.size() == 1 ? 16 : 10);
        double by_parts_q = 0.0, by_parts_inverse = 0.0;  // ∫ Q h′ |dz| and ∫ h′/Q |dz|, h = 1/(n n′)
        for (std::size_t node = 0; node < r.nodes.size() * panels.size(); ++node) {
            const std::size_t i = node % r.nodes.size();
            const auto [pa, pb] = panels[node / r.nodes.size()];
            const double centre = 0.5 * (pa + pb), half = 0.5 * (pb - pa);
            const double u = centre + half * r.nodes[i], w = half * r.weights[i];
            const double rise = (u - u0) * (u + u0);  // u² − e: distance from the end, exactly
            const double z = z_end + inward * rise;
            double n, dn, d2n;
            profile_.evaluate(cell, z, n, dn, d2n);
            const double difference = profile_.divided_difference(cell, z, z_end) * inward;  // d(n)/d(rise)
            const double gap_over_u2 = (g0 + difference * rise) / (u * u);
            const double k = std::sqrt((kind == LegEnd::turning ? difference : gap_over_u2) * (n + xi_));  // Q/u
            sums_.x += w * 2.0 * xi_ / k;
            if (with_time_) {
                sums_.optical += w * 2.0 * n * n / k;
                sums_.length += w * 2.0 * n / k;
                if (attenuation_) sums_.attenuation += w * 2.0 * n / (k * attenuation_->length_m(z));
            }
            if (with_derivative_) {
                if (kind == LegEnd::turning) {
                    const double nn = n * dn;
                    const double h_prime = -(dn * dn + n * d2n) / (nn * nn);
                    by_parts_q += w * 2.0 * u * u * k * h_prime;
                    by_parts_inverse += w * 2.0 * h_prime / k;
                } else {
                    sums_.derivative += w * 2.0 * n * n / (u * u * k * k * k);
                }
            }
        }
        if (with_derivative_ && kind == LegEnd::turning) {
            // x over the piece by parts (ξ/Q = ξ h dQ/dz): with z_m the piece's far end and z_t the
            // turning point, x = −ξ h_m Q_m − ξ ∫_{z_m}^{z_t} Q h′ dz, whose ξ-derivative has no
            // singular term left (Q(z_t) = 0).
            const double z_m = z_end + inward * length;
            double n, dn, d2n;
            profile_.evaluate(cell, z_m, n, dn, d2n);
            const double g_m = profile_.divided_difference(cell, z_m, z_end) * (z_m - z_end);
            const double q_m = std::sqrt(g_m * (n + xi_)), h_m = 1.0 / (n * dn);
            const double orientation = -inward;  // sign of z_t − z_m
            const double signed_derivative =
                -q_m * h_m + xi_ * xi_ * h_m / q_m + orientation * (-by_parts_q + xi_ * xi_ * by_parts_inverse);
            sums_.derivative += orientation * signed_derivative;
        }
        if (with_derivative_ && kind == LegEnd::fixed && u0 == 0.0) sums_.derivative = infinity;
    }

    Sums& sums() { return sums_; }

private:
    // ξ reaches n inside the leg (not a leg of one interval, or ξ within rounding of a local
    // minimum of n passed over), or the panels needed exceed any reasonable count: the leg is
    // taken as infinitely long, the limit it approaches.
    void fail() {
        failed_ = true;
        sums_.x = sums_.optical = sums_.length = sums_.attenuation = infinity;
        sums_.derivative = std::numeric_limits<double>::quiet_NaN();
    }
    static constexpr int max_panels = 4000;
    bool failed_ = false;
    int panels_ = 0;

    const StratifiedProfile& profile_;
    const RayLevel& level_;
    double xi_;
    bool with_time_, with_derivative_;
    const AttenuationProfile* attenuation_;
    Sums sums_;
};

// Legs too short in z to be resolved from their ends' depths (a ray all but horizontal: turning
// within a few rounding errors of z, as near n_deep, or a duct of vanishing width), in the limit
// of a linear n − ξ (one turning end) or a parabolic one (two): from n − ξ at the fixed end, which
// RayLevel keeps accurate, and dn/dz (or d²n/dz²) there. The relative error is of the order of the
// height over the length on which n′ changes, below 1e-10 where this is used.
std::optional<LegIntegrals> horizontal_limit(const StratifiedProfile& profile, const RayLevel& level, LegEndpoint a,
                                             LegEndpoint b) {
    const int turning_ends = (a.kind == LegEnd::turning) + (b.kind == LegEnd::turning);
    if (turning_ends == 0) return std::nullopt;
    const double height = b.z - a.z;
    const LegEndpoint& fixed_end = a.kind == LegEnd::fixed ? a : b;
    const std::size_t cell = profile.cell_at(fixed_end.z, a.kind == LegEnd::fixed ? 1 : -1);
    double n, dn, d2n;
    profile.evaluate(cell, fixed_end.z, n, dn, d2n);
    const double xi = level.ray_parameter;
    const double curvature_length = d2n == 0.0 ? infinity : std::abs(dn / d2n);
    const double resolution = 256.0 * std::numeric_limits<double>::epsilon() * std::max(1.0, std::abs(fixed_end.z));
    if (height > std::max(resolution, 1e-10 * curvature_length)) return std::nullopt;
    LegIntegrals out;
    if (turning_ends == 1) {
        const double g0 = std::max(0.0, profile.gap(level, fixed_end.z));
        if (dn == 0.0) return std::nullopt;
        // n − ξ = |n′| w at a distance w from the turning point: x = ξ √(2 g0 / n) / |n′|.
        out.distance_m = xi * std::sqrt(2.0 * g0 / n) / std::abs(dn);
        out.distance_derivative = g0 > 0.0 ? -out.distance_m / (2.0 * g0) : -infinity;
    } else {
        // n − ξ = A − |n″| w²/2 about the axis: half an oscillation of a harmonic ray, x = π ξ/√(n |n″|).
        if (d2n == 0.0) return std::nullopt;
        out.distance_m = pi * xi / std::sqrt(n * std::abs(d2n));
        out.distance_derivative = 0.0;
    }
    out.optical_path_m = n * n * out.distance_m / std::max(xi, std::numeric_limits<double>::min());
    out.length_m = n * out.distance_m / std::max(xi, std::numeric_limits<double>::min());
    return out;
}

void check_end(const StratifiedProfile& profile, double z) {
    if (!std::isfinite(z) || z > 0.0 || z < profile.floor_z())
        throw DataInputError(fmt::format("a leg end at z = {} m lies outside the ice of the profile ({} m to 0)",
                                         number_for_message(z), number_for_message(profile.floor_z())));
}

}  // namespace

LegIntegrals leg_integrals(const StratifiedProfile& profile, const RayLevel& level, LegEndpoint a, LegEndpoint b,
                           bool with_time_and_length, bool with_derivative, const AttenuationProfile* attenuation) {
    // A uniform length needs no quadrature: the exponent is s/L.
    const std::optional<double> uniform = attenuation ? attenuation->constant_length_m() : std::nullopt;
    const AttenuationProfile* varying = uniform ? nullptr : attenuation;
    check_end(profile, a.z);
    check_end(profile, b.z);
    if (a.z > b.z) std::swap(a, b);
    LegIntegrals out;
    const double height = b.z - a.z;
    if (auto limit = horizontal_limit(profile, level, a, b)) {
        if (attenuation) limit->attenuation_exponent = limit->length_m / attenuation->length_m(b.z);
        return *limit;
    }
    if (height == 0.0) return out;
    LegQuadrature quadrature(profile, level, with_time_and_length, with_derivative, with_time_and_length ? varying : nullptr);
    // Each end may take at most half of the leg.
    std::size_t cell_low, cell_high;
    double g_low, g_high, slope_low, slope_high;
    bool double_low, double_high;
    const auto piece_low = quadrature.plan_end(a.z, a.kind, +1, 0.5 * height, cell_low, g_low, slope_low, double_low);
    const auto piece_high = quadrature.plan_end(b.z, b.kind, -1, 0.5 * height, cell_high, g_high, slope_high, double_high);
    if (double_low || double_high) {
        out.distance_m = out.optical_path_m = out.length_m = infinity;
        out.distance_derivative = std::numeric_limits<double>::quiet_NaN();
        return out;
    }
    const double low = piece_low.used ? a.z + piece_low.length : a.z;
    const double high = piece_high.used ? b.z - piece_high.length : b.z;
    if (piece_low.used) quadrature.end_piece(a.z, a.kind, +1, cell_low, g_low, slope_low, piece_low.length);
    if (piece_high.used) quadrature.end_piece(b.z, b.kind, -1, cell_high, g_high, slope_high, piece_high.length);
    quadrature.middle(low, high);
    const Sums& s = quadrature.sums();
    out.distance_m = s.x;
    out.optical_path_m = s.optical;
    out.length_m = s.length;
    if (with_time_and_length && attenuation) out.attenuation_exponent = uniform ? s.length / *uniform : s.attenuation;
    out.distance_derivative = with_derivative ? s.derivative : std::numeric_limits<double>::quiet_NaN();
    return out;
}

}  // namespace firnray
