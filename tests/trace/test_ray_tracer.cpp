// Tests of the numeric ray tracer (src/trace/ray_tracer.*, ray_system.hpp, ray_stepper.hpp)
// against outside references: definitions, Snell's law, the linear-velocity-gradient closed
// form of seismology, Fresnel coefficients and tanh_sinh quadrature of the Snell integrals.
#include <catch2/catch.hpp>

#include <cmath>
#include <memory>

#include "core/constants.hpp"
#include "core/errors.hpp"
#include "support/snell_integrals.hpp"
#include "support/test_profiles.hpp"
#include "trace/fresnel.hpp"
#include "trace/ray_tracer.hpp"

using namespace firnray;
using firnray::test::LinearVelocityProfile;
using firnray::test::model_with;

namespace {

std::shared_ptr<FirnModel> exponential_model() {
    return model_with(std::make_shared<ExponentialProfile>(1.78, 1.35, 40.0));
}

}  // namespace

TEST_CASE("tracer: homogeneous medium gives straight lines and T = n·d/c (definition)", "[trace]") {
    const double n = 1.78;
    auto model = model_with(std::make_shared<ConstantProfile>(n));
    TraceOptions options;
    options.max_distance_m = 500.0;
    RayTracer tracer(model, options);
    for (double zenith_deg : {95.0, 120.0, 150.0, 179.0}) {
        const RayLaunch launch{10.0, -100.0, deg_to_rad(zenith_deg)};
        FixedSpacingRecorder recorder(7.0);
        const RayTrace trace = tracer.trace(launch, recorder);
        REQUIRE(trace.branches.size() == 1);
        const RayBranch& b = trace.branches[0];
        CHECK(b.events.empty());
        const double sin0 = std::sin(launch.zenith_rad), cos0 = std::cos(launch.zenith_rad);
        REQUIRE(b.points.size() > 10);
        for (const RayPoint& p : b.points) {
            const double dx = p.x_m - launch.x_m, dz = p.z_m - launch.z_m;
            const double d = std::hypot(dx, dz);
            CHECK(std::abs(dx * cos0 - dz * sin0) < 1e-9);               // on the launch line
            CHECK(p.length_m == Approx(d).margin(1e-9));
            CHECK(p.time_s == Approx(n * d / speed_of_light).margin(1e-18));  // T = n d / c
        }
        if (zenith_deg < 179.0) {
            CHECK(b.end_reason == EndReason::max_distance);
            CHECK(b.end.x_m == Approx(launch.x_m + 500.0).margin(1e-12));
        } else {
            CHECK(b.end_reason == EndReason::max_length);
        }
    }
}

TEST_CASE("tracer: linear velocity gradient rays are circular arcs centred on v = 0 and "
          "T = arccosh(1 + g²d²/(2 v1 v2))/|g| within 1 ps over 2 km (Shearer, Introduction to Seismology, "
          "Červený, Seismic Ray Theory 2001)",
          "[trace]") {
    const double c = speed_of_light;
    const double v_surface = c / 1.35, g = (c / 1.35 - c / 1.78) / 2000.0;  // (m/s)/m, v grows upward
    auto profile = std::make_shared<LinearVelocityProfile>(v_surface, g);
    TraceOptions options;
    options.max_length_m = 2000.0;
    RayTracer tracer(model_with(profile), options);
    const double z_centre = -v_surface / g;  // the line v = 0
    for (double zenith_deg : {78.0, 85.0, 100.0, 130.0, 160.0, 178.0}) {
        const RayLaunch launch{0.0, -300.0, deg_to_rad(zenith_deg)};
        EveryStepRecorder recorder;
        const RayTrace trace = tracer.trace(launch, recorder);
        const RayBranch& b = trace.branches[0];
        CHECK(b.end_reason == EndReason::max_length);
        for (const RayEvent& e : b.events) CHECK(e.type == EventType::turning_point);
        const double xi = profile->index(launch.z_m) * std::sin(launch.zenith_rad);
        const double radius = c / (g * xi);  // 1 / (|g| p) with slowness p = ξ / c
        const double x_centre = launch.x_m + (launch.z_m - z_centre) * std::cos(launch.zenith_rad) /
                                                  std::sin(launch.zenith_rad);
        CHECK(std::hypot(launch.x_m - x_centre, launch.z_m - z_centre) == Approx(radius).epsilon(1e-12));
        REQUIRE(b.points.size() > 5);
        double worst_radius = 0.0, worst_time = 0.0;
        for (const RayPoint& p : b.points) {
            worst_radius = std::max(worst_radius, std::abs(std::hypot(p.x_m - x_centre, p.z_m - z_centre) - radius));
            const double d = std::hypot(p.x_m - launch.x_m, p.z_m - launch.z_m);
            if (d < 1.0) continue;  // arccosh(1 + ε) loses digits for tiny d
            const double v1 = profile->velocity(launch.z_m), v2 = profile->velocity(p.z_m);
            const double expected = std::acosh(1.0 + g * g * d * d / (2.0 * v1 * v2)) / g;
            worst_time = std::max(worst_time, std::abs(p.time_s - expected));
        }
        INFO("zenith " << zenith_deg << ": worst radius error " << worst_radius << " m, time " << worst_time << " s");
        CHECK(worst_radius < 1e-3);   // < 1 mm with the default tolerances
        CHECK(worst_time < 1e-12);    // < 1 ps
        CHECK(b.end.length_m == Approx(2000.0).margin(1e-9));
    }
}

TEST_CASE("tracer: Snell invariant n sin θ stays constant and |p| = n along numeric rays in exponential and "
          "layered models (Snell's law)",
          "[trace]") {
    const std::shared_ptr<const IndexProfile> profiles[] = {
        std::make_shared<ExponentialProfile>(1.78, 1.35, 40.0),
        std::make_shared<test::TwoStageProfile>(1.78, 1.30, 20.0, -15.0, 45.0)};
    for (const auto& profile : profiles) {
        TraceOptions options;
        options.max_distance_m = 1500.0;
        RayTracer tracer(model_with(profile), options);
        for (double zenith_deg : {10.0, 45.0, 70.0, 85.0, 95.0, 140.0}) {
            const RayLaunch launch{0.0, -120.0, deg_to_rad(zenith_deg)};
            const RayTrace trace = tracer.trace(launch);
            const RayBranch& b = trace.branches[0];
            const double xi = profile->index(launch.z_m) * std::sin(launch.zenith_rad);
            INFO(profile->kind() << " zenith " << zenith_deg);
            CHECK(b.ray_parameter == Approx(xi).epsilon(1e-15));
            // Measured: ~1e-9 for the exponential; the kink in dn/dz of the layered model costs more.
            const double allowed = profile->kind() == "layered" ? 1e-7 : 1e-8;
            CHECK(b.drift.ray_parameter_change < allowed);
            CHECK(b.drift.index_mismatch < allowed);
            for (const RayEvent& e : b.events) {
                // At each event the direction and the local index still satisfy n sin θ = ξ.
                const double n = profile->index(e.where.z_m);
                CHECK(n * std::sin(e.zenith_before_rad) == Approx(xi).margin(1e-9));
                if (e.type == EventType::turning_point) CHECK(n == Approx(xi).margin(1e-9));
            }
        }
    }
}

TEST_CASE("tracer: a downward ray agrees with tanh_sinh quadrature of the Snell integrals (Boost.Math)", "[trace]") {
    const std::shared_ptr<const IndexProfile> profiles[] = {
        std::make_shared<ExponentialProfile>(1.78, 1.35, 40.0),
        std::make_shared<test::TwoStageProfile>(1.78, 1.30, 20.0, -15.0, 45.0)};
    for (const auto& profile : profiles) {
        TraceOptions options;
        options.floor_z_m = -800.0;
        RayTracer tracer(model_with(profile), options);
        for (double zenith_deg : {100.0, 135.0, 170.0}) {
            const RayLaunch launch{0.0, -5.0, deg_to_rad(zenith_deg)};
            const RayBranch b = tracer.trace(launch).branches[0];
            REQUIRE(b.end_reason == EndReason::floor);
            const double xi = profile->index(launch.z_m) * std::sin(launch.zenith_rad);
            const auto ref = test::snell_integrals(*profile, xi, -800.0, -5.0, test::plain_gap(*profile, xi), {-15.0}, false);
            INFO(profile->kind() << " zenith " << zenith_deg);
            CHECK(b.end.x_m == Approx(ref.distance_m).margin(1e-4));
            CHECK(b.end.time_s == Approx(ref.optical_path_m / speed_of_light).margin(1e-12));
            CHECK(b.end.length_m == Approx(ref.length_m).margin(1e-4));
        }
    }
}

TEST_CASE("tracer: at the surface from below the branches carry the Fresnel coefficients and the air ray obeys "
          "n_ice sin θ = n_air sin θ_air (Hecht, Optics, Snell's law)",
          "[trace]") {
    auto model = exponential_model();
    TraceOptions options;
    options.max_distance_m = 300.0;
    options.ceiling_z_m = 50.0;
    RayTracer tracer(model, options);
    const double n_s = 1.35, n_air = 1.0;

    SECTION("partial reflection: ξ < n_air transmits a branch into the air") {
        const RayTrace trace = tracer.trace({0.0, -40.0, deg_to_rad(20.0)});
        REQUIRE(trace.branches.size() == 2);
        const RayBranch& ice = trace.branches[0];
        const RayBranch& air = trace.branches[1];
        REQUIRE(ice.events.size() == 1);
        const RayEvent& e = ice.events[0];
        CHECK(e.type == EventType::surface_reflection_in_ice);
        CHECK(e.where.z_m == 0.0);
        CHECK(n_s * std::sin(e.zenith_before_rad) == Approx(ice.ray_parameter).epsilon(1e-9));
        CHECK(e.zenith_after_rad == Approx(pi - e.zenith_before_rad).epsilon(1e-12));
        const FresnelCoefficients f = fresnel(n_s, n_air, std::cos(e.zenith_before_rad));
        CHECK(std::abs(e.factor_s - f.r_s) < 1e-9);
        CHECK(std::abs(e.factor_p - f.r_p) < 1e-9);
        CHECK(std::abs(ice.amplitude_s - f.r_s) < 1e-9);
        CHECK(e.child_branch == 1);

        CHECK(air.kind == BranchKind::air_transmitted);
        CHECK(air.parent == 0);
        CHECK(n_s * std::sin(e.zenith_before_rad) == Approx(n_air * std::sin(air.start_zenith_rad)).epsilon(1e-12));
        CHECK(std::abs(air.amplitude_s - f.t_s) < 1e-9);
        CHECK(std::abs(air.amplitude_p - f.t_p) < 1e-9);
        CHECK(air.end_reason == EndReason::ceiling);
        CHECK(air.end.z_m == 50.0);
        // Straight line in the air: time grows as n_air · length / c.
        CHECK(air.end.time_s - air.start.time_s ==
              Approx(n_air * (air.end.length_m - air.start.length_m) / speed_of_light).epsilon(1e-12));
        CHECK((air.end.x_m - air.start.x_m) / (air.end.z_m - air.start.z_m) ==
              Approx(std::tan(air.start_zenith_rad)).epsilon(1e-12));
        // The reflected ray goes back down and reaches the distance limit.
        CHECK(ice.end_reason == EndReason::max_distance);
        CHECK(ice.end.z_m < 0.0);
    }

    SECTION("total reflection: 1 < ξ < n_surface, |r| = 1 and no transmitted branch") {
        const RayTrace trace = tracer.trace({0.0, -10.0, deg_to_rad(60.0)});
        REQUIRE(trace.branches.size() == 1);
        const RayBranch& ice = trace.branches[0];
        REQUIRE(ice.ray_parameter > 1.0);
        REQUIRE(ice.events.size() == 1);
        const RayEvent& e = ice.events[0];
        CHECK(e.type == EventType::surface_reflection_in_ice);
        CHECK(std::abs(e.factor_s) == Approx(1.0).epsilon(1e-12));
        CHECK(std::abs(e.factor_p) == Approx(1.0).epsilon(1e-12));
        const FresnelCoefficients f = fresnel(n_s, n_air, std::cos(e.zenith_before_rad));
        CHECK(std::abs(e.factor_s - f.r_s) < 1e-9);
        CHECK(std::abs(e.factor_p - f.r_p) < 1e-9);
        CHECK(e.child_branch == -1);
    }
}

TEST_CASE("tracer: a ray from the air enters the ice with Fresnel t and Snell's law, and its reflection "
          "goes back up (Hecht, Optics)",
          "[trace]") {
    auto model = exponential_model();
    TraceOptions options;
    options.max_distance_m = 200.0;
    options.ceiling_z_m = 30.0;
    RayTracer tracer(model, options);
    const RayLaunch launch{0.0, 20.0, deg_to_rad(140.0)};
    FixedSpacingRecorder recorder(2.0);
    const RayTrace trace = tracer.trace(launch, recorder);
    REQUIRE(trace.branches.size() == 2);
    const RayBranch& air = trace.branches[0];
    const RayBranch& ice = trace.branches[1];
    CHECK(air.kind == BranchKind::air);
    REQUIRE(air.events.size() == 1);
    const RayEvent& e = air.events[0];
    CHECK(e.type == EventType::surface_reflection_in_air);
    CHECK(e.where.x_m == Approx(20.0 * std::tan(deg_to_rad(40.0))).epsilon(1e-12));
    CHECK(e.where.time_s == Approx(20.0 / std::cos(deg_to_rad(40.0)) / speed_of_light).epsilon(1e-12));
    const FresnelCoefficients f = fresnel(1.0, 1.35, std::cos(deg_to_rad(40.0)));
    CHECK(std::abs(e.factor_s - f.r_s) < 1e-12);
    CHECK(std::abs(ice.amplitude_s - f.t_s) < 1e-12);
    CHECK(std::abs(ice.amplitude_p - f.t_p) < 1e-12);
    CHECK(e.zenith_after_rad == Approx(deg_to_rad(40.0)).epsilon(1e-12));
    CHECK(air.end_reason == EndReason::ceiling);

    CHECK(ice.kind == BranchKind::ice_transmitted);
    CHECK(ice.parent == 0);
    CHECK(1.35 * std::sin(ice.start_zenith_rad) == Approx(1.0 * std::sin(launch.zenith_rad)).epsilon(1e-12));
    CHECK(ice.ray_parameter == Approx(std::sin(launch.zenith_rad)).epsilon(1e-12));
    CHECK(ice.end_reason == EndReason::max_distance);
    CHECK(ice.end.x_m == Approx(200.0).margin(1e-12));
    CHECK(ice.points.front().length_m == Approx(e.where.length_m));
    for (std::size_t i = 1; i < ice.points.size(); ++i) CHECK(ice.points[i].z_m < 0.0);
}

TEST_CASE("tracer: bottom reflection with field factor sqrt(R), then the surface, events in the order met "
          "(Fresnel: Hecht, Optics)",
          "[trace]") {
    auto model = exponential_model();
    model->bottom = Bottom{-300.0, 0.49};
    TraceOptions options;
    options.max_distance_m = 2000.0;
    options.ceiling_z_m = 10.0;
    RayTracer tracer(model, options);
    const RayTrace trace = tracer.trace({0.0, -50.0, deg_to_rad(165.0)});
    const RayBranch& ice = trace.branches[0];
    REQUIRE(ice.events.size() >= 3);
    CHECK(ice.events[0].type == EventType::bottom_reflection);
    CHECK(ice.events[0].where.z_m == -300.0);
    CHECK(std::abs(ice.events[0].factor_s - 0.7) < 1e-15);
    CHECK(ice.events[0].zenith_after_rad == Approx(pi - ice.events[0].zenith_before_rad).epsilon(1e-12));
    CHECK(ice.events[1].type == EventType::surface_reflection_in_ice);
    CHECK(ice.events[2].type == EventType::bottom_reflection);
    for (std::size_t i = 1; i < ice.events.size(); ++i)
        CHECK(ice.events[i].where.length_m > ice.events[i - 1].where.length_m);
    // The transmitted branch at the first surface hit inherits the bottom factor times t.
    const RayEvent& surface = ice.events[1];
    REQUIRE(surface.child_branch > 0);
    const RayBranch& air = trace.branches[static_cast<std::size_t>(surface.child_branch)];
    const FresnelCoefficients f = fresnel(1.35, 1.0, std::cos(surface.zenith_before_rad));
    CHECK(std::abs(air.amplitude_s - 0.7 * f.t_s) < 1e-9);
    // Straight down and back up at zenith 165°: the geometry repeats with period 2 legs.
    CHECK(ice.events[2].where.x_m - ice.events[0].where.x_m ==
          Approx(2.0 * (surface.where.x_m - ice.events[0].where.x_m)).epsilon(1e-9));
}

TEST_CASE("tracer: limits on surface interactions and branches end a bouncing ray (definition)", "[trace]") {
    auto model = exponential_model();
    model->bottom = Bottom{-100.0, 1.0};
    TraceOptions options;
    options.max_distance_m = 1e5;
    options.max_length_m = 1e5;
    options.ceiling_z_m = 5.0;
    options.max_surface_interactions = 3;
    options.max_branches = 2;
    RayTracer tracer(model, options);
    const RayTrace trace = tracer.trace({0.0, -50.0, deg_to_rad(170.0)});
    CHECK(trace.truncated);
    CHECK(trace.branches.size() == 2);
    const RayBranch& ice = trace.branches[0];
    CHECK(ice.end_reason == EndReason::interaction_limit);
    int surface_events = 0;
    for (const RayEvent& e : ice.events) surface_events += e.type == EventType::surface_reflection_in_ice;
    CHECK(surface_events == 3);
}

TEST_CASE("tracer: recorders choose the points, not the integration (style: observer choice)", "[trace]") {
    auto model = exponential_model();
    TraceOptions options;
    options.max_distance_m = 800.0;
    RayTracer tracer(model, options);
    const RayLaunch launch{0.0, -150.0, deg_to_rad(80.0)};
    EveryStepRecorder every;
    FixedSpacingRecorder spaced(5.0);
    EndpointRecorder ends;
    const RayBranch a = tracer.trace(launch, every).branches[0];
    const RayBranch b = tracer.trace(launch, spaced).branches[0];
    const RayBranch c = tracer.trace(launch, ends).branches[0];
    // Same ray whatever is recorded.
    CHECK(a.end.x_m == b.end.x_m);
    CHECK(a.end.z_m == c.end.z_m);
    CHECK(a.steps == c.steps);
    // Start, one point per step, and one more where a turning point splits a step.
    std::size_t turns = 0;
    for (const RayEvent& e : a.events) turns += e.type == EventType::turning_point;
    CHECK(turns == 1);
    CHECK(a.points.size() == 1 + a.steps + turns);
    REQUIRE(c.points.size() == 2 + c.events.size());
    CHECK(c.points.front().length_m == 0.0);
    CHECK(c.points.back().x_m == Approx(800.0));
    // Spacing: consecutive samples 5 m apart except at the events and the end.
    int regular = 0;
    for (std::size_t i = 1; i < b.points.size(); ++i) {
        const double ds = b.points[i].length_m - b.points[i - 1].length_m;
        CHECK(ds <= 5.0 + 1e-9);
        CHECK(ds > 0.0);
        if (std::abs(ds - 5.0) < 1e-6) ++regular;
        // The chord is never longer than the arc.
        CHECK(std::hypot(b.points[i].x_m - b.points[i - 1].x_m, b.points[i].z_m - b.points[i - 1].z_m) <= ds + 1e-9);
    }
    CHECK(regular >= static_cast<int>(b.points.size()) - 4);
}

TEST_CASE("tracer: attenuation exponent is ∫ ds / L (definition)", "[trace]") {
    auto model = exponential_model();
    model->attenuation = std::make_shared<test::ConstantAttenuation>(800.0);
    TraceOptions options;
    options.max_length_m = 1200.0;
    RayTracer tracer(model, options);
    const RayBranch b = tracer.trace({0.0, -100.0, deg_to_rad(120.0)}).branches[0];
    CHECK(b.attenuation_exponent == Approx(1200.0 / 800.0).epsilon(1e-9));
}

TEST_CASE("tracer: bad launches and options are input errors naming what is wrong", "[trace]") {
    auto model = exponential_model();
    model->bottom = Bottom{-100.0, 1.0};
    RayTracer tracer(model);
    CHECK_THROWS_AS(tracer.trace({0.0, -200.0, 1.0}), DataInputError);
    CHECK_THROWS_AS(tracer.trace({std::nan(""), -20.0, 1.0}), DataInputError);
    TraceOptions bad;
    bad.max_length_m = std::numeric_limits<double>::infinity();
    CHECK_THROWS_WITH(RayTracer(model, bad), Catch::Contains("max_length_m"));
    bad = TraceOptions{};
    bad.tolerances.relative = 0.0;
    CHECK_THROWS_WITH(RayTracer(model, bad), Catch::Contains("tolerances.relative"));
    CHECK_THROWS_AS(FixedSpacingRecorder(0.0), DataInputError);
}

TEST_CASE("tracer: a start on the surface is in the air only when heading up (definition of the conventions)",
          "[trace]") {
    TraceOptions options;
    options.max_distance_m = 100.0;
    options.ceiling_z_m = 20.0;
    RayTracer tracer(exponential_model(), options);
    CHECK(tracer.trace({0.0, 0.0, deg_to_rad(90.0)}).branches[0].kind == BranchKind::ice);
    CHECK(tracer.trace({0.0, 0.0, deg_to_rad(120.0)}).branches[0].kind == BranchKind::ice);
    const RayTrace up = tracer.trace({0.0, 0.0, deg_to_rad(45.0)});
    CHECK(up.branches[0].kind == BranchKind::air);
    CHECK(up.branches[0].end.x_m == Approx(20.0));  // straight line at 45°
    // Toward −x for negative zenith angles.
    const RayTrace left = tracer.trace({0.0, -30.0, deg_to_rad(-120.0)});
    CHECK(left.branches[0].end.x_m == Approx(-100.0));
    CHECK(left.branches[0].end_reason == EndReason::max_distance);
}
