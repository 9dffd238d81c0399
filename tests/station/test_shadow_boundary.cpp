// The shadow boundary of arrival tables on an exponential model, against an independent
// computation of the largest reachable distance straight from the closed form (physics notes §4):
// a dense scan of both ray families over the ray parameter, refined by golden-section search.
#include <catch2/catch.hpp>

#include <cmath>
#include <memory>

#include "core/constants.hpp"
#include "model/firn_model.hpp"
#include "solver/closed_form_solver.hpp"
#include "station/arrival_table.hpp"

using namespace firnray;

namespace {

std::shared_ptr<const FirnModel> firn(double n_deep, double n_surface, double z0) {
    auto model = std::make_shared<FirnModel>();
    model->name = "exponential test firn";
    model->index = std::make_shared<ExponentialProfile>(n_deep, n_surface, z0);
    return model;
}

// Largest distance reached by any ray joining depth z_s to depth z_r: both families, every ξ.
double largest_reach(const ClosedFormSolver& solver, double z_s, double z_r) {
    const auto& n = *solver.model().index;
    const double z_shallow = std::max(z_s, z_r), z_deep = std::min(z_s, z_r);
    const double n_end = n.index(z_shallow), n_top = n.index(0.0);
    auto reach = [&](double xi) {
        double best = 0.0;
        if (z_s != z_r) best = solver.segment(xi, z_shallow, z_deep).distance_m;
        const double top = xi >= n_top ? *solver.turning_z(xi, z_deep) : 0.0;
        return std::max(best, solver.segment(xi, top, z_s).distance_m + solver.segment(xi, top, z_r).distance_m);
    };
    const int samples = 200000;
    double best = reach(n_end);
    int best_k = samples;
    for (int k = 0; k < samples; ++k) {
        const double xi = n_end * k / samples;
        const double x = reach(xi);
        if (x > best) {
            best = x;
            best_k = k;
        }
    }
    if (best_k == samples) return best;
    double lo = n_end * std::max(0, best_k - 1) / samples, hi = n_end * std::min(samples, best_k + 1) / samples;
    const double g = 0.5 * (std::sqrt(5.0) - 1.0);
    for (int i = 0; i < 100; ++i) {
        const double a = hi - g * (hi - lo), b = lo + g * (hi - lo);
        if (reach(a) > reach(b)) hi = b;
        else lo = a;
    }
    return std::max(best, reach(0.5 * (lo + hi)));
}

}  // namespace

TEST_CASE("shadow boundary matches the largest reachable distance computed independently from the closed form (physics notes §4)",
          "[station][shadow-boundary]") {
    ClosedFormSolver solver(firn(1.78, 1.35, 37.0));
    for (double zr : {-40.0, -100.0, -200.0}) {
        std::vector<double> sources{-2.0, -15.0, -40.0, -75.0, -150.0, -300.0, -600.0};
        ArrivalTable table(solver, zr, sources);
        for (std::size_t row = 0; row < sources.size(); ++row) {
            const double expected = largest_reach(solver, sources[row], zr);
            INFO("receiver z " << zr << ", source z " << sources[row]);
            CHECK(table.max_reach_m(row) == Approx(expected).margin(1e-3));
            // Just inside the boundary a path exists; just outside none does.
            std::vector<MapArrival> found;
            table.arrivals(row, expected - 0.5, found);
            CHECK_FALSE(found.empty());
            table.arrivals(row, expected + 0.5, found);
            CHECK(found.empty());
        }
    }
}

TEST_CASE("arrival table times agree with exact root finding on the closed form (physics notes §4, TOMS748-free bisection)",
          "[station][arrival-table]") {
    ClosedFormSolver solver(firn(1.78, 1.35, 37.0));
    const double zr = -60.0;
    std::vector<double> sources{-5.0, -30.0, -60.5, -120.0, -400.0};
    ArrivalTable table(solver, zr, sources);
    std::vector<MapArrival> found;
    for (std::size_t row = 0; row < sources.size(); ++row) {
        const double zs = sources[row];
        for (double r : {10.0, 150.0, 400.0, 900.0}) {
            if (r > table.max_reach_m(row)) continue;
            table.arrivals(row, r, found);
            REQUIRE_FALSE(found.empty());
            // Direct path: bisection on the monotone x_D(ξ) of the closed form.
            if (found.front().kind == ArrivalKind::direct) {
                const double n_end = solver.model().index->index(std::max(zs, zr));
                double lo = 0.0, hi = 0.5 * pi;
                for (int i = 0; i < 200; ++i) {
                    const double mid = 0.5 * (lo + hi);
                    if (solver.segment(n_end * std::sin(mid), zs, zr).distance_m < r) lo = mid;
                    else hi = mid;
                }
                const double exact = solver.segment(n_end * std::sin(lo), zs, zr).time_s;
                INFO("source z " << zs << ", r " << r);
                CHECK(std::abs(found.front().time_s - exact) < 1e-11);  // 10 ps
            }
        }
    }
}

#include "station/visibility_map.hpp"

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

TEST_CASE("arrival tables obey reciprocity: swapping source and receiver depths gives the same arrivals (reciprocity theorem)",
          "[station][arrival-table]") {
    ClosedFormSolver solver(firn(1.78, 1.35, 37.0));
    const std::vector<double> depths{-10.0, -45.0, -130.0};
    std::vector<MapArrival> forward, backward;
    for (std::size_t a = 0; a < depths.size(); ++a) {
        const ArrivalTable from_a(solver, depths[a], depths);
        for (std::size_t b = 0; b < depths.size(); ++b) {
            if (a == b) continue;
            const ArrivalTable from_b(solver, depths[b], depths);
            CHECK(from_a.max_reach_m(b) == Approx(from_b.max_reach_m(a)).epsilon(1e-9));
            for (double r : {20.0, 120.0, 250.0, 400.0}) {
                from_a.arrivals(b, r, forward);
                from_b.arrivals(a, r, backward);
                INFO("depths " << depths[a] << " / " << depths[b] << ", r " << r);
                REQUIRE(forward.size() == backward.size());
                for (std::size_t k = 0; k < forward.size(); ++k) {
                    CHECK(forward[k].kind == backward[k].kind);
                    CHECK(std::abs(forward[k].time_s - backward[k].time_s) < 1e-12);
                    CHECK(forward[k].amplitude_per_m == Approx(backward[k].amplitude_per_m).epsilon(1e-3));
                }
            }
        }
    }
}

#include "paths/find_paths.hpp"

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
