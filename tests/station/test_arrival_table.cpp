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
