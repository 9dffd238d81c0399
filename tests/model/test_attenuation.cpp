#include <catch2/catch.hpp>

#include "core/errors.hpp"
#include "model/attenuation.hpp"

using namespace firnray;

TEST_CASE("constant attenuation length", "[model][attenuation]") {
    ConstantAttenuation a(1000.0);
    CHECK(a.length_m(0.0) == 1000.0);
    CHECK(a.length_m(-2500.0) == 1000.0);
    CHECK_THROWS_AS(ConstantAttenuation(0.0), ModelInputError);
    CHECK_THROWS_AS(ConstantAttenuation(-5.0), ModelInputError);
    CHECK_THROWS_AS(ConstantAttenuation(INFINITY), ModelInputError);
}

TEST_CASE("tabulated attenuation: through the points, continuous, within range, held beyond the ends",
          "[model][attenuation]") {
    TableAttenuation a({100.0, 500.0, 1500.0, 2500.0}, {1600.0, 1400.0, 900.0, 300.0});
    CHECK(a.length_m(-100.0) == Approx(1600.0));
    CHECK(a.length_m(-1500.0) == Approx(900.0));
    CHECK(a.length_m(0.0) == 1600.0);      // above the shallowest point
    CHECK(a.length_m(-4000.0) == 300.0);   // below the deepest
    double previous = a.length_m(0.0);
    for (double d = 0.0; d <= 3000.0; d += 1.0) {
        const double l = a.length_m(-d);
        CHECK(l <= previous + 1e-9);  // decreasing data give a decreasing curve: no overshoot
        CHECK(std::abs(l - previous) < 5.0);  // continuous (no jump larger than a metre's change)
        CHECK(l > 0.0);
        previous = l;
    }
    auto key_of = [](auto&& make) -> std::string {
        try {
            make();
        } catch (const ModelInputError& e) {
            return e.where().key;
        }
        return "no error";
    };
    CHECK(key_of([] { TableAttenuation({0.0}, {100.0}); }) == "depth_m");
    CHECK(key_of([] { TableAttenuation({0.0, 0.0}, {100.0, 200.0}); }) == "depth_m");
    CHECK(key_of([] { TableAttenuation({0.0, 10.0}, {100.0, -1.0}); }) == "length_m");
}
