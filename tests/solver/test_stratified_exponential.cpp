// The stratified core on the exponential profile against its closed form (physics notes §4,
// docs/physics.md §3: ClosedFormSolver, integral tables of Gradshteyn & Ryzhik §2.26), against
// find_paths on that closed form (an independent path finder), and, for deep pairs where n equals
// n_deep to double precision, against straight lines in a homogeneous medium (definition).
#include <catch2/catch.hpp>

#include <cmath>
#include <memory>
#include <vector>

#include "core/constants.hpp"
#include <boost/math/quadrature/tanh_sinh.hpp>

#include "paths/find_paths.hpp"
#include "solver/closed_form_solver.hpp"
#include "solver/path_families.hpp"
#include "support/test_profiles.hpp"

using namespace firnray;

namespace {

constexpr double n_deep = 1.78, n_surface = 1.35, scale_depth = 37.0;

std::shared_ptr<const ExponentialProfile> firn() {
    return std::make_shared<ExponentialProfile>(n_deep, n_surface, scale_depth);
}

}  // namespace

TEST_CASE("stratified legs on the exponential profile agree with its closed form (physics notes §4, "
          "Gradshteyn & Ryzhik §2.26), near the surface, deep near n_deep and to turning points",
          "[solver][stratified]") {
    const auto profile = firn();
    const StratifiedProfile stratified(profile);
    const ClosedFormSolver closed(test::model_with(profile));
    struct Leg {
        double xi, z_a, z_b;
    };
    const Leg legs[] = {{0.0, -300.0, -20.0},  {0.5, -200.0, -1.0},     {1.2, -500.0, 0.0},
                        {1.34, -3.0, 0.0},     {1.349, -10.0, -1e-3},   {1.4, -50.0, -600.0},
                        {1.7, -1000.0, -150.0}, {1.77, -1500.0, -3000.0}, {1.7799, -1500.0, -3000.0},
                        {1.6, -1500.0, -1500.0 + 1e-6}, {1.5, -40.0, -40.0 - 1e-9}};
    double worst_time = 0.0, worst_distance = 0.0;
    for (const Leg& leg : legs) {
        const auto ours = leg_integrals(stratified, RayLevel::plain(leg.xi), {leg.z_a}, {leg.z_b});
        const Segment ref = closed.segment(leg.xi, leg.z_a, leg.z_b);
        INFO("ξ " << leg.xi << " from " << leg.z_a << " to " << leg.z_b);
        CHECK(ours.distance_m == Approx(ref.distance_m).epsilon(1e-11).margin(1e-12));
        CHECK(ours.optical_path_m / speed_of_light == Approx(ref.time_s).epsilon(1e-12).margin(1e-21));
        CHECK(ours.length_m == Approx(ref.length_m).epsilon(1e-11).margin(1e-12));
        CHECK(ours.distance_derivative == Approx(ref.distance_derivative).epsilon(1e-9).margin(1e-12));
        worst_time = std::max(worst_time, std::abs(ours.optical_path_m / speed_of_light - ref.time_s));
        worst_distance = std::max(worst_distance, std::abs(ours.distance_m - ref.distance_m));
    }
    for (double xi : {1.351, 1.4, 1.6, 1.75, 1.779}) {
        for (double z_start : {-100.0, -400.0, -900.0}) {
            if (profile->index(z_start) <= xi) continue;
            const auto interval = stratified.interval_around(xi, z_start);
            REQUIRE(interval);
            REQUIRE(interval->upper_kind == UpperEndKind::turning);
            const double z_t = *closed.turning_z(xi, z_start);
            INFO("ξ " << xi << " from " << z_start);
            CHECK(interval->upper_z == Approx(z_t).margin(1e-9 * std::max(1.0, std::abs(z_t))));
            CHECK(interval->lower_kind == LowerEndKind::unbounded);
            const auto ours = leg_integrals(stratified, RayLevel::plain(xi), {z_start}, {interval->upper_z, LegEnd::turning});
            const Segment ref = closed.segment(xi, z_start, z_t);
            const LegDistance ref_total = closed.distance_to_turning(xi, z_start);
            CHECK(ours.distance_m == Approx(ref.distance_m).epsilon(1e-10));
            CHECK(ours.optical_path_m / speed_of_light == Approx(ref.time_s).epsilon(1e-12));
            CHECK(ours.distance_derivative == Approx(ref_total.derivative).epsilon(1e-7));
            worst_time = std::max(worst_time, std::abs(ours.optical_path_m / speed_of_light - ref.time_s));
            worst_distance = std::max(worst_distance, std::abs(ours.distance_m - ref.distance_m));
        }
    }
    WARN("exponential legs: largest difference from the closed form " << worst_distance << " m, "
                                                                     << worst_time * 1e9 << " ns");
}

TEST_CASE("stratified paths on the exponential profile agree with find_paths on the closed form within "
          "0.01 ns and 0.01 degrees (physics notes §4), near the surface, at equal depths and tiny separations",
          "[solver][stratified]") {
    const auto profile = firn();
    const StratifiedProfile stratified(profile);
    const ClosedFormSolver closed(test::model_with(profile));
    struct Pair {
        double zs, zr, distance;
    };
    const Pair pairs[] = {{-1.0, -2.0, 10.0},   {-0.5, -30.0, 100.0}, {0.0, -50.0, 200.0}, {-20.0, -200.0, 300.0},
                          {-100.0, -100.0, 500.0}, {-60.0, -60.0, 40.0}, {-50.0, -50.000001, 1e-3},
                          {-10.0, -100.0, 0.0}, {-300.0, -20.0, 800.0}, {-150.0, -149.0, 2.0}};
    double worst_time = 0.0, worst_angle = 0.0;
    for (const Pair& pair : pairs) {
        PathOptions reference_options;
        reference_options.max_bounces = 1;
        const auto reference = find_paths(closed, {0.0, 0.0, pair.zs}, {pair.distance, 0.0, pair.zr}, reference_options);
        const auto ours = find_stratified_paths(stratified, pair.zs, pair.zr, pair.distance);
        INFO("pair " << pair.zs << " to " << pair.zr << " at " << pair.distance << " m");
        REQUIRE(ours.size() == reference.size());
        for (std::size_t i = 0; i < ours.size(); ++i) {
            INFO("path " << i << " " << ours[i].family << " ξ " << ours[i].ray_parameter << " vs " << reference[i].ray_parameter);
            CHECK(std::string(to_string(ours[i].kind)) == std::string(to_string(reference[i].kind)));
            CHECK(std::abs(ours[i].time_s - reference[i].time_s) < 1e-11);
            CHECK(std::abs(ours[i].launch_zenith_rad - reference[i].launch_zenith_rad) < deg_to_rad(0.01));
            CHECK(std::abs(ours[i].arrival_zenith_rad - reference[i].arrival_zenith_rad) < deg_to_rad(0.01));
            worst_time = std::max(worst_time, std::abs(ours[i].time_s - reference[i].time_s));
            worst_angle = std::max({worst_angle, std::abs(ours[i].launch_zenith_rad - reference[i].launch_zenith_rad),
                                    std::abs(ours[i].arrival_zenith_rad - reference[i].arrival_zenith_rad)});
        }
    }
    WARN("exponential pairs: largest difference from find_paths on the closed form " << worst_time * 1e9 << " ns, "
                                                                                     << rad_to_deg(worst_angle) << " deg");
}

TEST_CASE("stratified paths between deep ends (1.5 to 3 km), where n equals n_deep to double precision, are "
          "straight lines with T = n d / c, and horizontal at equal depths (definition)",
          "[solver][stratified]") {
    const auto profile = firn();
    const StratifiedProfile stratified(profile);
    struct Pair {
        double zs, zr, distance;
    };
    const Pair pairs[] = {{-1500.0, -3000.0, 1000.0}, {-2000.0, -2500.0, 300.0}, {-2000.0, -2000.0, 1000.0},
                          {-1800.0, -1800.0, 5.0}, {-2500.0, -2500.001, 0.5}, {-1600.0, -2900.0, 0.0}};
    double worst_time = 0.0, worst_angle = 0.0;
    for (const Pair& pair : pairs) {
        const auto paths = find_stratified_paths(stratified, pair.zs, pair.zr, pair.distance);
        INFO("pair " << pair.zs << " to " << pair.zr << " at " << pair.distance << " m");
        REQUIRE_FALSE(paths.empty());
        const auto& first = paths.front();
        const double rise = pair.zr - pair.zs, d = std::hypot(pair.distance, rise);
        CHECK(std::abs(first.time_s - n_deep * d / speed_of_light) < 1e-11);
        const double zenith = std::atan2(pair.distance, rise);
        CHECK(std::abs(first.launch_zenith_rad - zenith) < deg_to_rad(0.01));
        CHECK(std::abs(first.arrival_zenith_rad - zenith) < deg_to_rad(0.01));
        CHECK(first.length_m == Approx(d).epsilon(1e-9));
        worst_time = std::max(worst_time, std::abs(first.time_s - n_deep * d / speed_of_light));
        worst_angle = std::max({worst_angle, std::abs(first.launch_zenith_rad - zenith), std::abs(first.arrival_zenith_rad - zenith)});
        for (const auto& path : paths) {
            CHECK(path.time_s >= first.time_s);
            CHECK(path.length_m < 1e7);  // never an absurd length
        }
    }
    WARN("deep pairs: largest difference from straight lines " << worst_time * 1e9 << " ns, " << rad_to_deg(worst_angle)
                                                                << " deg");
}

namespace {
// L(z) = 900 m + 0.5·z (shorter deeper, as in warmer ice): made up for the test.
class SlopedAttenuation final : public AttenuationProfile {
public:
    double length_m(double z) const override { return 900.0 + 0.5 * z; }
    std::string describe() const override { return "test: sloped"; }
};
}  // namespace

TEST_CASE("stratified attenuation exponent: s/L for a uniform length, and ∫ n/(Q L) dz against tanh_sinh "
          "quadrature (Boost.Math) for a depth-dependent one",
          "[solver][stratified]") {
    const auto profile = firn();
    const StratifiedProfile stratified(profile);
    const test::ConstantAttenuation uniform(700.0);
    const SlopedAttenuation sloped;
    boost::math::quadrature::tanh_sinh<double> quadrature;
    for (double xi : {0.3, 1.2, 1.55}) {
        const auto leg = leg_integrals(stratified, RayLevel::plain(xi), {-400.0}, {-30.0}, true, true, &uniform);
        CHECK(leg.attenuation_exponent == Approx(leg.length_m / 700.0).epsilon(1e-14));
        const auto ours = leg_integrals(stratified, RayLevel::plain(xi), {-400.0}, {-30.0}, true, true, &sloped);
        const double ref = quadrature.integrate(
            [&](double z) {
                const double n = profile->index(z);
                return n / (std::sqrt((n - xi) * (n + xi)) * sloped.length_m(z));
            },
            -400.0, -30.0, 1e-14);
        INFO("ξ " << xi);
        CHECK(ours.attenuation_exponent == Approx(ref).epsilon(1e-11));
    }
    StratifiedPathOptions options;
    options.attenuation = std::make_shared<test::ConstantAttenuation>(700.0);
    for (const auto& path : find_stratified_paths(stratified, -20.0, -150.0, 200.0, options))
        CHECK(path.attenuation_exponent == Approx(path.length_m / 700.0).epsilon(1e-12));
}
