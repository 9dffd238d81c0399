// Map-scale arrival tables against independent references.
#include <catch2/catch.hpp>

#include <cmath>

#include "core/constants.hpp"
#include "station/arrival_table.hpp"
#include "support/straight_line_solver.hpp"

using namespace firnray;

TEST_CASE("arrival table, homogeneous medium: direct time n·d/c and surface reflection from the image source (definition)",
          "[station][arrival-table]") {
    const double n = 1.78;
    test::StraightLineSolver solver(test::homogeneous_model(n));
    const double zr = -100.0;
    std::vector<double> sources{-1.0, -50.0, -100.0, -150.0, -400.0};
    ArrivalTable table(solver, zr, sources);
    std::vector<MapArrival> found;
    for (std::size_t row = 0; row < sources.size(); ++row) {
        CHECK(std::isinf(table.max_reach_m(row)));
        for (double r : {0.0, 3.0, 120.0, 900.0, 2500.0}) {
            table.arrivals(row, r, found);
            const double zs = sources[row];
            const double direct = n * std::hypot(r, zs - zr) / speed_of_light;
            const double image = n * std::hypot(r, zs + zr) / speed_of_light;
            if (zs == zr && r == 0.0) continue;  // the receiver itself
            const bool has_direct = !(zs == zr);  // at equal depth only the reflected family is left
            INFO("row " << row << " r " << r);
            REQUIRE(found.size() == (has_direct ? 2u : 1u));
            if (has_direct) {
                CHECK(found[0].kind == ArrivalKind::direct);
                CHECK(found[0].time_s == Approx(direct).epsilon(1e-9));
            }
            CHECK(found.back().kind == ArrivalKind::reflected);
            CHECK(found.back().time_s == Approx(image).epsilon(1e-9));
        }
    }
}

#include "station/depth_scan.hpp"
#include "station/visibility_map.hpp"

TEST_CASE("visibility map, homogeneous medium: every cell is visible and the visible volume is the geometric cylinder π R² H (definition)",
          "[station][visibility]") {
    test::StraightLineSolver solver(test::homogeneous_model(1.5));
    DepthScanOptions options;
    options.receiver_depths_m = {20.0, 100.0};
    options.region.distance_max_m = 800.0;
    options.region.distance_cells = 80;
    options.region.depth_min_m = 0.0;
    options.region.depth_max_m = 300.0;
    options.region.depth_cells = 30;
    const DepthScan scan = scan_receiver_depths(solver, options);
    const double cylinder = pi * 800.0 * 800.0 * 300.0;
    for (const auto& row : scan.rows) {
        CHECK(row.region_volume_m3 == Approx(cylinder).epsilon(1e-12));
        CHECK(row.visible_volume_m3 == Approx(cylinder).epsilon(1e-12));
    }
}

TEST_CASE("visibility map, --min-receivers on a station whose answer is known by hand", "[station][visibility]") {
    // Homogeneous medium, so every receiver sees every cell: with 3 receivers, K = 3 keeps every
    // cell and the counts are 3 everywhere (counted by hand: each cell, each receiver, one or two paths).
    test::StraightLineSolver solver(test::homogeneous_model(1.5));
    std::vector<Receiver> receivers(3);
    for (int k = 0; k < 3; ++k) {
        receivers[k].name = "R" + std::to_string(k);
        receivers[k].x_m = 10.0 * k;
        receivers[k].z_m = -50.0 - 10.0 * k;
    }
    MapGrid grid;
    grid.distance_max_m = 300.0;
    grid.distance_cells = 10;
    grid.depth_max_m = 100.0;
    grid.depth_cells = 10;
    VisibilityOptions options;
    options.min_receivers = 3;
    const VisibilityMap map = compute_visibility_map(solver, receivers, grid, options);
    for (const MapCell& cell : map.cells) {
        CHECK(cell.receivers_seeing == 3);
        CHECK(map.visible(cell));
    }
    options.min_receivers = 4;
    CHECK_THROWS_AS(compute_visibility_map(solver, receivers, grid, options), DataInputError);
}
