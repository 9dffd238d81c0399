// Paths past a stretch where a table's n is constant (two equal values in a row, as a density log
// holds where a layer was measured at one density). A monotone cubic is flat there and has n′ = 0 at
// both ends of the stretch. A ray with ξ just below that n crosses the stretch nearly horizontally
// and its horizontal distance X grows without bound as ξ approaches n; a ray with ξ just above
// turns at the far edge of the stretch instead. X(ξ) therefore diverges and jumps inside what was
// one range of ξ, and the paths on both sides of it are checked against an independent reference.
//
// Reference: the Snell integrals by Boost.Math tanh_sinh quadrature (test::turn_above in
// tests/support/snell_integrals.hpp), with the turning point found by bisection on the table's own
// n(z) and n − ξ written about it by the Taylor series of the piece's cubic. A source/receiver pair with R = X_ref(ξ0) must have a
// path of family U with ray parameter ξ0 and the reference time at ξ0.
#include <catch2/catch.hpp>

#include <algorithm>
#include <cmath>
#include <iomanip>
#include <memory>
#include <vector>

#include "core/constants.hpp"
#include "model/table_profile.hpp"
#include "solver/path_families.hpp"
#include "support/snell_integrals.hpp"

using namespace firnray;

namespace {

constexpr double n_flat = 1.356;

// Firn-like values made up for the test (not a site): n constant from 2.0 m to 2.6 m deep.
std::shared_ptr<TableProfile> log_with_flat_stretch() {
    return std::make_shared<TableProfile>(
        std::vector<double>{0.0, 1.0, 2.0, 2.6, 4.0, 7.0, 12.0, 20.0, 35.0, 60.0, 100.0, 150.0},
        std::vector<double>{1.340, 1.3495, n_flat, n_flat, 1.368, 1.40, 1.45, 1.52, 1.62, 1.71, 1.765, 1.78});
}

}  // namespace

TEST_CASE("the ends of a flat stretch of a table are stationary points of n where the ranges of ξ are cut "
          "(definition of a turning point, physics notes §8)",
          "[solver][stratified]") {
    const StratifiedProfile profile(log_with_flat_stretch());
    const auto& stationary = profile.stationary_z();
    CHECK(std::find(stationary.begin(), stationary.end(), -2.0) != stationary.end());
    CHECK(std::find(stationary.begin(), stationary.end(), -2.6) != stationary.end());
    CHECK(profile.local_minima_z().empty());  // n never falls with depth here
}

TEST_CASE("paths crossing a flat stretch nearly horizontally, and paths turning at its far edge, are found "
          "with the time of tanh_sinh quadrature of the Snell integrals (Boost.Math) within 0.01 ns",
          "[solver][stratified]") {
    const auto table = log_with_flat_stretch();
    const StratifiedProfile profile(table);
    StratifiedPathOptions options;
    options.max_bounces = 2;
    double worst_time = 0.0;
    // ξ below n_flat: the ray turns above the stretch; above it: it turns just below the stretch.
    for (const double offset : {-1e-4, -1e-6, -1e-8, 1e-8, 1e-6, 1e-4}) {
        const double xi = n_flat + offset;
        for (auto [zs, zr] : {std::pair{-50.0, -90.0}, std::pair{-12.0, -5.0}, std::pair{-140.0, -140.0}}) {
            const test::TurnAbove ref = test::turn_above(*table, xi, zs, zr);
            INFO(std::setprecision(15) << "ξ = n_flat " << offset << ", pair " << zs << " to " << zr << " at R = " << ref.distance_m
                               << " m, turning at " << ref.turning_z);
            REQUIRE(ref.turning_z > (offset < 0.0 ? -2.0 : -2.7));
            const auto paths = find_stratified_paths(profile, zs, zr, ref.distance_m, options);
            // The path of family U nearest to ξ0; ξ0 itself is known to the reference's accuracy in X.
            auto match = paths.end();
            for (auto p = paths.begin(); p != paths.end(); ++p)
                if (p->family == "U" && (match == paths.end() || std::abs(p->ray_parameter - xi) <
                                                                     std::abs(match->ray_parameter - xi)))
                    match = p;
            REQUIRE(match != paths.end());
            INFO("found ξ " << match->ray_parameter << ", dX/dξ " << match->distance_derivative);
            CHECK(std::abs(match->ray_parameter - xi) * std::abs(match->distance_derivative) < 1e-6);
            CHECK(std::abs(match->time_s - ref.time_s) < 0.01e-9);
            CHECK(match->turns.at(0).z_m == Approx(ref.turning_z).margin(1e-6));
            worst_time = std::max(worst_time, std::abs(match->time_s - ref.time_s));
        }
    }
    WARN("flat stretch: largest time difference from tanh_sinh " << worst_time * 1e9 << " ns");
}
