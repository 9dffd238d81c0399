// Numeric rays (the ray equations of docs/physics.md §2.1, Boost.Odeint at the default tolerances) against the
// closed form of the exponential profile (§4, antiderivatives from Gradshteyn & Ryzhik §2.26):
// the foundation's accuracy claim, < 1 mm and < 1 ps over 2 km paths.
#include <catch2/catch.hpp>

#include <cmath>
#include <memory>

#include "core/constants.hpp"
#include "model/model_file.hpp"
#include "solver/closed_form_solver.hpp"
#include "solver/numeric_solver.hpp"
#include "trace/ray_tracer.hpp"

using namespace firnray;

TEST_CASE("numeric rays agree with the closed form to < 1 mm and < 1 ps over 2 km paths (docs/physics.md §2 vs §3)",
          "[solver][numeric-vs-closed]") {
    const auto model = std::make_shared<const FirnModel>(default_model());
    const ClosedFormSolver closed(model);
    TraceOptions options;
    options.max_length_m = 2000.0;
    const RayTracer tracer(model, options);
    int rays = 0;
    for (double z0 : {-5.0, -60.0, -200.0})
        for (double zenith_deg : {100.0, 120.0, 140.0, 160.0, 175.0}) {  // downgoing: a direct leg of 2 km
            const RayTrace trace = tracer.trace({0.0, z0, deg_to_rad(zenith_deg)});
            const RayBranch& ray = trace.branches.front();
            REQUIRE(ray.end_reason == EndReason::max_length);
            REQUIRE(ray.events.empty());
            const double xi = model->index->index(z0) * std::sin(deg_to_rad(zenith_deg));
            const Segment exact = closed.segment(xi, z0, ray.end.z_m);
            INFO("z0 " << z0 << " zenith " << zenith_deg);
            CHECK(ray.end.length_m == Approx(2000.0).margin(1e-9));
            CHECK(std::abs(ray.end.x_m - exact.distance_m) < 1e-3);
            CHECK(std::abs(ray.end.time_s - exact.time_s) < 1e-12);
            CHECK(std::abs(ray.end.length_m - exact.length_m) < 1e-3);
            ++rays;
        }
    CHECK(rays == 15);
}

TEST_CASE("numeric segments agree with the closed form to < 1 mm and < 1 ps, turning legs included (docs/physics.md §2 vs §3)",
          "[solver][numeric-vs-closed]") {
    const auto model = std::make_shared<const FirnModel>(default_model());
    const ClosedFormSolver closed(model);
    const NumericSolver numeric(model);
    for (double z_deep : {-50.0, -300.0, -1500.0})
        for (double fraction : {0.0, 0.3, 0.7, 0.95, 0.999}) {
            const double xi = fraction * model->index->index(-10.0);
            const Segment a = closed.segment(xi, -10.0, z_deep), b = numeric.segment(xi, -10.0, z_deep);
            INFO("z_deep " << z_deep << " xi " << xi);
            CHECK(std::abs(a.distance_m - b.distance_m) < 1e-3);
            CHECK(std::abs(a.time_s - b.time_s) < 1e-12);
        }
    for (double xi : {1.36, 1.5, 1.7, 1.77}) {  // refracted: the leg up to the turning point
        const double top = *closed.turning_z(xi, -1000.0);
        const Segment a = closed.segment(xi, top, -1000.0);
        const Segment b = numeric.segment(xi, *numeric.turning_z(xi, -1000.0), -1000.0);
        INFO("xi " << xi);
        CHECK(std::abs(a.distance_m - b.distance_m) < 1e-3);
        CHECK(std::abs(a.time_s - b.time_s) < 1e-12);
    }
}
