// Paths that turn just short of a local minimum of n (ξ = n_min + ρ, ρ > 0 tiny). Next to such a
// double root a ray runs nearly horizontally along the minimum and X grows like log(1/ρ), so for a
// long enough R the turning point sits within nanometres of the minimum and ρ lies far below a
// rounding error of ξ itself. The finder takes ξ next to either end of a range as an offset from n
// at that end's depth; these paths lie next to the lower end of their range.
//
// Reference (independent of the finder): the Snell integrals of family U by Boost.Math tanh_sinh
// quadrature. In the table's piece below the minimum, n − n_min is the piece's own cubic written
// about the minimum, P(δ) = n′δ + n″δ²/2 + n‴δ³/6 (δ = z − z_min, the coefficients from the table's
// piece_index), so that n − ξ = P(δ) − P(δ_t) = (δ − δ_t)·(n′ + n″(δ + δ_t)/2 + n‴(δ² + δδ_t + δ_t²)/6)
// holds no cancellation; the turning point δ_t solves P(δ_t) = ρ by Newton's method, and
// δ = δ_t − u² removes the inverse square root. Below that piece n − ξ = (n(z) − n_min) − ρ.
// The same for the direct path across a minimum between the ends with ξ = n_min − ρ: split at the
// minimum, where the integrand peaks like 1/√(P(δ) + ρ), each half integrated in its distance
// from the minimum (exact next to the peak).
#include <catch2/catch.hpp>

#include <cmath>
#include <iomanip>
#include <optional>
#include <vector>

#include <boost/math/quadrature/tanh_sinh.hpp>

#include "core/constants.hpp"
#include "model/model_file.hpp"
#include "solver/path_families.hpp"
#include "solver/snell_integrals.hpp"
#include "support/run_cli.hpp"
#include "support/snell_integrals.hpp"

using namespace firnray;

namespace {

struct Grazing {
    double distance_m = 0.0, time_s = 0.0, turning_z = 0.0;
};

// The cubic of the table's piece on one side of z_min (side +1 above, −1 below) written about z_min:
// n = n_m + P(δ), P(δ) = slope·δ + curvature·δ²/2 + third·δ³/6.
struct CubicAbout {
    double n_m = 0.0, slope = 0.0, curvature = 0.0, third = 0.0;
    double rise(double d) const { return d * (slope + d * (0.5 * curvature + d * third / 6.0)); }
};
CubicAbout cubic_about(const IndexProfile& table, double z_min, double side) {
    const std::size_t piece = test::piece_holding(table, z_min + side * 1e-9);
    CubicAbout c;
    double n_1, slope_1, curvature_1;
    table.piece_index(piece, z_min, c.n_m, c.slope, c.curvature);
    table.piece_index(piece, z_min + side * 1e-3, n_1, slope_1, curvature_1);
    c.third = (curvature_1 - c.curvature) / (side * 1e-3);  // n″ is linear on a cubic piece
    return c;
}

// The local minimum of n in models/halvard-log.toml at the knot 6 m deep.
double minimum_at_6_m(const StratifiedProfile& profile) {
    double z_min = 0.0;
    for (double z : profile.local_minima_z())
        if (z < -5.5 && z > -6.5) z_min = z;
    return z_min;
}

// models/halvard-log.toml, its profile and that minimum (0 where the log has none there).
struct HalvardMinimum {
    FirnModel model = load_model_file(test::source_path("models/halvard-log.toml"));
    StratifiedProfile profile{model.index};
    double z_min = minimum_at_6_m(profile);
};

// A ray turning ρ above n_min just below z_min: its turning point δ_t (δ = z − z_min) from the
// piece's cubic by Newton's method, and x and c·T of one leg from there down to δ = d_end in the
// same piece, in u (δ = δ_t − u²).
struct TurningBelowMinimum {
    CubicAbout c;
    double d_t = 0.0, xi = 0.0;

    TurningBelowMinimum(const IndexProfile& table, double z_min, double rho) : c(cubic_about(table, z_min, -1.0)) {
        auto p_prime = [&](double d) { return c.slope + d * (c.curvature + 0.5 * d * c.third); };
        d_t = -std::sqrt(2.0 * rho / c.curvature);
        for (int i = 0; i < 100; ++i) d_t -= (c.rise(d_t) - rho) / p_prime(d_t);
        xi = c.n_m + rho;
    }
    std::pair<double, double> part(double d_end) const {
        auto factor = [&](double u) {
            const double d = d_t - u * u;
            const double q =
                -(c.slope + 0.5 * c.curvature * (d + d_t) + c.third * (d * d + d * d_t + d_t * d_t) / 6.0);
            const double n = c.n_m + c.rise(d);
            return std::make_pair(n, std::sqrt(q * (n + xi)));
        };
        boost::math::quadrature::tanh_sinh<double> quad;
        const double u_end = std::sqrt(d_t - d_end);
        const double x = quad.integrate([&](double u) { auto [n, s] = factor(u); return 2.0 * xi / s; }, 0.0, u_end);
        const double ct = quad.integrate([&](double u) { auto [n, s] = factor(u); return 2.0 * n * n / s; }, 0.0, u_end);
        return {x, ct};
    }
};

// Family U from z_source and z_receiver (both below z_min) turning ρ above n_min just below z_min.
Grazing grazing_below(const IndexProfile& table, double z_min, double rho, double z_source, double z_receiver) {
    const TurningBelowMinimum turn(table, z_min, rho);
    double piece_bottom = -1e9;
    for (double join : table.joins_z())
        if (join < z_min - 1e-9) {
            piece_bottom = join;
            break;
        }
    // The part in the minimum's piece, one leg's worth.
    const auto [x_piece, ct_piece] = turn.part(piece_bottom - z_min);
    const double n_m = turn.c.n_m;
    auto gap = [&](double z, double) { return (table.index(z) - n_m) - rho; };
    const std::vector<double> knots(table.joins_z().begin(), table.joins_z().end());
    const std::vector<double> breaks(knots.rbegin(), knots.rend());
    Grazing out;
    out.turning_z = z_min + turn.d_t;
    for (double z_end : {z_source, z_receiver}) {
        const auto below = test::snell_integrals(table, turn.xi, z_end, piece_bottom, gap, breaks, false);
        out.distance_m += x_piece + below.distance_m;
        out.time_s += (ct_piece + below.optical_path_m) / speed_of_light;
    }
    return out;
}

// Family U with both ends inside the minimum's piece below it (the whole path within one cubic).
Grazing grazing_in_piece(const IndexProfile& table, double z_min, double rho, double z_source, double z_receiver) {
    const TurningBelowMinimum turn(table, z_min, rho);
    Grazing out;
    out.turning_z = z_min + turn.d_t;
    for (double z_end : {z_source, z_receiver}) {
        const auto [x, ct] = turn.part(z_end - z_min);
        out.distance_m += x;
        out.time_s += ct / speed_of_light;
    }
    return out;
}

// The direct leg from z_a to z_b across the minimum at z_min (the lowest n between them),
// ξ = n_min − ρ: X and c·T.
std::pair<double, double> direct_across(const IndexProfile& table, double z_min, double rho, double z_a, double z_b) {
    boost::math::quadrature::tanh_sinh<double> quad;
    double x = 0.0, ct = 0.0;
    for (const double side : {1.0, -1.0}) {  // the half above z_min, then the one below
        const double z_end = side > 0.0 ? std::max(z_a, z_b) : std::min(z_a, z_b);
        const CubicAbout c = cubic_about(table, z_min, side);
        const double xi = c.n_m - rho;
        // δ = z − z_min, t in [0, |z_end − z_min|] from z_min: t itself is exact next to the peak.
        auto values = [&](double t) {
            const double rise = c.rise(side * t);  // n − n_min
            const double n = c.n_m + rise;
            return std::make_pair(n, std::sqrt((rise + rho) * (n + xi)));
        };
        const double length = std::abs(z_end - z_min);
        x += quad.integrate([&](double t) { auto [n, q] = values(t); return xi / q; }, 0.0, length);
        ct += quad.integrate([&](double t) { auto [n, q] = values(t); return n * n / q; }, 0.0, length);
    }
    return {x, ct};
}

// The path of family U turning at ref.turning_z (within 1e-6 m) among those found for the pair at
// the reference's distance; null when there is none.
std::optional<StratifiedPath> turning_path(const StratifiedProfile& profile, double z_source, double z_receiver,
                                           const Grazing& ref) {
    for (const auto& path : find_stratified_paths(profile, z_source, z_receiver, ref.distance_m))
        if (path.family == "U" && path.turns.size() == 1 && std::abs(path.turns[0].z_m - ref.turning_z) < 1e-6)
            return path;
    return std::nullopt;
}

// That path, required, with its time within 0.01 ns of the reference's.
StratifiedPath check_turning_path(const StratifiedProfile& profile, double z_source, double z_receiver,
                                  const Grazing& ref, double rho) {
    INFO(std::setprecision(12) << "ξ − n_min " << rho << ", R " << ref.distance_m << " m, turning at "
                               << ref.turning_z << " m");
    const auto match = turning_path(profile, z_source, z_receiver, ref);
    REQUIRE(match);
    CHECK(std::abs(match->time_s - ref.time_s) < 0.01e-9);
    return *match;
}

}  // namespace

TEST_CASE("paths turning just short of a local minimum of a measured log (ξ − n_min from 1e-6 down to 1e-21) "
          "are found with the time of tanh_sinh quadrature of the Snell integrals (Boost.Math) within 0.01 ns",
          "[solver][stratified]") {
    // models/halvard-log.toml: n has a local minimum at a knot 6 m deep, lower than everything
    // down to the pair below it.
    const HalvardMinimum log;
    REQUIRE(log.z_min != 0.0);
    const double z_source = -20.0, z_receiver = -35.0;
    for (const double rho : {1e-6, 1e-9, 1e-12, 1e-15, 1e-18, 1e-21}) {
        const Grazing ref = grazing_below(*log.model.index, log.z_min, rho, z_source, z_receiver);
        INFO("ξ − n_min " << rho);
        CHECK(check_turning_path(log.profile, z_source, z_receiver, ref, rho).turns[0].z_m < log.z_min);
    }
}

TEST_CASE("direct paths across a local minimum of a measured log between the ends (n_min − ξ from 1e-6 down to "
          "1e-21) are found with the time of tanh_sinh quadrature of the Snell integrals (Boost.Math) within 0.01 ns",
          "[solver][stratified]") {
    // The same minimum 6 m deep; both ends within its two pieces of the table, so that the cubics
    // written about it hold over the whole leg.
    const HalvardMinimum log;
    REQUIRE(log.z_min != 0.0);
    const double z_source = log.z_min + 0.4, z_receiver = log.z_min - 0.7;
    REQUIRE(test::piece_holding(*log.model.index, z_source) + 1 == test::piece_holding(*log.model.index, z_receiver));
    for (const double rho : {1e-6, 1e-9, 1e-12, 1e-15, 1e-18, 1e-21}) {
        const auto [distance, optical] = direct_across(*log.model.index, log.z_min, rho, z_source, z_receiver);
        INFO(std::setprecision(12) << "n_min − ξ " << rho << ", R " << distance << " m");
        const auto paths = find_stratified_paths(log.profile, z_source, z_receiver, distance);
        const StratifiedPath* match = nullptr;
        for (const auto& path : paths)
            if (path.family == "direct") match = &path;
        REQUIRE(match != nullptr);
        CHECK(std::abs(match->time_s - optical / speed_of_light) < 0.01e-9);
    }
}

TEST_CASE("paths turning just short of a local minimum with both ends in the minimum's own cell (ξ − n_min from "
          "1e-6 down to 1e-24) are found with the time of tanh_sinh quadrature of the Snell integrals (Boost.Math) "
          "within 0.01 ns",
          "[solver][stratified]") {
    // The same minimum 6 m deep; both ends in its piece below, so that each leg runs from the
    // turning point to a fixed depth inside one cell (snell_integrals.cpp, turning_next_to_double_root
    // up to that depth). Down to 1e-24: the finder's samples next to a minimum reach n − ξ of 1e-24
    // of their range of ξ.
    const HalvardMinimum log;
    REQUIRE(log.z_min != 0.0);
    const double z_source = log.z_min - 0.3, z_receiver = log.z_min - 0.8;
    REQUIRE(test::piece_holding(*log.model.index, z_source) == test::piece_holding(*log.model.index, z_receiver));
    REQUIRE(test::piece_holding(*log.model.index, z_source) ==
            test::piece_holding(*log.model.index, log.z_min - 1e-9));
    for (const double rho : {1e-6, 1e-9, 1e-12, 1e-15, 1e-18, 1e-21, 1e-24}) {
        const Grazing ref = grazing_in_piece(*log.model.index, log.z_min, rho, z_source, z_receiver);
        check_turning_path(log.profile, z_source, z_receiver, ref, rho);
    }
}

TEST_CASE("a leg across a local minimum of n with ξ equal to n there is infinitely long (the ray runs along the "
          "minimum for ever: x diverges like the integral of 1/|z − z_min|, common practice)",
          "[solver][stratified][snell tables]") {
    const HalvardMinimum log;
    REQUIRE(log.z_min != 0.0);
    const RayLevel level = RayLevel::anchored_at(log.profile, log.z_min, 0.0);
    const double z_min = log.z_min;
    for (const auto& [a, b] : {std::pair{z_min - 0.7, z_min + 0.4}, std::pair{z_min - 0.7, z_min}, std::pair{z_min, z_min + 0.4}}) {
        INFO("from " << a << " to " << b << " m");
        const LegIntegrals leg = leg_integrals(log.profile, level, {a}, {b});
        CHECK(std::isinf(leg.distance_m));
        CHECK(std::isinf(leg.optical_path_m));
    }
}
