// The shadow boundary of arrival tables on an exponential model, against an independent
// computation of the largest reachable distance straight from the closed form (docs/physics.md §3):
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

TEST_CASE("shadow boundary matches the largest reachable distance computed independently from the closed form (docs/physics.md §3)",
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

TEST_CASE("arrival table times agree with exact root finding on the closed form (docs/physics.md §3, TOMS748-free bisection)",
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
