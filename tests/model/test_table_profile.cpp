#include <cmath>

#include <catch2/catch.hpp>

#include "core/errors.hpp"
#include "model/model_file.hpp"
#include "model/table_profile.hpp"
#include "support/run_cli.hpp"
#include "profile_checks.hpp"

using namespace firnray;
using firnray::test::check_smooth_at;
using firnray::test::source_path;

namespace {

TableProfile sampled_exponential(double first_depth, double step, double last_depth, TableInterpolation interpolation = TableInterpolation::spline) {
    ExponentialProfile reference(1.78, 1.35, 37.0);
    std::vector<double> depth, n;
    for (double d = first_depth; d <= last_depth + 1e-9; d += step) {
        depth.push_back(d);
        n.push_back(reference.index(-d));
    }
    return TableProfile(depth, n, interpolation);
}

std::string error_key(const std::vector<double>& depth, const std::vector<double>& n,
                      TableInterpolation interpolation = TableInterpolation::monotone) {
    try {
        TableProfile p(depth, n, interpolation);
    } catch (const ModelInputError& e) {
        return e.where().key;
    }
    return "no error";
}

}  // namespace

TEST_CASE("a spline through samples of the exponential profile reproduces it (docs/physics.md §1)", "[model][table]") {
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
    const TableProfile monotone = sampled_exponential(5.0, 5.0, 150.0, TableInterpolation::monotone);
    for (double d = 5.0; d <= 150.0; d += 5.0) check_smooth_at(monotone, -d);
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
    // The C² spline through wild data dips below 1 between points; the monotone cubic never
    // leaves the range of neighbouring points (Fritsch & Carlson 1980), so it does not.
    CHECK(error_key({0, 1, 2, 3, 4}, {1.7, 1.0, 1.7, 1.0, 1.7}, TableInterpolation::spline) == "n");
    CHECK(error_key({0, 1, 2, 3, 4}, {1.7, 1.0, 1.7, 1.0, 1.7}) == "no error");
    // Continued to the surface from 10 m with a steep slope, n would fall below 1.
    CHECK(error_key({10, 11, 12, 13}, {1.05, 1.15, 1.25, 1.35}) == "n");
    CHECK(error_key({0, 1, 2, 3}, {1.3, 1.4, 1.5, 1.6}) == "no error");
}

TEST_CASE("table profile pieces: the knots are the joins, each piece is the spline inside its interval and its own "
          "cubic beyond it, and value, slope and curvature agree across every knot (a C² spline)",
          "[model][table]") {
    const TableProfile table = sampled_exponential(0.0, 7.0, 140.0);
    const auto joins = table.joins_z();
    REQUIRE(joins.size() == table.depth_m().size());
    for (std::size_t k = 0; k < joins.size(); ++k) CHECK(joins[k] == -table.depth_m()[k]);
    for (std::size_t piece = 1; piece < joins.size(); ++piece) {
        const double top = joins[piece - 1], bottom = joins[piece];
        for (const double f : {0.1, 0.5, 0.9}) {
            const double z = top + f * (bottom - top);
            double n, g, c;
            table.piece_index(piece, z, n, g, c);
            CHECK(n == Approx(table.index(z)).epsilon(1e-15));
            CHECK(g == Approx(table.gradient(z)).epsilon(1e-12));
            // Curvature against a central difference of the slope.
            const double h = 1e-4;
            CHECK(c == Approx((table.gradient(z + h) - table.gradient(z - h)) / (2 * h)).epsilon(1e-6).margin(1e-12));
        }
        // The two pieces meeting at a join agree there, up to the curvature (C²).
        double n_above, g_above, c_above, n_below, g_below, c_below;
        table.piece_index(piece - 1, top, n_above, g_above, c_above);
        table.piece_index(piece, top, n_below, g_below, c_below);
        CHECK(n_above == Approx(n_below).epsilon(1e-14));
        CHECK(g_above == Approx(g_below).epsilon(1e-10));
        if (piece > 1) CHECK(c_above == Approx(c_below).epsilon(1e-8).margin(1e-14));
    }
    // Below the deepest point: n held (slope and curvature zero).
    double n, g, c;
    table.piece_index(joins.size(), -500.0, n, g, c);
    CHECK(n == table.n_values().back());
    CHECK(g == 0.0);
    CHECK(c == 0.0);
    // A smooth profile has no joins.
    CHECK(ExponentialProfile(1.78, 1.35, 37.0).joins_z().empty());
}

TEST_CASE("table profile, monotone cubic: data that grow with depth give n that grows with depth everywhere, no overshoot "
          "(Fritsch & Carlson 1980)",
          "[model][table]") {
    // Uneven spacing and a nearly flat deep end, where a C² spline overshoots: the synthetic log's
    // deepest points (120, 135, 150 m) and sharper steps above.
    const std::vector<double> depth{0, 2, 4, 10, 20, 40, 60, 90, 120, 135, 150};
    const std::vector<double> n{1.32, 1.34, 1.37, 1.43, 1.52, 1.63, 1.69, 1.74, 1.7616, 1.7629, 1.7678};
    const TableProfile monotone(depth, n);
    const TableProfile spline(depth, n, TableInterpolation::spline);
    double previous = monotone.index(0.0);
    bool spline_falls = false;
    double spline_previous = spline.index(0.0);
    for (double d = 0.05; d <= 160.0; d += 0.05) {
        const double value = monotone.index(-d);
        CHECK(value >= previous - 1e-15);
        CHECK(monotone.gradient(-d) <= 1e-15);  // dn/dz <= 0: n does not fall with depth
        previous = value;
        spline_falls = spline_falls || spline.index(-d) < spline_previous - 1e-12;
        spline_previous = spline.index(-d);
    }
    (void)spline_falls;
    // The example model's synthetic density log (models/table-density.toml), where a C² spline
    // overshoots between 120, 135 and 150 m, grows with depth everywhere with the default.
    const FirnModel example = load_model_file(source_path("models/table-density.toml"));
    double last = example.index->index(0.0);
    for (double d = 0.1; d <= 200.0; d += 0.1) {
        CHECK(example.index->index(-d) >= last - 1e-15);
        last = example.index->index(-d);
    }
    for (std::size_t i = 0; i < depth.size(); ++i) CHECK(monotone.index(-depth[i]) == Approx(n[i]).margin(1e-15));
    for (double d : {2.0, 10.0, 60.0, 135.0, 150.0}) check_smooth_at(monotone, -d);  // dn/dz continuous at knots
    CHECK(monotone.describe().find("monotone cubic") != std::string::npos);
}
