// Shared checks for index profiles: continuity of n and dn/dz across a point, and dn/dz agreeing
// with a centred finite difference of n (the definition of the derivative).
#pragma once

#include <cmath>

#include <catch2/catch.hpp>

#include "model/index_profile.hpp"

namespace firnray::test {

// n and dn/dz are continuous at z0: their jumps across z0 shrink in proportion to the step
// (a discontinuity would not shrink), and dn/dz matches the centred difference of n.
inline void check_smooth_at(const IndexProfile& profile, double z0, double tolerance = 1e-6) {
    const double h = 1e-4;
    INFO("z = " << z0);
    auto jump = [&](double step, bool of_gradient) {
        return of_gradient ? std::abs(profile.gradient(z0 + step) - profile.gradient(z0 - step))
                           : std::abs(profile.index(z0 + step) - profile.index(z0 - step));
    };
    for (bool of_gradient : {false, true}) {
        INFO((of_gradient ? "dn/dz" : "n"));
        const double wide = jump(h, of_gradient), narrow = jump(h / 100, of_gradient);
        CHECK(narrow <= 0.02 * wide + 1e-13);
        CHECK(wide <= 1e-3);
    }
    for (double z : {z0 - 2 * h, z0, z0 + 2 * h}) {
        if (z > 0.0) continue;
        const double upper = std::min(z + h, 0.0), lower = z - h;
        const double difference = (profile.index(upper) - profile.index(lower)) / (upper - lower);
        CHECK(std::abs(difference - profile.gradient(0.5 * (upper + lower))) <= tolerance);
    }
    double n, g;
    profile.index_and_gradient(z0, n, g);
    CHECK(n == Approx(profile.index(z0)).epsilon(1e-15));
    CHECK(g == Approx(profile.gradient(z0)).margin(1e-15));
}

}  // namespace firnray::test
