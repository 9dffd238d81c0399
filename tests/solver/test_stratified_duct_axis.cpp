// Equal depths on a local extremum of n (the axis of a duct at a maximum, or a minimum), where the
// monotone cubic of a table has n′ = 0 at the knot: the horizontal straight line is a ray there
// (the ray equation d/ds(n dz/ds) = dn/dz, with dn/dz = 0, leaves it horizontal; definition), so a
// pair at that depth is joined at every distance, by T = n R / c. Its vertical spreading follows
// the paraxial ray equation δz″ = (n″/n) δz (Červený 2001, paraxial rays; from memory): J =
// sin(kR)/k at a maximum, k² = −n″/n, so L_eff = √(R·J) → R for kR ≪ 1.
#include <catch2/catch.hpp>

#include <cmath>
#include <memory>
#include <vector>

#include "core/constants.hpp"
#include "model/table_profile.hpp"
#include "solver/path_families.hpp"

using namespace firnray;

namespace {

// Made up for the test (not a site): a lens with its maximum at 20 m, a soft layer with its
// minimum at 30 m.
std::shared_ptr<TableProfile> lens_and_soft_layer() {
    return std::make_shared<TableProfile>(std::vector<double>{0, 5, 10, 15, 20, 25, 30, 35, 40, 60, 100},
                                          std::vector<double>{1.35, 1.42, 1.50, 1.56, 1.62, 1.58, 1.55, 1.60, 1.66, 1.73, 1.78});
}

}  // namespace

TEST_CASE("equal depths on the axis of a duct or at a minimum of n are joined by the horizontal straight line at "
          "every distance, T = n R / c (definition: dn/dz = 0 leaves a horizontal ray horizontal)",
          "[solver][stratified]") {
    const StratifiedProfile profile(lens_and_soft_layer());
    StratifiedPathOptions options;
    options.max_bounces = 4;
    for (const double z : {-20.0, -30.0}) {
        const double n = profile.index(z);
        for (const double distance : {1e-4, 0.5, 7.0, 60.0}) {
            INFO("z " << z << " m, R " << distance << " m");
            const auto paths = find_stratified_paths(profile, z, z, distance, options);
            const StratifiedPath* line = nullptr;
            for (const auto& p : paths)
                if (p.ray_parameter == n && p.family == "direct") line = &p;
            REQUIRE(line != nullptr);
            CHECK(std::abs(line->time_s - n * distance / speed_of_light) < 1e-20);
            CHECK(line->launch_zenith_rad == Approx(pi / 2.0));
            CHECK(line->length_m == Approx(distance));
            if (distance <= 0.5) CHECK(line->derivative_cosines * n == Approx(distance).epsilon(1e-3));
        }
    }
    // Off the axis by a millimetre there is no such line; the paths found are rays that turn.
    for (const auto& p : find_stratified_paths(profile, -20.001, -20.001, 7.0, options)) CHECK(p.family != "direct");
}

TEST_CASE("at a minimum of n the straight line's spreading grows like sinh(kR)/k (paraxial ray equation, "
          "from memory), and where that exceeds a double the line is left out, never a path with an infinite spreading",
          "[solver][stratified]") {
    const StratifiedProfile profile(lens_and_soft_layer());
    const double z = -30.0, n = profile.index(z);
    double n_above, g_above, k_above, n_below, g_below, k_below;
    profile.evaluate(profile.cell_at(z, 1), z, n_above, g_above, k_above);
    profile.evaluate(profile.cell_at(z, -1), z, n_below, g_below, k_below);
    const double k = std::sqrt(0.5 * (k_above + k_below) / n);
    REQUIRE(k > 0.0);
    // kR = 50: the line, with J = sinh(kR)/k; kR = 1000: sinh overflows, no line.
    for (const double kr : {50.0, 1000.0}) {
        const double distance = kr / k;
        INFO("kR " << kr << ", R " << distance << " m");
        const auto paths = find_stratified_paths(profile, z, z, distance);
        const StratifiedPath* line = nullptr;
        for (const auto& p : paths) {
            CHECK(std::isfinite(p.derivative_cosines));
            if (p.ray_parameter == n && p.family == "direct") line = &p;
        }
        if (kr < 700.0) {
            REQUIRE(line != nullptr);
            CHECK(line->derivative_cosines * n == Approx(std::sinh(kr) / k).epsilon(1e-12));
        } else {
            CHECK(line == nullptr);
        }
    }
}
