// Visibility maps and receiver-depth scans: cells counted by hand on small stations, the
// homogeneous medium where every cell is seen, and agreement cell by cell with find_paths.
#include <catch2/catch.hpp>

#include <cmath>
#include <cstdint>
#include <memory>
#include <string>
#include <vector>

#include "core/constants.hpp"
#include "model/firn_model.hpp"
#include "paths/find_paths.hpp"
#include "solver/closed_form_solver.hpp"
#include "station/arrival_table.hpp"
#include "station/depth_scan.hpp"
#include "station/visibility_map.hpp"
#include "support/straight_line_solver.hpp"

using namespace firnray;

namespace {

std::shared_ptr<const FirnModel> firn(double n_deep, double n_surface, double z0) {
    auto model = std::make_shared<FirnModel>();
    model->name = "exponential test firn";
    model->index = std::make_shared<ExponentialProfile>(n_deep, n_surface, z0);
    return model;
}

}  // namespace

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

TEST_CASE("visibility map: --min-receivers on a small station whose answer is known by hand", "[station][visibility]") {
    // Three receivers at one depth on the x axis, at x = 0, 150 and 300 m. A source at distance r
    // along +x from the centre (x = 150 m) and depth d is seen by receiver k exactly when its
    // horizontal distance |150 + r − x_k| is within the single-receiver reach B(d). So by hand:
    // with r in the grid, the count is #{k : |150 + r − x_k| <= B(d)}, and K = 2 keeps the cells
    // with a count of 2 or 3.
    ClosedFormSolver solver(firn(1.78, 1.35, 37.0));
    std::vector<Receiver> receivers(3);
    for (int k = 0; k < 3; ++k) {
        receivers[k].name = "R" + std::to_string(k);
        receivers[k].x_m = 150.0 * k;
        receivers[k].z_m = -50.0;
    }
    MapGrid grid;
    grid.distance_max_m = 1200.0;
    grid.distance_cells = 120;
    grid.depth_max_m = 200.0;
    grid.depth_cells = 20;
    VisibilityOptions options;
    options.min_receivers = 2;
    const VisibilityMap map = compute_visibility_map(solver, receivers, grid, options);
    std::vector<double> depths_z;
    for (int j = 0; j < grid.depth_cells; ++j) depths_z.push_back(-grid.depth_at(j));
    const ArrivalTable single(solver, -50.0, depths_z);
    int checked = 0;
    for (int j = 0; j < grid.depth_cells; ++j)
        for (int i = 0; i < grid.distance_cells; ++i) {
            const double x = 150.0 + grid.distance_at(i);
            int by_hand = 0;
            for (int k = 0; k < 3; ++k) by_hand += std::abs(x - 150.0 * k) <= single.max_reach_m(j);
            const MapCell& cell = map.at(j, i);
            INFO("depth " << grid.depth_at(j) << " r " << grid.distance_at(i));
            CHECK(cell.receivers_seeing == by_hand);
            CHECK(map.visible(cell) == (by_hand >= 2));
            ++checked;
        }
    CHECK(checked == 2400);
}

TEST_CASE("visibility map cells agree with find_paths: same path count, kinds and times (two independent path finders)",
          "[station][visibility]") {
    ClosedFormSolver solver(firn(1.78, 1.35, 37.0));
    Receiver receiver;
    receiver.name = "R";
    receiver.z_m = -70.0;
    MapGrid grid;
    grid.distance_max_m = 1200.0;
    grid.distance_cells = 48;
    grid.depth_max_m = 300.0;
    grid.depth_cells = 24;
    const VisibilityMap map = compute_visibility_map(solver, std::span<const Receiver>(&receiver, 1), grid, {});
    int compared = 0, disagreements = 0;
    for (int j = 0; j < grid.depth_cells; ++j)
        for (int i = 0; i < grid.distance_cells; ++i) {
            const double r = grid.distance_at(i), z = -grid.depth_at(j);
            const auto paths = find_paths(solver, Point{r, 0.0, z}, Point{0.0, 0.0, receiver.z_m});
            const MapCell& cell = map.at(j, i);
            std::uint8_t kinds = 0;
            for (const auto& p : paths)
                kinds |= p.kind == PathKind::direct ? kind_direct : p.kind == PathKind::refracted ? kind_refracted : kind_reflected;
            INFO("r " << r << " depth " << -z);
            // Reflected and refracted meet at ξ = n_surface (a grazing reflection): right there the
            // two finders may label the same path differently; nowhere else.
            bool grazing = false;
            for (const auto& p : paths) grazing = grazing || std::abs(p.ray_parameter - 1.35) < 1e-3;
            const auto second_family = static_cast<std::uint8_t>(kind_refracted | kind_reflected);
            const bool same_kinds = kinds == cell.kinds || (grazing && (kinds & ~second_family) == (cell.kinds & ~second_family));
            if (paths.size() != cell.paths || !same_kinds) {
                ++disagreements;
                WARN("disagree at r " << r << " depth " << -z << ": find_paths " << paths.size() << " kinds "
                     << int(kinds) << ", map " << int(cell.paths) << " kinds " << int(cell.kinds));
                continue;
            }
            ++compared;
            // Cells store times as float (about 0.3 ps at 3 µs); 5 ps also covers the kink of the
            // rising family at grazing incidence, where the table's interpolation is least accurate.
            if (!paths.empty()) {
                CHECK(std::abs(paths[0].time_s * 1e9 - cell.first_time_ns) < 5e-3);
                if (paths.size() >= 2)
                    CHECK(std::abs((paths[1].time_s - paths[0].time_s) * 1e9 - cell.time_between_ns) < 5e-3);
            }
        }
    CHECK(disagreements == 0);
    CHECK(compared == grid.distance_cells * grid.depth_cells);
}
