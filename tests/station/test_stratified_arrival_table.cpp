// The stratified map table (station/stratified_arrival_table.hpp) against cell-by-cell path
// finding with find_stratified_paths (two independent uses of the Snell integrals: one tabulated
// and interpolated, one solved per pair), on a ducted profile whose n² is linear in z between
// knots (the linear layer: Budden, The Propagation of Radio Waves, 1985), on the exponential
// profile with a deep receiver, and on a model with a reflecting bottom.
#include <catch2/catch.hpp>

#include <algorithm>
#include <cmath>
#include <iomanip>
#include <memory>
#include <string>
#include <vector>

#include "core/constants.hpp"
#include "model/model_file.hpp"
#include "model/table_profile.hpp"
#include "solver/path_families.hpp"
#include "solver/stratified_solver.hpp"
#include "station/stratified_arrival_table.hpp"
#include "station/visibility_map.hpp"
#include "support/square_linear_profile.hpp"

using namespace firnray;

namespace {

std::shared_ptr<FirnModel> duct_model() {
    auto model = std::make_shared<FirnModel>();
    model->name = "duct";
    model->index = std::make_shared<test::SquareLinearProfile>(std::vector<double>{0.0, -20.0, -60.0, -200.0},
                                                               std::vector<double>{1.80, 3.10, 2.60, 3.16});
    return model;
}

ArrivalKind arrival_kind_of(StratifiedPathKind kind) {
    switch (kind) {
        case StratifiedPathKind::direct: return ArrivalKind::direct;
        case StratifiedPathKind::refracted: return ArrivalKind::refracted;
        case StratifiedPathKind::reflected: return ArrivalKind::reflected;
        case StratifiedPathKind::bottom: return ArrivalKind::bottom;
        case StratifiedPathKind::refracted_below: return ArrivalKind::refracted_below;
        case StratifiedPathKind::ducted: return ArrivalKind::ducted;
    }
    return ArrivalKind::direct;
}

struct Comparison {
    int cells = 0, seen = 0, count_mismatch = 0, kind_mismatch = 0, grazing = 0;
    int missed_by_reference = 0;  // table roots next to a minimum of n, confirmed with family_legs
    double worst_first_time_ns = 0.0;
};

// Every cell of a grid: the table's arrivals against find_stratified_paths. Cells whose exact
// paths come within `fold_margin_m` of a fold (two paths merging) may differ by that pair.
Comparison compare(const FirnModel& model, const StratifiedProfile& profile, double receiver_z,
                   const std::vector<double>& source_z, const std::vector<double>& distances, int max_bounces,
                   int ray_parameters = 1500, double confirm_window = 0.0) {
    StratifiedTableOptions options;
    options.max_bounces = max_bounces;
    options.ray_parameters = ray_parameters;
    options.threads = 2;
    const StratifiedArrivalTable table(model, profile, receiver_z, source_z, options);
    StratifiedPathOptions exact_options;
    exact_options.max_bounces = max_bounces;
    exact_options.scan_samples = 32;
    Comparison out;
    std::vector<MapArrival> found;
    for (std::size_t row = 0; row < source_z.size(); ++row)
        for (double distance : distances) {
            ++out.cells;
            table.arrivals(row, distance, found);
            auto exact = find_stratified_paths(profile, source_z[row], receiver_z, distance, exact_options);
            // Rays that graze a local minimum of n or a flat stretch (ξ within 1e-6 of its n) stay
            // beside it for a distance that grows like log(1/(ξ − n_min)) (like 1/√ along a flat
            // stretch): the reference resolves that limit only on one side of n_min, so both lists
            // are compared without them (counted apart).
            auto grazing = [&](double xi) {
                for (double z : profile.stationary_z())
                    if (std::abs(xi - profile.index(z)) < 1e-6) return true;
                return false;
            };
            const auto before = found.size() + exact.size();
            found.erase(std::remove_if(found.begin(), found.end(), [&](const MapArrival& a) { return grazing(a.ray_parameter); }),
                        found.end());
            exact.erase(std::remove_if(exact.begin(), exact.end(), [&](const StratifiedPath& p) { return grazing(p.ray_parameter); }),
                        exact.end());
            out.grazing += static_cast<int>(before - found.size() - exact.size());
            // Within `confirm_window` of a minimum of n, a table root that the reference lacks is
            // checked on its own: some family's legs at its ξ must reach this distance at its time.
            auto confirmed = [&](const MapArrival& a) {
                double gap = 1.0;  // ξ − n_min of the nearest minimum
                for (double z : profile.local_minima_z())
                    if (std::abs(a.ray_parameter - profile.index(z)) < std::abs(gap)) gap = a.ray_parameter - profile.index(z);
                if (!(std::abs(gap) < confirm_window)) return false;
                // An interpolated ξ is not exact: bisect X(ξ) = distance on this side of n_min.
                const double lo_xi = a.ray_parameter - 0.5 * gap, hi_xi = a.ray_parameter + 0.5 * gap;
                for (int ends = 0; ends <= max_bounces; ++ends)
                    for (bool upward : {true, false}) {
                        const PathFamily family{upward, ends};
                        auto legs_at = [&](double xi) {
                            return family_legs(profile, RayLevel::plain(xi), family, source_z[row], receiver_z);
                        };
                        double lo = std::min(lo_xi, hi_xi), hi = std::max(lo_xi, hi_xi);
                        const auto at_lo = legs_at(lo), at_hi = legs_at(hi);
                        if (!at_lo || !at_hi) continue;
                        const double f_lo = at_lo->total.distance_m - distance, f_hi = at_hi->total.distance_m - distance;
                        if (!(f_lo * f_hi <= 0.0)) continue;
                        for (int i = 0; i < 80; ++i) {
                            const double mid = 0.5 * (lo + hi);
                            const auto at_mid = legs_at(mid);
                            if (!at_mid) break;
                            if ((at_mid->total.distance_m - distance > 0.0) == (f_lo > 0.0)) lo = mid;
                            else hi = mid;
                        }
                        const auto root = legs_at(0.5 * (lo + hi));
                        if (root && std::abs(root->total.distance_m - distance) < 1e-3 &&
                            std::abs(root->total.optical_path_m / speed_of_light - a.time_s) * seconds_to_ns < 0.01)
                            return true;
                    }
                return false;
            };
            if (confirm_window > 0.0 && found.size() > exact.size()) {
                std::vector<MapArrival> kept;
                for (const MapArrival& a : found) {
                    const bool in_reference = std::any_of(exact.begin(), exact.end(), [&](const StratifiedPath& p) {
                        return std::abs(p.time_s - a.time_s) * seconds_to_ns < 0.01;
                    });
                    if (!in_reference && confirmed(a)) ++out.missed_by_reference;
                    else kept.push_back(a);
                }
                found = kept;
            }
            if (!exact.empty()) ++out.seen;
            if (found.size() != exact.size()) {
                ++out.count_mismatch;
                UNSCOPED_INFO("row z " << source_z[row] << " distance " << distance << ": table " << found.size()
                                       << " paths, exact " << exact.size());
                for (const auto& a : found) UNSCOPED_INFO("  table xi " << std::setprecision(12) << a.ray_parameter << " t " << a.time_s * seconds_to_ns);
                for (const auto& p : exact) UNSCOPED_INFO("  exact xi " << std::setprecision(12) << p.ray_parameter << " t " << p.time_s * seconds_to_ns);

                continue;
            }
            if (exact.empty()) continue;
            std::vector<int> table_kinds, exact_kinds;
            for (const auto& a : found) table_kinds.push_back(static_cast<int>(a.kind));
            for (const auto& p : exact) exact_kinds.push_back(static_cast<int>(arrival_kind_of(p.kind)));
            std::sort(table_kinds.begin(), table_kinds.end());
            std::sort(exact_kinds.begin(), exact_kinds.end());
            if (table_kinds != exact_kinds) ++out.kind_mismatch;
            out.worst_first_time_ns =
                std::max(out.worst_first_time_ns, std::abs(found[0].time_s - exact[0].time_s) * seconds_to_ns);
        }
    return out;
}

std::vector<double> spaced(double first, double last, int count) {
    std::vector<double> out;
    for (int i = 0; i < count; ++i) out.push_back(first + (last - first) * (i + 0.5) / count);
    return out;
}

}  // namespace

TEST_CASE("stratified map table on a ducted n²-linear profile agrees cell by cell with find_stratified_paths "
          "(linear layer, Budden 1985)",
          "[station][stratified-map]") {
    const auto model = duct_model();
    const StratifiedProfile profile(model->index);
    std::vector<double> source_z;
    for (double d : spaced(0.0, 150.0, 12)) source_z.push_back(-d);
    for (const double receiver_z : {-40.0, -10.0, -100.0}) {
        const Comparison c = compare(*model, profile, receiver_z, source_z, spaced(0.0, 800.0, 24), 3);
        INFO("receiver z " << receiver_z << ": " << c.cells << " cells, " << c.seen << " seen, " << c.grazing
                           << " grazing arrivals set apart");
        CHECK(c.seen > 0);
        CHECK(c.count_mismatch == 0);
        CHECK(c.kind_mismatch == 0);
        CHECK(c.worst_first_time_ns < 0.01);
    }
}

TEST_CASE("stratified map table with a deep receiver on the exponential profile agrees cell by cell with "
          "find_stratified_paths (two path finders on the same Snell integrals, common practice)",
          "[station][stratified-map]") {
    const FirnModel model = default_model();
    const StratifiedProfile profile(model.index);
    std::vector<double> source_z;
    for (double d : spaced(1000.0, 2000.0, 12)) source_z.push_back(-d);
    const Comparison c = compare(model, profile, -1500.0, source_z, spaced(0.0, 6000.0, 30), 1);
    INFO(c.cells << " cells, " << c.seen << " seen");
    CHECK(c.seen > 100);
    CHECK(c.count_mismatch == 0);
    CHECK(c.kind_mismatch == 0);
    CHECK(c.worst_first_time_ns < 0.01);
    // The same through the map: a deep receiver no longer fails.
    const auto shared = std::make_shared<FirnModel>(model);
    const StratifiedSolver solver(shared);
    Receiver receiver;
    receiver.name = "deep";
    receiver.z_m = -1500.0;
    MapGrid grid;
    grid.distance_max_m = 3000.0, grid.distance_cells = 10;
    grid.depth_min_m = 1000.0, grid.depth_max_m = 2000.0, grid.depth_cells = 5;
    VisibilityOptions options;
    const VisibilityMap map = compute_visibility_map(solver, std::span<const Receiver>(&receiver, 1), grid, options);
    CHECK(map.stratified);
    CHECK(map.left_out.empty());
    for (double reach : map.boundary_m) CHECK(reach > 0.0);
}

TEST_CASE("stratified map table with a reflecting bottom agrees cell by cell with find_stratified_paths, and the "
          "map shows positions seen only off the bottom (image-source geometry, common practice)",
          "[station][stratified-map]") {
    auto model = std::make_shared<FirnModel>(default_model());
    model->bottom = Bottom{-300.0, 0.5};
    const StratifiedProfile profile(model->index, model->bottom->z_m);
    std::vector<double> source_z;
    for (double d : spaced(0.0, 290.0, 15)) source_z.push_back(-d);
    const Comparison c = compare(*model, profile, -60.0, source_z, spaced(0.0, 2000.0, 25), 3);
    INFO(c.cells << " cells, " << c.seen << " seen");
    CHECK(c.count_mismatch == 0);
    CHECK(c.kind_mismatch == 0);
    CHECK(c.worst_first_time_ns < 0.01);

    const StratifiedSolver solver(model);
    Receiver receiver;
    receiver.name = "R";
    receiver.z_m = -60.0;
    MapGrid grid;
    grid.distance_max_m = 2000.0, grid.distance_cells = 20;
    grid.depth_max_m = 290.0, grid.depth_cells = 10;
    VisibilityOptions options;
    options.max_bounces = 1;
    const VisibilityMap map = compute_visibility_map(solver, std::span<const Receiver>(&receiver, 1), grid, options);
    CHECK(map.stratified);
    REQUIRE(map.left_out.size() == 1);
    CHECK(map.left_out[0].find("more than 1 turns") != std::string::npos);
    int bottom_only = 0;
    StratifiedPathOptions exact_options;
    exact_options.max_bounces = 1;
    for (int j = 0; j < grid.depth_cells; ++j)
        for (int i = 0; i < grid.distance_cells; ++i) {
            const MapCell& cell = map.at(j, i);
            if (cell.kinds != kind_bottom) continue;
            ++bottom_only;
            for (const auto& path : find_stratified_paths(profile, -grid.depth_at(j), -60.0, grid.distance_at(i), exact_options))
                CHECK(path.kind == StratifiedPathKind::bottom);
        }
    CHECK(bottom_only > 0);
    // Without bottom paths the same cells are shadow, and the map says what it left out.
    options.bottom_paths = false;
    const VisibilityMap without = compute_visibility_map(solver, std::span<const Receiver>(&receiver, 1), grid, options);
    CHECK_FALSE(without.stratified);
    REQUIRE_FALSE(without.left_out.empty());
    CHECK(without.left_out[0].find("bottom") != std::string::npos);
    for (std::size_t c = 0; c < map.cells.size(); ++c)
        if (map.cells[c].kinds == kind_bottom) CHECK(without.cells[c].receivers_seeing == 0);
}

TEST_CASE("station boundary: the largest distance where enough receivers see a source agrees with brute-force "
          "sampling of find_stratified_paths along the map line (definition)",
          "[station][stratified-map][boundary]") {
    const auto model = duct_model();
    const StratifiedSolver solver(model);
    const StratifiedProfile& profile = solver.stratified_profile();
    std::vector<Receiver> receivers(3);
    receivers[0] = {"A", "", -40.0, 10.0, -30.0};
    receivers[1] = {"B", "", 35.0, -20.0, -45.0};
    receivers[2] = {"C", "", 5.0, 60.0, -10.0};
    MapGrid grid;
    grid.distance_max_m = 600.0, grid.distance_cells = 12;
    grid.depth_min_m = 5.0, grid.depth_max_m = 65.0, grid.depth_cells = 3;
    VisibilityOptions options;
    options.min_receivers = 2;
    options.max_bounces = 1;
    options.azimuth_deg = 30.0;
    options.threads = 2;
    const VisibilityMap map = compute_visibility_map(solver, receivers, grid, options);
    StratifiedPathOptions exact_options;
    exact_options.max_bounces = 1;
    const double ux = std::cos(30.0 * pi / 180.0), uy = std::sin(30.0 * pi / 180.0);
    auto seeing = [&](double z, double d) {
        int count = 0;
        for (const Receiver& r : receivers) {
            const double rho = std::hypot(map.centre_x_m + d * ux - r.x_m, map.centre_y_m + d * uy - r.y_m);
            count += !find_stratified_paths(profile, z, r.z_m, rho, exact_options).empty();
        }
        return count;
    };
    int checked = 0;
    for (int j = 0; j < grid.depth_cells; ++j) {
        const double z = -grid.depth_at(j);
        // Brute force: the last sample (every 4 m to 900 m) seen by two receivers, refined by bisection.
        double last = -1.0;
        for (double d = 0.0; d <= 900.0; d += 4.0)
            if (seeing(z, d) >= 2) last = d;
        const double boundary = map.boundary_m[j];
        INFO("depth " << -z << ": map boundary " << boundary << ", brute force " << last);
        if (last < 0.0) {
            CHECK(std::isnan(boundary));
            continue;
        }
        if (last >= 896.0) {
            CHECK(boundary >= 896.0);
            continue;
        }
        double lo = last, hi = last + 4.0;
        for (int i = 0; i < 24; ++i) {
            const double mid = 0.5 * (lo + hi);
            if (seeing(z, mid) >= 2) lo = mid;
            else hi = mid;
        }
        CHECK(boundary == Approx(lo).margin(1e-3));
        ++checked;
    }
    CHECK(checked > 0);
}

namespace {

// The synthetic log of bench_stratified.cpp: an exponential trend, seasonal layering and an ice
// lens at 60 m, `points` knots one metre apart (monotone cubic interpolation between them).
std::shared_ptr<FirnModel> synthetic_log_model(int points) {
    std::vector<double> depth, n;
    unsigned state = 12345u;
    auto next_uniform = [&]() {
        state = state * 1664525u + 1013904223u;
        return (state >> 8) / 16777216.0;
    };
    for (int i = 0; i < points; ++i) {
        const double d = i;
        double value = 1.78 - 0.43 * std::exp(-d / 37.0) + 0.013 * std::sin(2.0 * 3.14159265358979 * d / 7.3) +
                       0.004 * (next_uniform() - 0.5);
        if (i == 60) value += 0.05;  // the ice lens
        depth.push_back(d);
        n.push_back(value);
    }
    auto model = std::make_shared<FirnModel>();
    model->name = "synthetic log";
    model->index = std::make_shared<TableProfile>(depth, n);
    return model;
}

}  // namespace

TEST_CASE("stratified map table on a measured-like log with inversions (trend, seasonal layering, ice lens) agrees "
          "cell by cell with find_stratified_paths (two path finders on the same Snell integrals, common practice)",
          "[station][stratified-map]") {
    // Every local minimum of n (one per season of the layering) makes X(ξ) diverge on both sides
    // of its n: each family then has a root next to it at every distance. find_stratified_paths
    // misses some of those within ~1e-4 of n_min: a table root it lacks there is confirmed on its
    // own with family_legs (its distance and time at its ξ). Roots within 1e-6 of n_min (the
    // reference finds some at ξ = n_min exactly) are set apart, as in the duct test.
    const auto model = synthetic_log_model(120);
    const StratifiedProfile profile(model->index);
    REQUIRE(profile.local_minima_z().size() > 10);
    std::vector<double> source_z;
    for (double d : spaced(0.0, 115.0, 8)) source_z.push_back(-d);
    const Comparison c = compare(*model, profile, -60.0, source_z, spaced(0.0, 1000.0, 16), 4, 1500, 1e-3);
    INFO(c.cells << " cells, " << c.seen << " seen, " << c.grazing << " grazing arrivals set apart, "
                 << c.missed_by_reference << " table roots missing from the reference but confirmed");
    CHECK(c.count_mismatch == 0);
    CHECK(c.seen > 60);
    CHECK(c.kind_mismatch == 0);
    CHECK(c.worst_first_time_ns < 0.01);
}

TEST_CASE("stratified map table on a log with flat stretches (n constant over 1.5 m at the surface, 1 m at 10 m and "
          "1 m below an inversion at 30 m) agrees cell by cell with find_stratified_paths (two path finders on the "
          "same Snell integrals, common practice)",
          "[station][stratified-map]") {
    // Made up for the test (not a site). A ray with ξ just below the n of a flat stretch crosses it
    // nearly horizontally (X grows like 1/√(n − ξ)); both path finders cut their ranges of ξ there.
    auto model = std::make_shared<FirnModel>();
    model->name = "flat stretches";
    model->index = std::make_shared<TableProfile>(
        std::vector<double>{0, 1.5, 3, 6, 10, 11, 20, 30, 31, 32, 33, 60, 100, 150},
        std::vector<double>{1.35, 1.35, 1.37, 1.40, 1.44, 1.44, 1.52, 1.60, 1.58, 1.58, 1.62, 1.72, 1.77, 1.78});
    const StratifiedProfile profile(model->index);
    REQUIRE(profile.stationary_z().size() >= 6);
    std::vector<double> source_z;
    for (double d : spaced(0.0, 120.0, 12)) source_z.push_back(-d);
    const Comparison c = compare(*model, profile, -20.0, source_z, spaced(0.0, 1200.0, 16), 2, 1500, 1e-3);
    INFO(c.cells << " cells, " << c.seen << " seen, " << c.grazing << " grazing arrivals set apart, "
                 << c.missed_by_reference << " table roots missing from the reference but confirmed");
    CHECK(c.count_mismatch == 0);
    CHECK(c.seen > 100);
    CHECK(c.kind_mismatch == 0);
    CHECK(c.worst_first_time_ns < 0.01);
}

TEST_CASE("positions inside a duct below an ice lens, beyond the reach of every path with fewer than two turns, are "
          "mapped as seen only through ducted paths (ducting under a high-index layer, Budden 1985 linear layer)",
          "[station][stratified-map][ducted]") {
    // n² linear between knots: a lens of high index at 20 m above a low-index layer at 60 m, so
    // rays with n(60 m) < ξ < n(20 m) starting near 60 m oscillate between two turning points.
    const auto model = duct_model();
    const StratifiedSolver solver(model);
    const StratifiedProfile& profile = solver.stratified_profile();
    Receiver receiver;
    receiver.name = "in the duct";
    receiver.z_m = -45.0;
    MapGrid grid;
    grid.distance_max_m = 1500.0, grid.distance_cells = 30;
    grid.depth_min_m = 30.0, grid.depth_max_m = 110.0, grid.depth_cells = 8;
    VisibilityOptions options;
    options.max_bounces = 4;
    options.threads = 2;
    const VisibilityMap map = compute_visibility_map(solver, std::span<const Receiver>(&receiver, 1), grid, options);
    REQUIRE(map.stratified);
    StratifiedPathOptions exact_options;
    exact_options.max_bounces = 4;
    int ducted_only = 0;
    for (int j = 0; j < grid.depth_cells; ++j)
        for (int i = 0; i < grid.distance_cells; ++i) {
            const MapCell& cell = map.at(j, i);
            if (cell.kinds != kind_ducted) continue;
            ++ducted_only;
            // The reference finds paths there, and every one of them has two turns or more.
            const auto paths = find_stratified_paths(profile, -grid.depth_at(j), -45.0, grid.distance_at(i), exact_options);
            INFO("depth " << grid.depth_at(j) << " m, distance " << grid.distance_at(i) << " m");
            CHECK_FALSE(paths.empty());
            for (const auto& path : paths) CHECK(path.kind == StratifiedPathKind::ducted);
        }
    CHECK(ducted_only > 0);
    // With at most one turn the same cells are shadow.
    options.max_bounces = 1;
    const VisibilityMap one_turn = compute_visibility_map(solver, std::span<const Receiver>(&receiver, 1), grid, options);
    for (std::size_t c = 0; c < map.cells.size(); ++c)
        if (map.cells[c].kinds == kind_ducted) CHECK(one_turn.cells[c].receivers_seeing == 0);
}

TEST_CASE("the memory estimate of the stratified table covers its cumulative legs, and is zero where maps use the "
          "fast table (definition)",
          "[station][stratified-map][memory]") {
    const auto log = synthetic_log_model(200);
    const StratifiedProfile profile(log->index);
    std::vector<double> source_z;
    for (double d : spaced(0.0, 190.0, 50)) source_z.push_back(-d);
    StratifiedTableOptions options;
    options.threads = 2;
    const StratifiedArrivalTable table(*log, profile, -60.0, source_z, options);
    const double legs_bytes = static_cast<double>(table.ray_parameter_samples()) * (source_z.size() + 1.0) *
                              (sizeof(std::int32_t) + 4 * sizeof(double));
    const double estimate = StratifiedArrivalTable::memory_estimate_bytes(profile, source_z.size(), options);
    CHECK(estimate >= legs_bytes);
    CHECK(estimate < 4.0 * legs_bytes);
    // Through the map commands' entry point: a log needs the table, the shallow exponential model does not.
    CHECK(stratified_map_memory_bytes(*log, 190.0, true, 500, 1500, 4) > 0.0);
    CHECK(stratified_map_memory_bytes(*log, 190.0, true, 1000, 1500, 4) > stratified_map_memory_bytes(*log, 190.0, true, 500, 1500, 4));
    CHECK(stratified_map_memory_bytes(default_model(), 500.0, true, 500, 1500, 4) == 0.0);
}

