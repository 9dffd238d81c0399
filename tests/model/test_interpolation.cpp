#include <cmath>
#include <random>

#include <catch2/catch.hpp>

#include "model/interpolation.hpp"

using namespace firnray;

TEST_CASE("a clamped cubic spline reproduces a cubic polynomial exactly (de Boor, A Practical Guide to Splines)",
          "[model][interpolation]") {
    auto f = [](double x) { return 1.0 - 2.0 * x + 0.5 * x * x - 0.03 * x * x * x; };
    auto df = [](double x) { return -2.0 + x - 0.09 * x * x; };
    std::vector<double> x{0.0, 0.7, 1.5, 3.0, 3.2, 5.0, 8.0};
    std::vector<double> y;
    for (double v : x) y.push_back(f(v));
    CubicSpline spline(x, y, SplineEnd::clamped(df(0.0)), SplineEnd::clamped(df(8.0)));
    for (double v = 0.0; v <= 8.0; v += 0.0625) {
        double value, slope;
        spline.value_and_slope(v, value, slope);
        CHECK(value == Approx(f(v)).margin(1e-12));
        CHECK(slope == Approx(df(v)).margin(1e-11));
    }
}

TEST_CASE("a natural cubic spline is C2 at its knots and linear outside them", "[model][interpolation]") {
    std::vector<double> x{0.0, 1.0, 2.5, 3.0, 4.5, 6.0}, y{0.0, 0.8, 0.6, -0.1, 0.3, 1.0};
    CubicSpline spline(x, y, SplineEnd::natural(), SplineEnd::natural());
    const double h = 1e-5;
    for (std::size_t i = 0; i < x.size(); ++i) CHECK(spline.value(x[i]) == Approx(y[i]).margin(1e-14));
    for (std::size_t i = 1; i + 1 < x.size(); ++i) {
        double v1, s1, v2, s2, v3, s3;
        spline.value_and_slope(x[i] - h, v1, s1);
        spline.value_and_slope(x[i], v2, s2);
        spline.value_and_slope(x[i] + h, v3, s3);
        CHECK(std::abs(s3 - s1) < 1e-3);  // slope continuous (a kink would jump by O(0.1))
        CHECK((s2 - s1) / h == Approx((s3 - s2) / h).margin(1e-3));  // curvature continuous
    }
    // Beyond the ends: straight continuation with the end slope.
    double v0, s0, vl, sl;
    spline.value_and_slope(0.0, v0, s0);
    spline.value_and_slope(6.0, vl, sl);
    CHECK(spline.value(-2.0) == Approx(v0 - 2.0 * s0).margin(1e-13));
    CHECK(spline.value(9.0) == Approx(vl + 3.0 * sl).margin(1e-13));
}

TEST_CASE("interval lookup agrees with a plain search on uneven knots", "[model][interpolation]") {
    std::mt19937 rng(7);
    std::uniform_real_distribution<double> step(1e-3, 5.0);
    std::vector<double> knots{0.0};
    for (int i = 0; i < 200; ++i) knots.push_back(knots.back() + (i % 17 == 0 ? 50.0 : step(rng)));
    IntervalLocator locator(knots);
    std::uniform_real_distribution<double> where(-10.0, knots.back() + 10.0);
    for (int k = 0; k < 20000; ++k) {
        const double x = k < 201 ? knots[k] : where(rng);
        std::size_t expected = 0;
        while (expected + 2 < knots.size() && knots[expected + 1] <= x) ++expected;
        REQUIRE(locator.find(x) == expected);
    }
}

TEST_CASE("the monotone cubic never overshoots monotone data (Fritsch & Carlson 1980)", "[model][interpolation]") {
    std::vector<double> x{0.0, 1.0, 2.0, 3.0, 10.0, 11.0}, y{1.0, 1.0, 5.0, 5.1, 5.2, 20.0};
    MonotoneCubic curve(x, y);
    double previous = curve.value(-1.0);
    CHECK(previous == 1.0);
    for (double v = 0.0; v <= 11.0; v += 0.01) {
        const double value = curve.value(v);
        CHECK(value >= previous - 1e-12);
        previous = value;
    }
    for (std::size_t i = 0; i < x.size(); ++i) CHECK(curve.value(x[i]) == Approx(y[i]));
    CHECK(curve.value(50.0) == 20.0);
    // Flat stretch stays flat: no wiggle between two equal points.
    for (double v = 0.0; v <= 1.0; v += 0.05) CHECK(curve.value(v) == Approx(1.0).margin(1e-14));
}
