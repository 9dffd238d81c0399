// The stratified Snell integrals on a tabulated log with a density inversion (an ice lens and
// a softer layer below it) against an independent quadrature of the same integrals: Boost.Math
// tanh_sinh (the reference library of physics notes §7) through tests/support/snell_integrals.hpp,
// split at the table's knots, with n − ξ written about the turning point by the Taylor series of
// the piece's cubic so that the 1/√ singularity is resolved.
#include <catch2/catch.hpp>

#include <cmath>
#include <memory>
#include <vector>

#include "core/constants.hpp"
#include "model/layered_profile.hpp"
#include "model/table_profile.hpp"
#include "solver/path_families.hpp"
#include "support/snell_integrals.hpp"

using namespace firnray;

namespace {

// A log every 2.5 m to 120 m: exponential trend, a lens at 30 m (+0.05), a soft layer at 35–40 m
// (−0.03), small irregular layering. Made up for the test, not a site.
std::shared_ptr<TableProfile> log_with_inversion() {
    std::vector<double> depth, n;
    for (int i = 0; i <= 48; ++i) {
        const double d = 2.5 * i;
        double value = 1.78 - 0.43 * std::exp(-d / 35.0) + 0.004 * std::sin(1.7 * i);
        if (d == 30.0) value += 0.05;
        if (d >= 35.0 && d <= 40.0) value -= 0.03;
        depth.push_back(d);
        n.push_back(value);
    }
    return std::make_shared<TableProfile>(depth, n);
}

std::size_t piece_of(const IndexProfile& profile, double z) {
    std::size_t piece = 0;
    for (double join : profile.joins_z())
        if (z < join) ++piece;
    return piece;
}

}  // namespace

TEST_CASE("stratified legs on a table with a density inversion agree with tanh_sinh quadrature of the Snell "
          "integrals (Boost.Math), fixed ends and turning ends",
          "[solver][stratified]") {
    const auto table = log_with_inversion();
    const StratifiedProfile profile(table);
    REQUIRE_FALSE(profile.inversions().empty());
    REQUIRE_FALSE(profile.ducts().empty());
    const std::vector<double> knots(table->joins_z().begin(), table->joins_z().end());  // highest first
    const std::vector<double> breaks(knots.rbegin(), knots.rend());                     // as the reference wants
    double worst_relative = 0.0, worst_time = 0.0;

    struct Leg {
        double xi, z_a, z_b;
    };
    for (const Leg& leg : {Leg{0.0, -110.0, -3.0}, Leg{0.9, -100.0, -1.0}, Leg{1.3, -60.0, -20.0},
                           Leg{1.55, -119.0, -45.0}, Leg{1.58, -34.0, -28.0}, Leg{1.2, -31.3, -31.2}}) {
        const double low = std::min(leg.z_a, leg.z_b), high = std::max(leg.z_a, leg.z_b);
        const auto ours = leg_integrals(profile, RayLevel::plain(leg.xi), {leg.z_a}, {leg.z_b});
        const auto ref = test::snell_integrals(*table, leg.xi, low, high, test::plain_gap(*table, leg.xi), breaks);
        INFO("ξ " << leg.xi << " from " << leg.z_a << " to " << leg.z_b);
        // tanh_sinh in double precision is itself good to about 1e-12 here.
        CHECK(ours.distance_m == Approx(ref.distance_m).epsilon(1e-11).margin(1e-13));
        CHECK(ours.optical_path_m == Approx(ref.optical_path_m).epsilon(1e-10));
        CHECK(ours.length_m == Approx(ref.length_m).epsilon(1e-10));
        CHECK(ours.distance_derivative == Approx(ref.distance_derivative).epsilon(1e-10).margin(1e-12));
        worst_relative = std::max(worst_relative, std::abs(ours.distance_m - ref.distance_m) / std::max(1e-300, ref.distance_m));
        worst_time = std::max(worst_time, std::abs(ours.optical_path_m - ref.optical_path_m) / speed_of_light);
    }

    // Legs up to the turning point above a start, including turns under the lens and in the soft layer.
    for (double xi : {1.40, 1.55, 1.62, 1.66, 1.70, 1.74}) {
        for (double z_start : {-38.0, -60.0, -115.0}) {
            const auto interval = profile.interval_around(xi, z_start);
            if (!interval || interval->upper_kind != UpperEndKind::turning) continue;
            const double z_t = interval->upper_z;
            const std::size_t piece = piece_of(*table, z_t - 1e-9);
            double n_t, g_t, k_t, n_b, g_b, k_b;
            table->piece_index(piece, z_t, n_t, g_t, k_t);
            table->piece_index(piece, z_t - 0.5, n_b, g_b, k_b);
            const double third = (k_t - k_b) / 0.5;
            const double piece_bottom = piece < knots.size() ? knots[piece] : -1e9;
            auto gap = [&](double z, double below_top) {
                if (z < piece_bottom) return table->index(z) - xi;
                // n(z_t − w) − n(z_t), exact for the cubic piece; n(z_t) = ξ to rounding
                const double w = below_top;
                return w * (-g_t + w * (0.5 * k_t - w * third / 6.0));
            };
            const auto ref = test::snell_integrals(*table, xi, z_start, z_t, gap, breaks, false);
            const auto ours = leg_integrals(profile, RayLevel::plain(xi), {z_start}, {z_t, LegEnd::turning});
            INFO("ξ " << xi << " from " << z_start << " to the turning point at " << z_t);
            CHECK(ours.distance_m == Approx(ref.distance_m).epsilon(1e-11));
            CHECK(ours.optical_path_m == Approx(ref.optical_path_m).epsilon(1e-10));
            CHECK(ours.length_m == Approx(ref.length_m).epsilon(1e-10));
            worst_relative = std::max(worst_relative, std::abs(ours.distance_m - ref.distance_m) / ref.distance_m);
            worst_time = std::max(worst_time, std::abs(ours.optical_path_m - ref.optical_path_m) / speed_of_light);
        }
    }
    WARN("table with an inversion: largest relative distance difference from tanh_sinh " << worst_relative
                                                                                           << ", time " << worst_time * 1e9 << " ns");
}

TEST_CASE("stratified ∂x/∂ξ to a turning point on a table with an inversion agrees with central differences of "
          "the distance (definition of the derivative)",
          "[solver][stratified]") {
    const auto table = log_with_inversion();
    const StratifiedProfile profile(table);
    for (double xi : {1.55, 1.62, 1.68}) {
        auto distance = [&](double x) {
            const auto interval = profile.interval_around(x, -60.0);
            return leg_integrals(profile, RayLevel::plain(x), {-60.0}, {interval->upper_z, LegEnd::turning}).distance_m;
        };
        const double h = 1e-7;
        const double central = (distance(xi + h) - distance(xi - h)) / (2.0 * h);
        const auto interval = profile.interval_around(xi, -60.0);
        REQUIRE(interval);
        const auto ours = leg_integrals(profile, RayLevel::plain(xi), {-60.0}, {interval->upper_z, LegEnd::turning});
        INFO("ξ " << xi);
        CHECK(ours.distance_derivative == Approx(central).epsilon(1e-5));
    }
}

TEST_CASE("stratified paths on a table with a density inversion are the same both ways, same times and "
          "mirrored angles (reciprocity theorem)",
          "[solver][stratified]") {
    const StratifiedProfile profile(log_with_inversion());
    StratifiedPathOptions options;
    options.max_bounces = 3;
    struct Pair {
        double zs, zr, distance;
    };
    for (const Pair& pair : {Pair{-31.0, -60.0, 150.0}, Pair{-36.0, -38.0, 80.0}, Pair{-5.0, -100.0, 90.0}}) {
        const auto forward = find_stratified_paths(profile, pair.zs, pair.zr, pair.distance, options);
        const auto backward = find_stratified_paths(profile, pair.zr, pair.zs, pair.distance, options);
        INFO("pair " << pair.zs << " and " << pair.zr << " at " << pair.distance << " m");
        REQUIRE_FALSE(forward.empty());
        REQUIRE(forward.size() == backward.size());
        for (std::size_t i = 0; i < forward.size(); ++i) {
            CHECK(std::abs(forward[i].time_s - backward[i].time_s) < 1e-15);
            CHECK(forward[i].ray_parameter == Approx(backward[i].ray_parameter).epsilon(1e-10));
            CHECK(std::abs(forward[i].launch_zenith_rad - (pi - backward[i].arrival_zenith_rad)) < deg_to_rad(1e-6));
            CHECK(forward[i].turns.size() == backward[i].turns.size());
        }
    }
}

namespace {

struct LayeredLeg {
    double xi, z_a, z_b;
};

// Legs of a layered profile (generic cells) against the Snell integrals by tanh_sinh, split at
// the transition zone `breaks`: x, c·T and s to 1e-10, ∂x/∂ξ to `derivative_tolerance`.
void check_layered_legs(const std::shared_ptr<LayeredProfile>& layered, const std::vector<double>& breaks,
                        std::initializer_list<LayeredLeg> legs, double derivative_tolerance) {
    const StratifiedProfile profile(layered);
    CHECK(profile.inversions().empty());
    for (const LayeredLeg& leg : legs) {
        const double low = std::min(leg.z_a, leg.z_b), high = std::max(leg.z_a, leg.z_b);
        const auto ours = leg_integrals(profile, RayLevel::plain(leg.xi), {leg.z_a}, {leg.z_b});
        const auto ref = test::snell_integrals(*layered, leg.xi, low, high, test::plain_gap(*layered, leg.xi), breaks);
        INFO("ξ " << leg.xi << " from " << leg.z_a << " to " << leg.z_b);
        CHECK(ours.distance_m == Approx(ref.distance_m).epsilon(1e-10).margin(1e-13));
        CHECK(ours.optical_path_m == Approx(ref.optical_path_m).epsilon(1e-10));
        CHECK(ours.length_m == Approx(ref.length_m).epsilon(1e-10));
        CHECK(ours.distance_derivative == Approx(ref.distance_derivative).epsilon(derivative_tolerance));
    }
}

}  // namespace

TEST_CASE("stratified legs on a layered profile (smooth transitions, no joins, generic cells) agree with "
          "tanh_sinh quadrature of the Snell integrals (Boost.Math)",
          "[solver][stratified]") {
    auto layered = std::make_shared<LayeredProfile>(
        1.35, std::vector<ExponentialLayer>{ExponentialLayer{15.0, 1.82, 22.0}, ExponentialLayer{INFINITY, 1.78, 40.0}},
        2.0);
    check_layered_legs(layered, {-16.0, -14.0},
                       {{0.0, -300.0, -2.0}, {1.2, -200.0, 0.0}, {1.5, -80.0, -10.0}, {1.7, -500.0, -60.0}}, 1e-9);
}

TEST_CASE("stratified ∂x/∂ξ of legs ending at the surface of a layered profile with n − ξ small there (a ray "
          "nearly grazing the surface) agrees with tanh_sinh quadrature of ∫ n²/Q³ dz (Boost.Math)",
          "[solver][stratified]") {
    // The end piece at the surface takes ∂x/∂ξ by parts through h = 1/(n n′), so it needs d²n/dz²
    // right at the surface, where a generic profile's is a one-sided difference.
    auto layered = std::make_shared<LayeredProfile>(
        1.33, std::vector<ExponentialLayer>{ExponentialLayer{10.0, 1.85, 30.0}, ExponentialLayer{INFINITY, 1.78, 40.0}},
        2.0);
    check_layered_legs(layered, {-11.0, -9.0},
                       {{1.3294405839, -26.75, 0.0}, {1.3294405839, -180.0, 0.0}, {1.3299, -5.0, 0.0}, {1.32999, -60.0, 0.0}},
                       1e-8);
}

TEST_CASE("every stratified path on a table with a density inversion joins its ends: X(ξ) of its family equals R, "
          "and no path is faster than the straight line at the lowest n of the profile (definition, Fermat)",
          "[solver][stratified]") {
    const auto table = log_with_inversion();
    const StratifiedProfile profile(table);
    StratifiedPathOptions options;
    options.max_bounces = 4;
    const double n_lowest = profile.minimum_index(profile.floor_z(), 0.0).first;
    for (auto [zs, zr, r] : {std::tuple{-31.0, -33.0, 60.0}, std::tuple{-36.0, -100.0, 250.0},
                             std::tuple{-50.0, -10.0, 400.0}, std::tuple{-37.0, -37.0, 90.0}}) {
        const auto paths = find_stratified_paths(profile, zs, zr, r, options);
        INFO("pair " << zs << " to " << zr << " at " << r << " m");
        for (const auto& path : paths) {
            INFO(path.family << " ξ " << path.ray_parameter);
            const PathFamily family{path.family == "direct" ? zr > zs : path.family[0] == 'U',
                                    path.family == "direct" ? 0 : static_cast<int>(path.family.size())};
            const auto legs = family_legs(profile, RayLevel::plain(path.ray_parameter), family, zs, zr, false);
            REQUIRE(legs);
            const double tolerance = 1e-6 + 4e-16 * path.ray_parameter * std::abs(path.distance_derivative);
            CHECK(std::abs(legs->total.distance_m - r) <= tolerance);
            CHECK(path.time_s >= n_lowest * std::hypot(r, zr - zs) / speed_of_light);
            CHECK(static_cast<int>(path.turns.size()) == family.ends);
        }
    }
}
