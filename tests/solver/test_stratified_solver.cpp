// StratifiedSolver (the RaySolver interface on the stratified quadrature) against the closed form
// of the exponential profile (physics notes §4, Gradshteyn & Ryzhik §2.26), and find_paths on it
// against find_paths on the closed form and on NumericSolver (an independent ODE integration, the
// Boost.Odeint reference of physics notes §3 and §7) for a table.
#include <catch2/catch.hpp>

#include <cmath>
#include <memory>

#include "core/constants.hpp"
#include "core/errors.hpp"
#include "paths/find_paths.hpp"
#include "model/table_profile.hpp"
#include "solver/closed_form_solver.hpp"
#include "solver/numeric_solver.hpp"
#include "solver/stratified_solver.hpp"
#include "support/test_profiles.hpp"

using namespace firnray;

TEST_CASE("StratifiedSolver legs, turning depths and legs to the turning point agree with the closed form "
          "(physics notes §4)",
          "[solver][stratified]") {
    auto model = test::model_with(std::make_shared<ExponentialProfile>(1.78, 1.35, 40.0));
    model->attenuation = std::make_shared<test::ConstantAttenuation>(900.0);
    const ClosedFormSolver closed(model);
    const StratifiedSolver stratified(model);
    CHECK(stratified.name() == "stratified");
    for (double xi : {0.0, 0.7, 1.3, 1.5, 1.7}) {
        for (auto [za, zb] : {std::pair{-300.0, -40.0}, std::pair{-1000.0, -60.0}, std::pair{-200.0, 0.0}}) {
            if (stratified.model().index->index(zb) <= xi) continue;
            const Segment ours = stratified.segment(xi, za, zb), ref = closed.segment(xi, za, zb);
            INFO("ξ " << xi << " from " << za << " to " << zb);
            CHECK(ours.distance_m == Approx(ref.distance_m).epsilon(1e-11).margin(1e-12));
            CHECK(ours.time_s == Approx(ref.time_s).epsilon(1e-12));
            CHECK(ours.attenuation_exponent == Approx(ref.attenuation_exponent).epsilon(1e-11));
            CHECK(ours.distance_derivative == Approx(ref.distance_derivative).epsilon(1e-9).margin(1e-12));
        }
        if (xi > 1.35) {
            const auto z_t = stratified.turning_z(xi, -900.0), ref_t = closed.turning_z(xi, -900.0);
            REQUIRE(z_t);
            CHECK(*z_t == Approx(*ref_t).margin(1e-9));
            const LegDistance ours = stratified.distance_to_turning(xi, -900.0), ref = closed.distance_to_turning(xi, -900.0);
            CHECK(ours.distance_m == Approx(ref.distance_m).epsilon(1e-10));
            CHECK(ours.derivative == Approx(ref.derivative).epsilon(1e-7));
            const Segment to_turn = stratified.segment(xi, -900.0, *z_t);
            CHECK(std::isnan(to_turn.distance_derivative));
        }
    }
    CHECK_THROWS_AS(stratified.segment(1.6, -300.0, -10.0), NumericalError);
    CHECK_THROWS_AS(stratified.segment(-0.1, -300.0, -10.0), DataInputError);
    CHECK_THROWS_AS(stratified.segment(0.5, -300.0, 5.0), DataInputError);
}

TEST_CASE("find_paths on StratifiedSolver agrees with find_paths on the closed form within 0.01 ns and "
          "0.01 degrees (physics notes §4)",
          "[solver][stratified]") {
    auto model = test::model_with(std::make_shared<ExponentialProfile>(1.78, 1.35, 40.0));
    const ClosedFormSolver closed(model);
    const StratifiedSolver stratified(model);
    for (auto [zs, zr, r] : {std::tuple{-10.0, -120.0, 150.0}, std::tuple{-200.0, -30.0, 600.0},
                             std::tuple{-60.0, -61.0, 30.0}}) {
        const auto ours = find_paths(stratified, {0.0, 0.0, zs}, {r, 0.0, zr});
        const auto ref = find_paths(closed, {0.0, 0.0, zs}, {r, 0.0, zr});
        INFO("pair " << zs << " to " << zr << " at " << r << " m");
        REQUIRE(ours.size() == ref.size());
        for (std::size_t i = 0; i < ours.size(); ++i) {
            CHECK(ours[i].kind == ref[i].kind);
            CHECK(std::abs(ours[i].time_s - ref[i].time_s) < 1e-11);
            CHECK(std::abs(ours[i].launch_zenith_rad - ref[i].launch_zenith_rad) < deg_to_rad(0.01));
        }
    }
}

TEST_CASE("find_paths on StratifiedSolver agrees with find_paths on NumericSolver (Boost.Odeint integration of "
          "the ray equations) on a 200-point table within 1 ps, turning points on knots included",
          "[solver][stratified]") {
    std::vector<double> depth, n;
    for (int i = 0; i < 200; ++i) {
        depth.push_back(i);
        n.push_back(1.78 - 0.43 * std::exp(-i / 37.0));
    }
    auto model = test::model_with(std::make_shared<TableProfile>(depth, n));
    const StratifiedSolver stratified(model);
    const NumericSolver numeric(model);
    for (auto [zs, zr, r] : {std::tuple{-76.25, -48.0, 200.0}, std::tuple{-5.0, -115.5, 440.0},
                             std::tuple{-52.5, -3.0, 380.0}, std::tuple{-150.0, -20.0, 300.0},
                             std::tuple{-30.0, -30.0, 120.0}}) {
        const auto ours = find_paths(stratified, {0.0, 0.0, zs}, {r, 0.0, zr});
        const auto ref = find_paths(numeric, {0.0, 0.0, zs}, {r, 0.0, zr});
        INFO("pair " << zs << " to " << zr << " at " << r << " m");
        REQUIRE(ours.size() == ref.size());
        for (std::size_t i = 0; i < ours.size(); ++i) {
            CHECK(ours[i].kind == ref[i].kind);
            CHECK(std::abs(ours[i].time_s - ref[i].time_s) < 1e-12);
            CHECK(std::abs(ours[i].launch_zenith_rad - ref[i].launch_zenith_rad) < deg_to_rad(1e-4));
        }
    }
}
