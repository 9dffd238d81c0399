// Tests of NumericSolver (src/solver/numeric_solver.*) against tanh_sinh quadrature of the Snell
// integrals (Boost.Math, the reference library of docs/validation.md), the exponential turning depth
// of docs/physics.md §3 and the homogeneous-medium definitions.
#include <catch2/catch.hpp>

#include <cmath>
#include <memory>
#include <vector>

#include "core/constants.hpp"
#include "core/errors.hpp"
#include "solver/closed_form_solver.hpp"
#include "model/table_profile.hpp"
#include "solver/numeric_solver.hpp"
#include "support/snell_integrals.hpp"
#include "support/test_profiles.hpp"

using namespace firnray;
using firnray::test::model_with;

TEST_CASE("numeric segment(): distance, time, length and ∂distance/∂ξ agree with tanh_sinh quadrature of "
          "the Snell integrals (Boost.Math)",
          "[solver]") {
    const std::shared_ptr<const IndexProfile> profiles[] = {
        std::make_shared<ExponentialProfile>(1.78, 1.35, 40.0),
        std::make_shared<test::TwoStageProfile>(1.78, 1.30, 20.0, -15.0, 45.0)};
    struct Leg {
        double xi, z_a, z_b;
    };
    const Leg legs[] = {{0.0, -300.0, -20.0}, {0.5, -200.0, -1.0}, {1.2, -500.0, 0.0},
                        {1.4, -50.0, -600.0}, {1.7, -1000.0, -150.0}, {1.3, -30.0, -12.0}};
    for (const auto& profile : profiles) {
        auto model = model_with(profile);
        model->attenuation = std::make_shared<test::ConstantAttenuation>(900.0);
        const NumericSolver solver(model);
        for (const Leg& leg : legs) {
            const double low = std::min(leg.z_a, leg.z_b), high = std::max(leg.z_a, leg.z_b);
            if (profile->index(high) <= leg.xi) continue;
            const Segment s = solver.segment(leg.xi, leg.z_a, leg.z_b);
            const auto ref = test::snell_integrals(*profile, leg.xi, low, high, test::plain_gap(*profile, leg.xi), {-15.0});
            INFO(profile->kind() << " ξ " << leg.xi << " from " << leg.z_a << " to " << leg.z_b);
            CHECK(s.distance_m == Approx(ref.distance_m).margin(1e-6));
            CHECK(s.time_s == Approx(ref.optical_path_m / speed_of_light).margin(1e-15));
            CHECK(s.length_m == Approx(ref.length_m).margin(1e-6));
            CHECK(s.attenuation_exponent == Approx(ref.length_m / 900.0).margin(1e-9));
            CHECK(s.distance_derivative == Approx(ref.distance_derivative).epsilon(1e-6));
            // The leg is the same whichever way it is travelled.
            const Segment back = solver.segment(leg.xi, leg.z_b, leg.z_a);
            CHECK(back.distance_m == Approx(s.distance_m).margin(1e-6));
            CHECK(back.time_s == Approx(s.time_s).margin(1e-15));
        }
    }
}

TEST_CASE("numeric segment(): an end at the turning point agrees with tanh_sinh quadrature of the singular "
          "Snell integrals, and turning_z matches z_t = z0 ln((n_deep − ξ)/(n_deep − n_surface)) "
          "(docs/physics.md §3, Boost.Math)",
          "[solver]") {
    const double n_deep = 1.78, n_surface = 1.35, z0 = 40.0, b = n_deep - n_surface;
    auto profile = std::make_shared<ExponentialProfile>(n_deep, n_surface, z0);
    const NumericSolver solver(model_with(profile));
    for (double xi : {1.36, 1.45, 1.6, 1.75}) {
        const double u_t = (n_deep - xi) / b;
        const double z_t_expected = z0 * std::log(u_t);
        const double z_start = z_t_expected - 200.0;
        const auto z_t = solver.turning_z(xi, z_start);
        REQUIRE(z_t);
        INFO("ξ " << xi);
        CHECK(*z_t == Approx(z_t_expected).margin(1e-9));
        // n − ξ below the turning point, exact in the distance δ to it: B u_t (1 − e^{−δ/z0}).
        auto gap = [&](double, double below_top) { return -b * u_t * std::expm1(-below_top / z0); };
        const auto ref = test::snell_integrals(*profile, xi, z_start, *z_t, gap, {}, false);
        for (const Segment s : {solver.segment(xi, z_start, *z_t), solver.segment(xi, *z_t, z_start)}) {
            CHECK(s.distance_m == Approx(ref.distance_m).margin(1e-5));
            CHECK(s.time_s == Approx(ref.optical_path_m / speed_of_light).margin(1e-14));
            CHECK(s.length_m == Approx(ref.length_m).margin(1e-5));
            CHECK(std::isnan(s.distance_derivative));
        }
    }
}

TEST_CASE("numeric segment(): homogeneous medium gives straight legs (definition)", "[solver]") {
    const double n = 1.6;
    const NumericSolver solver(model_with(std::make_shared<ConstantProfile>(n)));
    for (double xi : {0.0, 0.4, 1.2, 1.59}) {
        const double dz = 250.0;
        const Segment s = solver.segment(xi, -300.0, -50.0);
        const double q = std::sqrt(n * n - xi * xi);
        const double d = dz * n / q;  // straight-line length
        INFO("ξ " << xi);
        CHECK(s.distance_m == Approx(dz * xi / q).margin(1e-7));
        CHECK(s.length_m == Approx(d).epsilon(1e-10));
        CHECK(s.time_s == Approx(n * d / speed_of_light).epsilon(1e-10));
        CHECK(s.distance_derivative == Approx(dz * n * n / (q * q * q)).epsilon(1e-8));
    }
    CHECK(solver.name() == "numeric");
    const Segment zero = solver.segment(1.0, -10.0, -10.0);
    CHECK(zero.distance_m == 0.0);
    CHECK(zero.time_s == 0.0);
}

TEST_CASE("numeric turning_z: first root of n = ξ above the start, also for profiles that are not monotone "
          "(analytic roots of a cosine)",
          "[solver]") {
    SECTION("exponential: none when ξ < n_surface, the start when ξ = n there") {
        auto profile = std::make_shared<ExponentialProfile>(1.78, 1.35, 40.0);
        const NumericSolver solver(model_with(profile));
        CHECK_FALSE(solver.turning_z(1.3, -100.0));
        CHECK_FALSE(solver.turning_z(1.0, 0.0));
        const double n_start = profile->index(-100.0);
        CHECK(*solver.turning_z(n_start, -100.0) == -100.0);
        CHECK(*solver.turning_z(1.35, -100.0) == Approx(0.0).margin(1e-9));
        CHECK_THROWS_AS(solver.turning_z(n_start + 1e-6, -100.0), NumericalError);
    }
    SECTION("n = 1.5 + 0.1 cos(z / 10 m), ξ = 1.55: roots at z = 10(±π/3 + 2πk); the first above −60 m is "
            "10(π/3 − 2π) although n(0) > ξ") {
        const NumericSolver solver(model_with(std::make_shared<test::WavyProfile>(1.5, 0.1, 10.0)));
        const auto z_t = solver.turning_z(1.55, -60.0);
        REQUIRE(z_t);
        CHECK(*z_t == Approx(10.0 * (pi / 3.0 - 2.0 * pi)).margin(1e-9));
    }
}

TEST_CASE("numeric segment(): a ray parameter above n on the leg is a NumericalError, ends above the surface "
          "are input errors",
          "[solver]") {
    auto profile = std::make_shared<ExponentialProfile>(1.78, 1.35, 40.0);
    const NumericSolver solver(model_with(profile));
    CHECK_THROWS_AS(solver.segment(1.5, -300.0, -5.0), NumericalError);  // n(−5) < 1.5
    CHECK_THROWS_AS(solver.segment(1.2, -300.0, 5.0), DataInputError);
    CHECK_THROWS_AS(solver.segment(-0.1, -300.0, -5.0), DataInputError);
    // Turns inside a non-monotone profile before reaching the far end.
    const NumericSolver wavy(model_with(std::make_shared<test::WavyProfile>(1.5, 0.1, 10.0)));
    CHECK_THROWS_WITH(wavy.segment(1.55, -60.0, -2.0), Catch::Contains("turns"));
}

TEST_CASE("numeric distance_to_turning: one integration with the variational equations gives the distance and the "
          "total d distance/dξ of the closed form (docs/physics.md §3), and matches the generic central differences "
          "on a profile without one",
          "[solver]") {
    auto model = model_with(std::make_shared<ExponentialProfile>(1.78, 1.35, 40.0));
    const NumericSolver numeric(model);
    const ClosedFormSolver closed(model);
    for (const double z_start : {-3.0, -40.0, -150.0, -600.0}) {
        const double n_start = model->index->index(z_start);
        for (const double fraction : {0.001, 0.2, 0.5, 0.9, 0.999}) {
            const double xi = 1.35 + fraction * (n_start - 1.35);
            const LegDistance a = closed.distance_to_turning(xi, z_start);
            const LegDistance b = numeric.distance_to_turning(xi, z_start);
            INFO("z_start " << z_start << ", ξ " << xi);
            CHECK(b.distance_m == Approx(a.distance_m).epsilon(1e-9));
            CHECK(b.derivative == Approx(a.derivative).epsilon(1e-6));
        }
    }
    // At ξ = n(z_start) the ray starts horizontal: distance 0 and a slope of −∞, as the generic answer.
    const LegDistance flat = numeric.distance_to_turning(model->index->index(-40.0), -40.0);
    CHECK(flat.distance_m == 0.0);
    CHECK(std::isinf(flat.derivative));
    CHECK(flat.derivative < 0.0);
    CHECK_THROWS_AS(numeric.distance_to_turning(1.3, -40.0), NumericalError);  // reaches the surface

    // On a table (a C² spline) and a two-stage profile (dn/dz jumps at the join, where the generic
    // differences are kept): the same as the generic central differences of the distances.
    class Generic final : public RaySolver {
    public:
        explicit Generic(std::shared_ptr<const FirnModel> m) : RaySolver(m), inner_(m) {}
        std::string name() const override { return "generic"; }
        Segment segment(double xi, double a, double b) const override { return inner_.segment(xi, a, b); }
        std::optional<double> turning_z(double xi, double z) const override { return inner_.turning_z(xi, z); }

    private:
        NumericSolver inner_;
    };
    std::vector<double> depth, n;
    for (double d = 0.0; d <= 200.0; d += d < 30.0 ? 3.0 : 10.0) {
        depth.push_back(d);
        n.push_back(1.78 - 0.43 * std::exp(-d / 37.0));
    }
    for (const auto& profile : {std::shared_ptr<const IndexProfile>(std::make_shared<TableProfile>(depth, n)),
                                std::shared_ptr<const IndexProfile>(
                                    std::make_shared<test::TwoStageProfile>(1.78, 1.33, 25.0, -15.0, 45.0))}) {
        auto other = model_with(profile);
        const NumericSolver fast(other);
        const Generic generic(other);
        for (const double xi : {1.4, 1.55, 1.7})
            for (const double z_start : {-80.0, -300.0}) {
                INFO(profile->kind() << ": ξ " << xi << ", z_start " << z_start);
                const LegDistance a = generic.distance_to_turning(xi, z_start);
                const LegDistance b = fast.distance_to_turning(xi, z_start);
                // Two integrations of the same leg with different states (with and without the
                // variational equations), so different steps: they agree to the tolerances.
                CHECK(b.distance_m == Approx(a.distance_m).epsilon(1e-9));
                CHECK(b.derivative == Approx(a.derivative).epsilon(1e-5));
            }
    }
}

TEST_CASE("numeric segment() on a table, integrated piece by piece between the knots, agrees with tanh_sinh "
          "quadrature of the Snell integrals split at the knots (Boost.Math)",
          "[solver]") {
    // A coarse, irregular table (knots 2 to 20 m apart) with noise on top of the exponential, so that
    // the spline's third derivative jumps noticeably at each knot.
    std::vector<double> depth, n;
    int k = 0;
    for (double d = 0.0; d <= 160.0; d += 2.0 + (k * 7) % 19, ++k) {
        depth.push_back(d);
        n.push_back(1.78 - 0.43 * std::exp(-d / 37.0) + 0.002 * ((k * 5) % 3 - 1) * std::exp(-d / 80.0));
    }
    auto profile = std::make_shared<TableProfile>(depth, n);
    std::vector<double> knots(profile->joins_z().rbegin(), profile->joins_z().rend());  // ascending, as the reference wants
    auto model = model_with(profile);
    model->attenuation = std::make_shared<test::ConstantAttenuation>(900.0);
    const NumericSolver solver(model);
    struct Leg {
        double xi, z_a, z_b;
    };
    for (const Leg& leg : {Leg{0.0, -150.0, -3.0}, Leg{0.9, -120.0, -1.0}, Leg{1.3, -400.0, 0.0}, Leg{1.5, -25.0, -300.0},
                           Leg{1.7, -250.0, -90.0}, Leg{1.75, -170.0, -141.0}}) {
        const double low = std::min(leg.z_a, leg.z_b), high = std::max(leg.z_a, leg.z_b);
        REQUIRE(profile->index(high) > leg.xi);
        const Segment s = solver.segment(leg.xi, leg.z_a, leg.z_b);
        const auto ref = test::snell_integrals(*profile, leg.xi, low, high, test::plain_gap(*profile, leg.xi), knots);
        INFO("ξ " << leg.xi << " from " << leg.z_a << " to " << leg.z_b);
        CHECK(s.distance_m == Approx(ref.distance_m).margin(1e-6));
        CHECK(s.time_s == Approx(ref.optical_path_m / speed_of_light).margin(1e-15));
        CHECK(s.length_m == Approx(ref.length_m).margin(1e-6));
        CHECK(s.attenuation_exponent == Approx(ref.length_m / 900.0).margin(1e-9));
        CHECK(s.distance_derivative == Approx(ref.distance_derivative).epsilon(1e-6));
        const Segment back = solver.segment(leg.xi, leg.z_b, leg.z_a);
        CHECK(back.distance_m == Approx(s.distance_m).margin(1e-6));
        CHECK(back.time_s == Approx(s.time_s).margin(1e-15));
    }
}
