#include <cmath>

#include <catch2/catch.hpp>

#include "core/errors.hpp"
#include "model/index_profile.hpp"
#include "profile_checks.hpp"

using namespace firnray;
using firnray::test::check_smooth_at;

TEST_CASE("constant profile: one index, zero gradient", "[model][profile]") {
    ConstantProfile p(1.78);
    for (double z : {0.0, -1.0, -500.0}) {
        CHECK(p.index(z) == 1.78);
        CHECK(p.gradient(z) == 0.0);
        check_smooth_at(p, z);
    }
    CHECK_THROWS_AS(ConstantProfile(0.99), ModelInputError);
    CHECK_THROWS_AS(ConstantProfile(NAN), ModelInputError);
}

TEST_CASE("exponential profile: the formula of docs/physics.md §1, smooth, surface value above z = 0",
          "[model][profile]") {
    ExponentialProfile p(1.78, 1.35, 37.0);
    for (double z = 0.0; z >= -400.0; z -= 9.5) {
        CHECK(p.index(z) == Approx(1.78 - 0.43 * std::exp(z / 37.0)).epsilon(1e-15));
        check_smooth_at(p, z);
    }
    CHECK(p.index(5.0) == p.surface_index());
    CHECK(p.surface_index() == Approx(1.35));
}
