#include <cmath>

#include <catch2/catch.hpp>

#include "core/errors.hpp"
#include "model/layered_profile.hpp"
#include "profile_checks.hpp"

using namespace firnray;
using firnray::test::check_smooth_at;

namespace {

// The exponential formula of docs/physics.md §1 for one stage, in depth d below its top d0.
double stage(double n_deep, double n_top, double scale, double d0, double d) {
    return n_deep - (n_deep - n_top) * std::exp(-(d - d0) / scale);
}

std::string key_of(const ModelInputError& e) { return e.where().key; }

}  // namespace

TEST_CASE("a one-layer profile is the exponential profile of docs/physics.md §1", "[model][layered]") {
    LayeredProfile layered(1.35, {ExponentialLayer{INFINITY, 1.78, 37.0}});
    ExponentialProfile exponential(1.78, 1.35, 37.0);
    for (double z = 0.0; z >= -500.0; z -= 3.7) {
        CHECK(layered.index(z) == Approx(exponential.index(z)).epsilon(1e-15));
        CHECK(layered.gradient(z) == Approx(exponential.gradient(z)).epsilon(1e-13));
    }
    CHECK(layered.kind() == "layered");
}

TEST_CASE("layered profile: d²n/dz² of piece_index is the exponential's at and just below the surface, where the "
          "profile is not continued above it",
          "[model][layered]") {
    // n = n_deep − (n_deep − n_top)·exp(z/L) for z <= 0: d²n/dz² = −(n_deep − n_top)·exp(z/L)/L².
    LayeredProfile layered(1.33, {ExponentialLayer{10.0, 1.85, 30.0}, ExponentialLayer{INFINITY, 1.78, 40.0}}, 2.0);
    for (double z : {0.0, -2e-4, -1e-3, -0.5, -5.0}) {
        double n, dn, d2n;
        layered.piece_index(0, z, n, dn, d2n);
        const double expected = -(1.85 - 1.33) * std::exp(z / 30.0) / (30.0 * 30.0);
        INFO("z " << z);
        CHECK(n == Approx(stage(1.85, 1.33, 30.0, 0.0, -z)).epsilon(1e-15));
        CHECK(d2n == Approx(expected).epsilon(1e-6));
    }
}

TEST_CASE("two densification stages (Herron & Langway 1980): layer formulas hold outside the transition",
          "[model][layered]") {
    // Fast stage to 15 m, slow stage below; the transition is 2 m wide, centred on 15 m.
    LayeredProfile p(1.35, {ExponentialLayer{15.0, 1.82, 22.0}, ExponentialLayer{INFINITY, 1.78, 40.0}}, 2.0);
    const double n15 = stage(1.82, 1.35, 22.0, 0.0, 15.0);
    CHECK(p.layer_top_index(1) == Approx(n15).epsilon(1e-15));
    for (double d : {0.0, 1.0, 5.0, 10.0, 13.99})
        CHECK(p.index(-d) == Approx(stage(1.82, 1.35, 22.0, 0.0, d)).epsilon(1e-14));
    for (double d : {16.01, 20.0, 60.0, 300.0})
        CHECK(p.index(-d) == Approx(stage(1.78, n15, 40.0, 15.0, d)).epsilon(1e-14));
    // Inside the zone n stays between the two formulas' values and close to both.
    CHECK(std::abs(p.index(-15.0) - n15) < 1e-3);
    CHECK(p.index(-1e4) == Approx(1.78).epsilon(1e-12));
}

TEST_CASE("layered profile: n and dn/dz continuous at the boundaries and zone edges", "[model][layered]") {
    LayeredProfile p(1.35,
                     {ExponentialLayer{12.0, 1.85, 18.0}, ExponentialLayer{60.0, 1.79, 35.0},
                      ExponentialLayer{INFINITY, 1.78, 60.0}},
                     3.0);
    for (double boundary : {12.0, 60.0})
        for (double offset : {-1.5, -0.75, 0.0, 0.75, 1.5}) check_smooth_at(p, -(boundary + offset));
    for (double z : {0.0, -5.0, -30.0, -200.0}) check_smooth_at(p, z);
    // n never falls with depth: dn/dz <= 0 everywhere (z up).
    for (double z = 0.0; z >= -120.0; z -= 0.01) REQUIRE(p.gradient(z) <= 1e-15);
}

TEST_CASE("layered profile with a constant deepest layer stays monotone and smooth", "[model][layered]") {
    // Deep layer with n_deep equal to n at its top: constant below, the hardest case for a blend.
    LayeredProfile first(1.35, {ExponentialLayer{80.0, 1.79, 30.0}, ExponentialLayer{INFINITY, 1.78, 10.0}}, 2.0);
    const double n_top = first.layer_top_index(1);
    LayeredProfile p(1.35, {ExponentialLayer{80.0, 1.79, 30.0}, ExponentialLayer{INFINITY, n_top, 10.0}}, 2.0);
    for (double z = -70.0; z >= -90.0; z -= 0.001) REQUIRE(p.gradient(z) <= 1e-15);
    check_smooth_at(p, -79.0);
    check_smooth_at(p, -80.0);
    check_smooth_at(p, -81.0);
    CHECK(p.index(-200.0) == Approx(n_top).epsilon(1e-15));
}

TEST_CASE("layered profile rejects bad layers with the key that is wrong", "[model][layered]") {
    const ExponentialLayer deep{INFINITY, 1.78, 40.0};
    auto key_for = [](auto&& make) -> std::string {
        try {
            make();
        } catch (const ModelInputError& e) {
            return key_of(e);
        }
        return "no error";
    };
    CHECK(key_for([&] { LayeredProfile(0.9, {deep}); }) == "n_surface");
    CHECK(key_for([&] { LayeredProfile(NAN, {deep}); }) == "n_surface");
    CHECK(key_for([&] { LayeredProfile(1.35, {}); }) == "layer");
    CHECK(key_for([&] { LayeredProfile(1.35, {ExponentialLayer{10.0, 0.5, 20.0}, deep}); }) == "layer[0].n_deep");
    CHECK(key_for([&] { LayeredProfile(1.35, {ExponentialLayer{10.0, 1.8, 0.0}, deep}); }) == "layer[0].scale_depth_m");
    CHECK(key_for([&] { LayeredProfile(1.35, {ExponentialLayer{10.0, 1.8, -3.0}, deep}); }) == "layer[0].scale_depth_m");
    CHECK(key_for([&] { LayeredProfile(1.35, {ExponentialLayer{10.0, 1.8, INFINITY}, deep}); }) ==
          "layer[0].scale_depth_m");
    CHECK(key_for([&] {
              LayeredProfile(1.35, {ExponentialLayer{20.0, 1.8, 20.0}, ExponentialLayer{10.0, 1.8, 20.0}, deep});
          }) == "layer[1].bottom_depth_m");
    CHECK(key_for([&] { LayeredProfile(1.35, {ExponentialLayer{INFINITY, 1.8, 20.0}, deep}); }) ==
          "layer[0].bottom_depth_m");
    CHECK(key_for([&] { LayeredProfile(1.35, {ExponentialLayer{10.0, 1.8, 20.0}}); }) == "layer[0].bottom_depth_m");
    // n_deep of the second layer below n at its top: the index would fall with depth.
    CHECK(key_for([&] { LayeredProfile(1.35, {ExponentialLayer{30.0, 1.8, 10.0}, ExponentialLayer{INFINITY, 1.6, 9.0}}); }) ==
          "layer[1].n_deep");
    CHECK(key_for([&] { LayeredProfile(1.5, {ExponentialLayer{INFINITY, 1.4, 9.0}}); }) == "layer[0].n_deep");
    CHECK(key_for([&] { LayeredProfile(1.35, {ExponentialLayer{1.0, 1.8, 20.0}, deep}, 4.0); }) == "transition_m");
    CHECK(key_for([&] { LayeredProfile(1.35, {ExponentialLayer{10.0, 1.8, 20.0}, deep}, 0.0); }) == "transition_m");
}
