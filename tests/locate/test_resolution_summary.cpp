// summarize_resolution and receivers_at_depth: the figures `depths --resolution` reports per
// candidate depth (docs/locate.md).
#include <catch2/catch.hpp>

#include <cmath>

#include "core/errors.hpp"
#include "locate/resolution_map.hpp"

using namespace firnray;

namespace {

CramerRao resolved(double sigma_distance_m, double sigma_depth_m) {
    CramerRao cell;
    cell.pulses = 8;
    cell.resolved = true;
    cell.view.sigma_distance_m = sigma_distance_m;
    cell.view.sigma_depth_m = sigma_depth_m;
    return cell;
}

}  // namespace

TEST_CASE("resolution summary: medians over resolved cells only and the unresolved share (median of an even "
          "count is the mean of the middle two, common practice)",
          "[locate][resolution]") {
    ResolutionMap map;
    map.grid.distance_cells = 3;
    map.grid.depth_cells = 2;
    CramerRao unresolved;
    unresolved.reason = "2 pulses: at least 4 are needed";
    map.cells = {resolved(4.0, 0.4), unresolved, resolved(1.0, 0.1), resolved(3.0, 0.3), unresolved, resolved(2.0, 0.2)};
    const ResolutionSummary summary = summarize_resolution(map);
    CHECK(summary.cells == 6);
    CHECK(summary.resolved_cells == 4);
    CHECK(summary.unresolved_fraction == Approx(2.0 / 6.0));
    REQUIRE(summary.median_sigma_distance_m);
    CHECK(*summary.median_sigma_distance_m == Approx(2.5));
    REQUIRE(summary.median_sigma_depth_m);
    CHECK(*summary.median_sigma_depth_m == Approx(0.25));

    map.cells.pop_back();  // an odd count: the middle value
    const ResolutionSummary odd = summarize_resolution(map);
    CHECK(*odd.median_sigma_distance_m == Approx(3.0));

    for (CramerRao& cell : map.cells) cell = unresolved;
    const ResolutionSummary none = summarize_resolution(map);
    CHECK(none.unresolved_fraction == 1.0);
    CHECK_FALSE(none.median_sigma_distance_m);
    CHECK_FALSE(none.median_sigma_depth_m);
}

TEST_CASE("receivers_at_depth lowers the station as a whole so that its shallowest receiver is at the depth "
          "(geometry)",
          "[locate][resolution]") {
    std::vector<Receiver> receivers(3);
    receivers[0].x_m = 10.0;
    receivers[0].z_m = -40.0;
    receivers[1].z_m = -60.0;
    receivers[2].y_m = 5.0;
    receivers[2].z_m = -45.0;
    const auto moved = receivers_at_depth(receivers, 100.0);
    REQUIRE(moved.size() == 3);
    CHECK(moved[0].z_m == Approx(-100.0));
    CHECK(moved[1].z_m == Approx(-120.0));
    CHECK(moved[2].z_m == Approx(-105.0));
    CHECK(moved[0].x_m == 10.0);
    CHECK(moved[2].y_m == 5.0);
    CHECK_THROWS_AS(receivers_at_depth(receivers, -1.0), DataInputError);
    CHECK_THROWS_AS(receivers_at_depth(receivers, std::nan("")), DataInputError);
    CHECK_THROWS_AS(receivers_at_depth({}, 10.0), DataInputError);
}
