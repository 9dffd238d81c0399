// The one integration driver (src/trace/ray_integration.hpp) with observers of the test's own:
// what is recorded is the observer's choice, reflections restart the ray, and a failing
// root finder or a non-finite state comes out as NumericalError.
#include <catch2/catch.hpp>

#include <array>
#include <cmath>
#include <memory>
#include <span>
#include <stdexcept>

#include "core/constants.hpp"
#include "core/errors.hpp"
#include "support/test_profiles.hpp"
#include "trace/bracketed_root.hpp"
#include "trace/ray_integration.hpp"

using namespace firnray;
using firnray::test::model_with;

namespace {

// Records nothing but where the ray meets a floor at z_floor, reflecting off a ceiling at z = 0
// on the way (an observer that keeps only an end point and counts events).
struct FloorObserver {
    double z_floor;
    std::array<LevelCrossing, 2> events{LevelCrossing{ray_state::z, 0.0, +1}, LevelCrossing{ray_state::z, 0.0, -1}};
    RayState end{};
    int reflections = 0, steps_seen = 0;

    std::span<const LevelCrossing> crossings(const IntegratedRay<RayState>& ray) {
        events[0].level = -ray.origin();
        events[1].level = z_floor - ray.origin();
        return events;
    }
    bool on_step(IntegratedRay<RayState>&, double, const RayState&) {
        ++steps_seen;
        return true;
    }
    AfterEvent on_event(IntegratedRay<RayState>&, std::size_t which, double, double, RayState& y) {
        if (which == 0) {
            ++reflections;
            y[ray_state::pz] = -y[ray_state::pz];
            return AfterEvent{AfterEvent::Action::reflect};
        }
        end = y;
        return AfterEvent{AfterEvent::Action::stop};
    }
};

RayState launch(double n, double z, double zenith_rad) {
    RayState y{};
    y[ray_state::z] = z;
    y[ray_state::px] = n * std::sin(zenith_rad);
    y[ray_state::pz] = n * std::cos(zenith_rad);
    return y;
}

}  // namespace

TEST_CASE("integration driver: an end-point observer in a homogeneous medium sees a straight line with T = n·d/c "
          "(definition)",
          "[trace][driver]") {
    const double n = 1.5;
    auto model = model_with(std::make_shared<ConstantProfile>(n));
    for (const BetweenSteps between :
         {BetweenSteps::monitored, BetweenSteps::projected, BetweenSteps::projected_and_rebased}) {
        IntegratedRay<RayState> ray(*model, IntegrationTolerances{}, launch(n, -100.0, deg_to_rad(120.0)), between);
        FloorObserver observer{-200.0};
        integrate_ray(ray, observer);
        const double length = 200.0;  // 100 m down at 60° from the vertical
        CHECK(ray.height(observer.end) == Approx(-200.0).margin(1e-9));
        CHECK(ray.distance_to(observer.end) == Approx(length * std::sin(deg_to_rad(120.0))).epsilon(1e-10));
        CHECK(ray.length_to(observer.end) == Approx(length).epsilon(1e-10));
        CHECK(ray.optical_path_to(observer.end) == Approx(n * length).epsilon(1e-10));
        CHECK(observer.reflections == 0);
        CHECK(ray.drift().index_mismatch < 1e-12);
    }
}

TEST_CASE("integration driver: a reflection restarts the ray from the mirrored state, image source at z = +100 m "
          "(law of reflection, definition)",
          "[trace][driver]") {
    const double n = 1.5;
    auto model = model_with(std::make_shared<ConstantProfile>(n));
    IntegratedRay<RayState> ray(*model, IntegrationTolerances{}, launch(n, -100.0, deg_to_rad(30.0)),
                                BetweenSteps::monitored);
    FloorObserver observer{-300.0};
    integrate_ray(ray, observer);
    // Up 100 m to the ceiling, then down 300 m: 400 m of height at 30° from the vertical.
    const double length = 400.0 / std::cos(deg_to_rad(30.0));
    CHECK(observer.reflections == 1);
    CHECK(ray.length_to(observer.end) == Approx(length).epsilon(1e-10));
    CHECK(ray.distance_to(observer.end) == Approx(400.0 * std::tan(deg_to_rad(30.0))).epsilon(1e-10));
    CHECK(ray.steps() >= 2u);
}

TEST_CASE("integration driver: Boost.Math errors of root finding come out as NumericalError (library contract)",
          "[trace][driver]") {
    auto same_sign = [](double v) { return v * v + 1.0; };
    CHECK_THROWS_AS(toms748_root("a root that is not bracketed", same_sign, 0.0, 1.0, 1.0, 2.0, 50, 100),
                    NumericalError);
    auto typed = [](double) -> double { throw DataInputError("refused"); };
    CHECK_THROWS_AS(toms748_root("a function that refuses", typed, 0.0, 1.0, -1.0, 1.0, 50, 100), DataInputError);
    auto foreign = [](double) -> double { throw std::domain_error("not ours"); };
    CHECK_THROWS_AS(brent_minimum("a function that throws", foreign, 0.0, 1.0, 40), NumericalError);
}
