#include <cmath>

#include <catch2/catch.hpp>

#include "core/errors.hpp"
#include "model/table_profile.hpp"
#include "profile_checks.hpp"

using namespace firnray;
using firnray::test::check_smooth_at;

namespace {

TableProfile sampled_exponential(double first_depth, double step, double last_depth) {
    ExponentialProfile reference(1.78, 1.35, 37.0);
    std::vector<double> depth, n;
    for (double d = first_depth; d <= last_depth + 1e-9; d += step) {
        depth.push_back(d);
        n.push_back(reference.index(-d));
    }
    return TableProfile(depth, n);
}

std::string error_key(const std::vector<double>& depth, const std::vector<double>& n) {
    try {
        TableProfile p(depth, n);
    } catch (const ModelInputError& e) {
        return e.where().key;
    }
    return "no error";
}

}  // namespace

TEST_CASE("a spline through samples of the exponential profile reproduces it (physics notes §2)", "[model][table]") {
    const TableProfile table = sampled_exponential(0.0, 2.0, 300.0);
    ExponentialProfile reference(1.78, 1.35, 37.0);
    // Cubic-spline error is O(h^4 n'''') ~ 2^4 * 0.43/37^4 / 384: far below 1e-6, except near the
    // ends where the end conditions differ from the true curve.
    for (double d = 10.0; d <= 250.0; d += 0.37) {
        CHECK(table.index(-d) == Approx(reference.index(-d)).margin(1e-6));
        CHECK(table.gradient(-d) == Approx(reference.gradient(-d)).margin(1e-6));
    }
    for (double d = 0.0; d <= 300.0; d += 0.5) CHECK(table.index(-d) == Approx(reference.index(-d)).margin(1e-4));
    CHECK(table.kind() == "table");
}

TEST_CASE("table profile: n and dn/dz continuous at knots, at both ends and beyond", "[model][table]") {
    const TableProfile table = sampled_exponential(5.0, 5.0, 150.0);
    for (double d = 5.0; d <= 150.0; d += 5.0) check_smooth_at(table, -d);
    check_smooth_at(table, 0.0);
    check_smooth_at(table, -2.5);   // the straight continuation up to the surface
    check_smooth_at(table, -160.0); // below the table: constant
    // Below the deepest point n is held and dn/dz is zero.
    CHECK(table.index(-150.0) == table.index(-900.0));
    CHECK(table.gradient(-150.0) == 0.0);
    CHECK(table.gradient(-900.0) == 0.0);
    // Above the shallowest point: the straight line with the end slope, curvature zero on both sides.
    const double g5 = table.gradient(-5.0);
    CHECK(table.gradient(0.0) == Approx(g5).epsilon(1e-14));
    CHECK(table.index(0.0) == Approx(table.index(-5.0) + 5.0 * g5).epsilon(1e-14));
    CHECK(table.index(10.0) == table.index(0.0));  // z > 0: the surface value
}

TEST_CASE("table profile rejects bad points with the key that is wrong", "[model][table]") {
    CHECK(error_key({0, 1, 2}, {1.3, 1.4, 1.5}) == "depth_m");            // fewer than 4 points
    CHECK(error_key({0, 1, 1, 3}, {1.3, 1.4, 1.5, 1.6}) == "depth_m");    // not strictly increasing
    CHECK(error_key({0, 2, 1, 3}, {1.3, 1.4, 1.5, 1.6}) == "depth_m");
    CHECK(error_key({-1, 1, 2, 3}, {1.3, 1.4, 1.5, 1.6}) == "depth_m");   // above the surface
    CHECK(error_key({0, 1, NAN, 3}, {1.3, 1.4, 1.5, 1.6}) == "depth_m");
    CHECK(error_key({0, 1, 2, 3}, {1.3, 0.9, 1.5, 1.6}) == "n");          // n < 1
    CHECK(error_key({0, 1, 2, 3}, {1.3, INFINITY, 1.5, 1.6}) == "n");
    CHECK(error_key({0, 1, 2, 3}, {1.3, 1.4, 1.5}) == "n");               // sizes differ
    // The spline through wild data dips below 1 between points.
    CHECK(error_key({0, 1, 2, 3, 4}, {1.7, 1.0, 1.7, 1.0, 1.7}) == "n");
    // Continued to the surface from 10 m with a steep slope, n would fall below 1.
    CHECK(error_key({10, 11, 12, 13}, {1.05, 1.15, 1.25, 1.35}) == "n");
    CHECK(error_key({0, 1, 2, 3}, {1.3, 1.4, 1.5, 1.6}) == "no error");
}
