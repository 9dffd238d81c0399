// The fast path of the stratified Snell integrals (whole cells from the tables of
// solver/snell_integrals.cpp) against the direct quadrature it replaces and against an independent
// quadrature (Boost.Math tanh_sinh, tests/support/snell_integrals.hpp), at random ray parameters
// and depths on a 200-point log with many inversions, and filled from two threads at once.
#include <catch2/catch.hpp>

#include <algorithm>
#include <cmath>
#include <limits>
#include <memory>
#include <thread>
#include <vector>

#include "core/constants.hpp"
#include "model/table_profile.hpp"
#include "solver/snell_integrals.hpp"
#include "support/snell_integrals.hpp"

using namespace firnray;

namespace {

// The log of bench/bench_stratified.cpp: an exponential trend, ±0.013 of layering every 7.3 m,
// small irregular noise and an ice lens at 60 m, every metre to 199 m (made up, not a site).
std::shared_ptr<TableProfile> layered_log() {
    std::vector<double> depth, n;
    unsigned state = 12345u;
    auto next_uniform = [&]() {
        state = state * 1664525u + 1013904223u;
        return (state >> 8) / 16777216.0;
    };
    for (int i = 0; i < 200; ++i) {
        const double d = i;
        double value = 1.78 - 0.43 * std::exp(-d / 37.0) + 0.013 * std::sin(2.0 * pi * d / 7.3) +
                       0.004 * (next_uniform() - 0.5);
        if (i == 60) value += 0.05;
        depth.push_back(d);
        n.push_back(value);
    }
    return std::make_shared<TableProfile>(depth, n);
}

// A fixed sequence of uniform numbers in [0, 1) (the same on every platform).
struct Uniform {
    unsigned long long state;
    double operator()() {
        state = state * 6364136223846793005ull + 1442695040888963407ull;
        return static_cast<double>(state >> 11) * 0x1.0p-53;
    }
};

struct RandomLeg {
    RayLevel level;
    LegEndpoint a, b;
};

// Legs with fixed ends at random depths and ξ below the smallest n between them, drawn closer to
// that smallest n (rays near horizontal somewhere) as often as far from it; and legs from a random
// depth to the turning points of its interval.
std::vector<RandomLeg> random_legs(const StratifiedProfile& profile, int count, unsigned long long seed) {
    Uniform uniform{seed};
    std::vector<RandomLeg> legs;
    while (static_cast<int>(legs.size()) < count) {
        const double z_a = -0.5 - 198.0 * uniform(), z_b = -0.5 - 198.0 * uniform();
        const double n_min = profile.minimum_index(std::min(z_a, z_b), std::max(z_a, z_b)).first;
        const double u = uniform();
        const double xi = n_min - (uniform() < 0.5 ? n_min * u * u : 0.02 * std::pow(10.0, -6.0 * u));
        const RayLevel level = RayLevel::plain(xi);
        legs.push_back({level, {z_a}, {z_b}});
        const auto interval = profile.interval_around(level, z_a);
        if (!interval) continue;
        if (interval->upper_kind == UpperEndKind::turning && !interval->upper_double_root)
            legs.push_back({level, {z_a}, {interval->upper_z, LegEnd::turning}});
        if (interval->lower_kind == LowerEndKind::turning && !interval->lower_double_root)
            legs.push_back({level, {interval->lower_z, LegEnd::turning}, {z_a}});
    }
    return legs;
}

bool agrees(double fast, double direct, double relative, double absolute) {
    if (std::isinf(fast) || std::isinf(direct)) return fast == direct;
    return std::abs(fast - direct) <= std::max(relative * std::abs(direct), absolute);
}

}  // namespace

TEST_CASE("tabulated Snell integrals on a 200-point log with 27 inversions agree with the direct quadrature at "
          "random ray parameters and depths (within 1e-12 relative or 1e-9 m or what a rounding of ξ moves, and 1e-6 "
          "ns, 1e-8 in the derivative)",
          "[solver][stratified][snell tables]") {
    const StratifiedProfile profile(layered_log());
    REQUIRE(profile.inversions().size() == 27);
    double worst_distance = 0.0, worst_time_ns = 0.0, worst_derivative = 0.0;
    int turning_legs = 0;
    for (const RandomLeg& leg : random_legs(profile, 400, 20261203)) {
        const LegIntegrals fast = leg_integrals(profile, leg.level, leg.a, leg.b);
        const LegIntegrals direct = leg_integrals_by_quadrature(profile, leg.level, leg.a, leg.b);
        turning_legs += leg.a.kind == LegEnd::turning || leg.b.kind == LegEnd::turning;
        INFO("ξ " << leg.level.ray_parameter << " from " << leg.a.z << " to " << leg.b.z);
        // A double ξ fixes x only to a few ulps of ξ times ∂x/∂ξ: next to a minimum of n (x ~ log)
        // that is 2e-9 m on a leg of 200 m, and the turning depth the direct quadrature starts
        // from carries that rounding, where the tables take n − ξ at the cell's ends.
        const double rounding = 4.0 * std::numeric_limits<double>::epsilon() * leg.level.ray_parameter *
                                std::abs(direct.distance_derivative);
        const double absolute = std::max(1e-9, std::isfinite(rounding) ? rounding : 0.0);
        CHECK(agrees(fast.distance_m, direct.distance_m, 1e-12, absolute));
        CHECK(agrees(fast.optical_path_m / speed_of_light * 1e9, direct.optical_path_m / speed_of_light * 1e9, 1e-12, 1e-6));
        CHECK(agrees(fast.length_m, direct.length_m, 1e-12, absolute));
        // ∂x/∂ξ with a turning end: the direct quadrature's by-parts sum is good to about 1e-9
        // relative here (3e-10 found).
        CHECK(agrees(fast.distance_derivative, direct.distance_derivative, 1e-8, 1e-6));
        if (std::isfinite(direct.distance_m)) {
            worst_distance = std::max(worst_distance, std::abs(fast.distance_m - direct.distance_m));
            worst_time_ns = std::max(worst_time_ns, std::abs(fast.optical_path_m - direct.optical_path_m) / speed_of_light * 1e9);
            worst_derivative = std::max(worst_derivative, std::abs(fast.distance_derivative - direct.distance_derivative) /
                                                              std::max(1e-300, std::abs(direct.distance_derivative)));
        }
    }
    CHECK(turning_legs > 100);
    CHECK(worst_derivative < 1e-8);
    WARN("tables against direct quadrature: largest difference " << worst_distance << " m, " << worst_time_ns
                                                                 << " ns, ∂x/∂ξ relative " << worst_derivative);
}

TEST_CASE("tabulated Snell integrals on a 200-point log with 27 inversions agree with tanh_sinh quadrature of the "
          "Snell integrals (Boost.Math) at random ray parameters and fixed depths",
          "[solver][stratified][snell tables]") {
    const auto table = layered_log();
    const StratifiedProfile profile(table);
    std::vector<double> breaks(table->joins_z().rbegin(), table->joins_z().rend());
    Uniform uniform{77};
    double worst_relative = 0.0, worst_time_ns = 0.0;
    for (int i = 0; i < 40; ++i) {
        const double z_a = -0.5 - 198.0 * uniform(), z_b = -0.5 - 198.0 * uniform();
        const double low = std::min(z_a, z_b), high = std::max(z_a, z_b);
        // n − ξ >= 1e-4 everywhere on the leg: tanh_sinh with the plain gap n − ξ is accurate there.
        const double n_min = profile.minimum_index(low, high).first;
        const double xi = (n_min - 1e-4) * (1.0 - std::pow(uniform(), 3.0));
        const auto ours = leg_integrals(profile, RayLevel::plain(xi), {z_a}, {z_b});
        const auto ref = test::snell_integrals(*table, xi, low, high, test::plain_gap(*table, xi), breaks);
        INFO("ξ " << xi << " from " << z_a << " to " << z_b);
        CHECK(ours.distance_m == Approx(ref.distance_m).epsilon(1e-10).margin(1e-12));
        CHECK(ours.optical_path_m == Approx(ref.optical_path_m).epsilon(1e-10));
        CHECK(ours.length_m == Approx(ref.length_m).epsilon(1e-10));
        CHECK(ours.distance_derivative == Approx(ref.distance_derivative).epsilon(1e-9).margin(1e-12));
        worst_relative = std::max(worst_relative, std::abs(ours.distance_m - ref.distance_m) / std::max(1e-300, ref.distance_m));
        worst_time_ns = std::max(worst_time_ns, std::abs(ours.optical_path_m - ref.optical_path_m) / speed_of_light * 1e9);
    }
    WARN("tables against tanh_sinh: largest relative distance difference " << worst_relative << ", time "
                                                                             << worst_time_ns << " ns");
}

TEST_CASE("Snell integral tables filled from two threads at once give the values of one thread (common practice: "
          "lazily built shared tables must be safe to fill concurrently)",
          "[solver][stratified][snell tables]") {
    const auto table = layered_log();
    const std::vector<RandomLeg> legs = random_legs(StratifiedProfile(table), 300, 99);
    // A fresh profile: its tables are empty, and both threads fill the same pieces.
    const StratifiedProfile shared(table);
    std::vector<LegIntegrals> first(legs.size()), second(legs.size());
    auto run = [&](std::vector<LegIntegrals>& out) {
        for (std::size_t i = 0; i < legs.size(); ++i) out[i] = leg_integrals(shared, legs[i].level, legs[i].a, legs[i].b);
    };
    std::thread one(run, std::ref(first)), two(run, std::ref(second));
    one.join();
    two.join();
    const StratifiedProfile alone(table);
    for (std::size_t i = 0; i < legs.size(); ++i) {
        const LegIntegrals expected = leg_integrals(alone, legs[i].level, legs[i].a, legs[i].b);
        INFO("leg " << i);
        for (const LegIntegrals* got : {&first[i], &second[i]}) {
            CHECK((got->distance_m == expected.distance_m || (std::isnan(got->distance_m) && std::isnan(expected.distance_m))));
            CHECK((got->optical_path_m == expected.optical_path_m ||
                   (std::isnan(got->optical_path_m) && std::isnan(expected.optical_path_m))));
        }
    }
}

TEST_CASE("tabulated ∂x/∂ξ to a turning point agrees with central differences of the tabulated distance "
          "(definition of the derivative)",
          "[solver][stratified][snell tables]") {
    const StratifiedProfile profile(layered_log());
    // A leg where the turning cell comes from its table (the case found by the random legs above).
    const double z_start = -32.147633464441853, xi = 1.597823799885949;
    auto leg = [&](double ray_parameter) {
        const RayLevel level = RayLevel::plain(ray_parameter);
        const auto interval = profile.interval_around(level, z_start);
        REQUIRE(interval);
        REQUIRE(interval->upper_kind == UpperEndKind::turning);
        return leg_integrals(profile, level, {z_start}, {interval->upper_z, LegEnd::turning});
    };
    const double h = 1e-5;
    const double central = (-leg(xi + 2 * h).distance_m + 8 * leg(xi + h).distance_m - 8 * leg(xi - h).distance_m +
                            leg(xi - 2 * h).distance_m) /
                           (12 * h);
    CHECK(leg(xi).distance_derivative == Approx(central).epsilon(1e-9));
}

TEST_CASE("legs crossing just below a local minimum of n agree with tanh_sinh quadrature of the Snell integrals "
          "(Boost.Math) split at the minimum",
          "[solver][stratified][snell tables]") {
    // n − ξ = g at the minimum, from 1e-6 down to 1e-12: Q² has two zeros at z_m ± i·√(2g/n″),
    // which the quadrature meets with the sinh substitution (snell_integrals.cpp, over_double_root).
    const auto table = layered_log();
    const StratifiedProfile profile(table);
    std::vector<double> breaks(table->joins_z().rbegin(), table->joins_z().rend());
    double worst_relative = 0.0, worst_time_ns = 0.0, worst_derivative = 0.0;
    int legs = 0;
    for (const double z_m : profile.local_minima_z()) {
        for (const double g : {1e-6, 1e-8, 1e-10, 1e-12}) {
            const RayLevel level = RayLevel::anchored_at(profile, z_m, g);
            const double z_low = z_m - 3.3, z_high = std::min(-0.01, z_m + 2.7);
            const auto interval = profile.interval_around(level, z_low);
            if (!interval || !interval->contains(z_high)) continue;
            const double xi = level.ray_parameter;
            // n − ξ from the level anchored at the minimum (no cancellation near it).
            auto gap = [&](double z, double) { return profile.gap(level, z); };
            const auto ref = test::snell_integrals(*table, xi, z_low, z_high, gap, breaks);
            const LegIntegrals ours = leg_integrals(profile, level, {z_low}, {z_high});
            INFO("minimum at " << z_m << " m, n − ξ " << g);
            CHECK(ours.distance_m == Approx(ref.distance_m).epsilon(1e-10));
            CHECK(ours.optical_path_m == Approx(ref.optical_path_m).epsilon(1e-10));
            CHECK(ours.distance_derivative == Approx(ref.distance_derivative).epsilon(1e-8));
            worst_relative = std::max(worst_relative, std::abs(ours.distance_m - ref.distance_m) / ref.distance_m);
            worst_time_ns = std::max(worst_time_ns, std::abs(ours.optical_path_m - ref.optical_path_m) / speed_of_light * 1e9);
            worst_derivative = std::max(worst_derivative, std::abs(ours.distance_derivative - ref.distance_derivative) /
                                                              std::abs(ref.distance_derivative));
            ++legs;
        }
    }
    CHECK(legs > 80);
    WARN("crossing below a minimum, against tanh_sinh: largest relative distance difference " << worst_relative
         << ", time " << worst_time_ns << " ns, ∂x/∂ξ relative " << worst_derivative << " (" << legs << " legs)");
}

TEST_CASE("legs turning just beside a local minimum of n agree with the direct quadrature and their ∂x/∂ξ with "
          "central differences of x (definition of the derivative)",
          "[solver][stratified][snell tables]") {
    // ξ above the minimum by 1e-5 to 1e-11: the ray turns within 1e-3 to 1e-6 m of it, where Q²
    // has a second zero just beyond the turning point (snell_integrals.cpp,
    // turning_next_to_double_root). The turning depth itself is known to an ulp of z, so x is
    // determined to about 1e-9 relative there (x grows like log of the distance to the minimum).
    const StratifiedProfile profile(layered_log());
    double worst_distance = 0.0, worst_derivative = 0.0;
    int legs = 0;
    for (const double z_m : profile.local_minima_z()) {
        for (const double above : {1e-5, 1e-7, 1e-9, 1e-11}) {
            const double z_start = z_m - 7.3;
            if (z_start < -199.0) continue;
            // Only where the ray from z_start turns next to this minimum.
            const auto interval = profile.interval_around(RayLevel::anchored_at(profile, z_m, -above), z_start);
            if (!interval || interval->upper_kind != UpperEndKind::turning || std::abs(interval->upper_z - z_m) > 1e-2)
                continue;
            auto leg = [&](double offset, bool quadrature_only) {
                const RayLevel level = RayLevel::anchored_at(profile, z_m, offset);
                const auto interval = profile.interval_around(level, z_start);
                REQUIRE(interval);
                REQUIRE(interval->upper_kind == UpperEndKind::turning);
                const LegEndpoint top{interval->upper_z, LegEnd::turning};
                return quadrature_only ? leg_integrals_by_quadrature(profile, level, {z_start}, top)
                                       : leg_integrals(profile, level, {z_start}, top);
            };
            const LegIntegrals ours = leg(-above, false), direct = leg(-above, true);
            INFO("minimum at " << z_m << " m, ξ − n " << above);
            CHECK(ours.distance_m == Approx(direct.distance_m).epsilon(1e-9));
            CHECK(ours.optical_path_m == Approx(direct.optical_path_m).epsilon(1e-9));
            // ξ = n(z_m) − offset: dx/dξ = −dx/d(offset), by central differences at 1e-3 of the offset.
            const double h = 1e-3 * above;
            const double central = -(leg(-above + h, false).distance_m - leg(-above - h, false).distance_m) / (2.0 * h);
            CHECK(ours.distance_derivative == Approx(central).epsilon(1e-5));
            worst_distance = std::max(worst_distance, std::abs(ours.distance_m - direct.distance_m));
            worst_derivative = std::max(worst_derivative, std::abs(ours.distance_derivative - central) / std::abs(central));
            ++legs;
        }
    }
    CHECK(legs > 40);
    WARN("turning beside a minimum: largest difference from the direct quadrature " << worst_distance
         << " m, ∂x/∂ξ against central differences " << worst_derivative << " relative (" << legs << " legs)");
}

TEST_CASE("tabulated legs crossing whole cells just below a local minimum of n, n − ξ from 1e-3 down to 1e-27, "
          "agree with the direct quadrature within 1e-12 relative, and with tanh_sinh quadrature of the Snell "
          "integrals (Boost.Math) within 1e-10 where n − ξ >= 1e-10",
          "[solver][stratified][snell tables]") {
    // The blocks whose smallest n is a minimum with n′ = 0 come from the pieces below w0 there
    // (snell_integrals.cpp, SnellCellTables::base_levels), x growing like log(n − ξ); the legs
    // reach 0 to 20 cells beyond the two cells next to the minimum, so blocks of several levels
    // serve them. Down to 1e-27: the path finder's first sample next to a minimum has n − ξ of
    // 1e-24 of its range of ξ.
    const auto table = layered_log();
    const StratifiedProfile profile(table);
    std::vector<double> breaks(table->joins_z().rbegin(), table->joins_z().rend());
    double worst_direct = 0.0, worst_reference = 0.0, worst_derivative = 0.0;
    int legs = 0;
    for (const double beyond : {0.0, 1.0, 5.0, 20.0}) {
        for (const double z_m : profile.local_minima_z()) {
            for (int decade = 3; decade <= 27; ++decade) {
                const double g = 1.37 * std::pow(10.0, -decade);
                const RayLevel level = RayLevel::anchored_at(profile, z_m, g);
                const double z_low = std::max(-199.0, z_m - 1.3 - beyond), z_high = std::min(-0.01, z_m + 1.7 + beyond);
                const auto interval = profile.interval_around(level, z_low);
                if (!interval || !interval->contains(z_high)) continue;
                const LegIntegrals ours = leg_integrals(profile, level, {z_low}, {z_high});
                const LegIntegrals direct = leg_integrals_by_quadrature(profile, level, {z_low}, {z_high});
                INFO("minimum at " << z_m << " m, n − ξ " << g << ", from " << z_low << " to " << z_high);
                CHECK(ours.distance_m == Approx(direct.distance_m).epsilon(1e-12));
                CHECK(ours.optical_path_m == Approx(direct.optical_path_m).epsilon(1e-12));
                CHECK(ours.length_m == Approx(direct.length_m).epsilon(1e-12));
                CHECK(ours.distance_derivative == Approx(direct.distance_derivative).epsilon(1e-12));
                worst_direct = std::max(worst_direct, std::abs(ours.distance_m - direct.distance_m) / direct.distance_m);
                worst_derivative = std::max(worst_derivative, std::abs(ours.distance_derivative - direct.distance_derivative) /
                                                                  std::abs(direct.distance_derivative));
                ++legs;
                // tanh_sinh in z is itself good to about 1e-11 at n − ξ = 1e-12 only (the zeros of Q²
                // at z_m ± i·√(2g/n″) come too close for it): compared down to 1e-10.
                if (decade > 10 || beyond > 5.0) continue;
                auto gap = [&](double z, double) { return profile.gap(level, z); };
                const auto ref = test::snell_integrals(*table, level.ray_parameter, z_low, z_high, gap, breaks);
                CHECK(ours.distance_m == Approx(ref.distance_m).epsilon(1e-10));
                CHECK(ours.optical_path_m == Approx(ref.optical_path_m).epsilon(1e-10));
                CHECK(ours.distance_derivative == Approx(ref.distance_derivative).epsilon(1e-9));
                worst_reference = std::max(worst_reference, std::abs(ours.distance_m - ref.distance_m) / ref.distance_m);
            }
        }
    }
    CHECK(legs > 1200);
    WARN("crossing whole cells below a minimum: largest relative distance difference from the direct quadrature "
         << worst_direct << ", ∂x/∂ξ " << worst_derivative << ", from tanh_sinh " << worst_reference << " (" << legs
         << " legs)");
}

TEST_CASE("legs turning just beside a local minimum of n, ξ − n from 1e-3 down to 1e-15, vary smoothly with ξ (fourth "
          "differences within 1e-11 relative, common practice for checking the noise of a computed function) and agree "
          "with the direct quadrature within what a rounding of the turning depth moves x",
          "[solver][stratified][snell tables]") {
    // The turning cells next to a minimum with n′ = 0 are tabulated from the expansion about the
    // minimum (snell_integrals.cpp, turning_beside_minimum): x is a smooth function of ρ = ξ − n_min
    // there, where a turning depth rounded to an ulp of z scatters it by up to 1e-10.
    const StratifiedProfile profile(layered_log());
    double worst_noise = 0.0, worst_direct = 0.0;
    int legs = 0;
    for (const double z_m : profile.local_minima_z()) {
        const double z_start = z_m - 7.3;
        if (z_start < -199.0) continue;
        for (int decade = 3; decade <= 15; ++decade) {
            const double above = 1.37 * std::pow(10.0, -decade);
            std::vector<double> distances;
            for (int k = 0; k < 5; ++k) {
                const RayLevel level = RayLevel::anchored_at(profile, z_m, -above * (1.0 + 1e-3 * k));
                const auto interval = profile.interval_around(level, z_start);
                if (!interval || interval->upper_kind != UpperEndKind::turning || std::abs(interval->upper_z - z_m) > 0.1) break;
                const LegEndpoint top{interval->upper_z, LegEnd::turning};
                const LegIntegrals ours = leg_integrals(profile, level, {z_start}, top);
                distances.push_back(ours.distance_m);
                if (k > 0) continue;
                const LegIntegrals direct = leg_integrals_by_quadrature(profile, level, {z_start}, top);
                // The direct quadrature starts from the turning depth, rounded to an ulp of z: x moves
                // by ∂x/∂z_t·ulp = ∂x/∂ξ·n′(z_t)·ulp(z_t).
                double n, dn, d2n;
                profile.evaluate(profile.cell_at(interval->upper_z), interval->upper_z, n, dn, d2n);
                const double rounding = 4.0 * std::abs(direct.distance_derivative) *
                                        (std::abs(dn) * std::abs(z_m) + level.ray_parameter) *
                                        std::numeric_limits<double>::epsilon();
                INFO("minimum at " << z_m << " m, ξ − n " << above);
                CHECK(std::abs(ours.distance_m - direct.distance_m) <= 1e-12 * direct.distance_m + rounding);
                worst_direct = std::max(worst_direct, std::abs(ours.distance_m - direct.distance_m) / direct.distance_m);
            }
            if (distances.size() < 5) continue;
            const double fourth =
                distances[4] - 4.0 * distances[3] + 6.0 * distances[2] - 4.0 * distances[1] + distances[0];
            INFO("minimum at " << z_m << " m, ξ − n " << above);
            CHECK(std::abs(fourth) <= 1e-11 * distances[0]);
            worst_noise = std::max(worst_noise, std::abs(fourth) / distances[0]);
            ++legs;
        }
    }
    CHECK(legs > 150);
    WARN("turning beside a minimum: largest relative fourth difference of x over ξ " << worst_noise
         << ", largest relative difference from the direct quadrature " << worst_direct << " (" << legs << " legs)");
}

TEST_CASE("∂x/∂ξ of legs turning in a cell between a minimum and a maximum of n agrees with central differences of "
          "x, by the direct quadrature and by the tables (definition of the derivative)",
          "[solver][stratified][snell tables]") {
    // An ice lens: n rises from 1.60 at 20 m to 1.70 at 22 m and falls to 1.58 at 24 m, so the cell
    // from 22 m to 24 m runs from a maximum (n′ = 0) to a minimum (n′ = 0) through an inflection.
    // A ray turning in it from above: the end piece at the turning point must stop well short of
    // the maximum, where h = 1/(n n′) of the by-parts derivative has its pole (it once reached to
    // within 1.5 cm of it and gave −32 for +35).
    const StratifiedProfile profile(std::make_shared<TableProfile>(
        std::vector<double>{0, 10, 20, 22, 24, 40, 80, 150}, std::vector<double>{1.35, 1.50, 1.60, 1.70, 1.58, 1.66, 1.74, 1.78}));
    int legs = 0;
    for (double xi = 1.585; xi < profile.index(-21.0) - 1e-3; xi += 0.0041) {
        auto leg = [&](double ray_parameter, bool quadrature_only) {
            const RayLevel level = RayLevel::plain(ray_parameter);
            const auto interval = profile.interval_around(level, -21.0);
            REQUIRE(interval);
            REQUIRE(interval->lower_kind == LowerEndKind::turning);
            const LegEndpoint bottom{interval->lower_z, LegEnd::turning};
            return quadrature_only ? leg_integrals_by_quadrature(profile, level, {-21.0}, bottom)
                                   : leg_integrals(profile, level, {-21.0}, bottom);
        };
        const double h = 1e-6;
        const double central = (leg(xi + h, false).distance_m - leg(xi - h, false).distance_m) / (2.0 * h);
        INFO("ξ " << xi);
        CHECK(leg(xi, false).distance_derivative == Approx(central).epsilon(1e-6));
        CHECK(leg(xi, true).distance_derivative == Approx(central).epsilon(1e-6));
        ++legs;
    }
    CHECK(legs > 10);
}

TEST_CASE("tabulated legs from the lower-index end of each cell with n − ξ there from 1e-3 down to 1e-15 agree with "
          "the direct quadrature within 1e-12 relative",
          "[solver][stratified][snell tables]") {
    // A ray almost horizontal at a cell's end where n is smallest: where n′ is small there (near a
    // minimum of n) the cell's integrals behave like log w down to w ~ n′/√(2n″), and the cell comes
    // from the dyadic pieces below w0 (snell_integrals.cpp, SnellCellTables::base_levels) instead
    // of one series over [0, w0]. The leg runs on 0.37 m into the next cell, so the cell is whole.
    const StratifiedProfile profile(layered_log());
    double worst = 0.0, worst_derivative = 0.0;
    int legs = 0;
    for (std::size_t cell = 1; cell + 2 < profile.cell_count() && profile.cell_bottom(cell) > -199.0; ++cell) {
        const double top = profile.cell_top(cell), bottom = profile.cell_bottom(cell);
        const bool lowest_at_top = profile.index(top) < profile.index(bottom);
        const double z_low_index = lowest_at_top ? top : bottom, beyond = lowest_at_top ? bottom - 0.37 : top + 0.37;
        for (int decade = 3; decade <= 15; decade += 2) {
            const RayLevel level = RayLevel::anchored_at(profile, z_low_index, 1.37 * std::pow(10.0, -decade));
            const auto interval = profile.interval_around(level, z_low_index);
            if (!interval || !interval->contains(beyond)) continue;
            const LegIntegrals ours = leg_integrals(profile, level, {z_low_index}, {beyond});
            const LegIntegrals direct = leg_integrals_by_quadrature(profile, level, {z_low_index}, {beyond});
            INFO("cell " << cell << " from " << z_low_index << " m, n − ξ there " << level.offset);
            CHECK(ours.distance_m == Approx(direct.distance_m).epsilon(1e-12));
            CHECK(ours.optical_path_m == Approx(direct.optical_path_m).epsilon(1e-12));
            CHECK(ours.length_m == Approx(direct.length_m).epsilon(1e-12));
            CHECK(ours.distance_derivative == Approx(direct.distance_derivative).epsilon(1e-10));
            worst = std::max(worst, std::abs(ours.distance_m - direct.distance_m) / direct.distance_m);
            worst_derivative = std::max(worst_derivative, std::abs(ours.distance_derivative - direct.distance_derivative) /
                                                              std::abs(direct.distance_derivative));
            ++legs;
        }
    }
    CHECK(legs > 1000);
    WARN("from the lower-index end of each cell: largest relative difference from the direct quadrature "
         << worst << " in x, " << worst_derivative << " in ∂x/∂ξ (" << legs << " legs)");
}

TEST_CASE("legs from a turning end known only to its cell agree with the legs from the solved turning point, and "
          "interval_around places such an end inside the cell that holds the solved one (the tables need the cell "
          "and the ray parameter only, by construction)",
          "[solver][stratified][snell tables]") {
    // Levels across the whole range of n of the log, from fixed depths every 7.3 m: where the
    // turning cell's table serves the leg the two agree to rounding; where it does not, the cell-only
    // form declines and the solved leg is the answer.
    const StratifiedProfile profile(layered_log());
    int served = 0, declined = 0;
    for (double z_start = -3.7; z_start > -199.0; z_start -= 7.3) {
        for (int k = 1; k < 40; ++k) {
            const RayLevel level = RayLevel::anchored_at(profile, z_start, 0.0025 * k);
            const auto exact = profile.interval_around(level, z_start);
            const auto coarse = profile.interval_around(level, z_start, true);
            REQUIRE(exact.has_value() == coarse.has_value());
            if (!exact || exact->upper_kind != UpperEndKind::turning) continue;
            REQUIRE(coarse->upper_kind == UpperEndKind::turning);
            INFO("from " << z_start << " m, ξ " << level.ray_parameter);
            if (!coarse->upper_approximate) {
                CHECK(coarse->upper_z == exact->upper_z);
                continue;
            }
            const std::size_t cell = profile.cell_at(coarse->upper_z);
            CHECK(exact->upper_z >= profile.cell_bottom(cell));
            CHECK(exact->upper_z <= profile.cell_top(cell));
            const auto from_cell = leg_integrals_from_turning_cell(profile, level, coarse->upper_z, z_start, true);
            if (!from_cell) {
                ++declined;
                continue;
            }
            const LegIntegrals solved = leg_integrals(profile, level, {z_start}, {exact->upper_z, LegEnd::turning});
            CHECK(from_cell->distance_m == Approx(solved.distance_m).epsilon(1e-13));
            CHECK(from_cell->optical_path_m == Approx(solved.optical_path_m).epsilon(1e-13));
            CHECK(from_cell->length_m == Approx(solved.length_m).epsilon(1e-13));
            CHECK(from_cell->distance_derivative == Approx(solved.distance_derivative).epsilon(1e-12));
            ++served;
        }
    }
    CHECK(served > 200);
    WARN("turning ends known to their cell: " << served << " legs from the cell's table, " << declined << " declined");
}
