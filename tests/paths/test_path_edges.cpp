// The edge positions of issue 9 through find_paths, each against an independent reference: the
// homogeneous straight line (definition) in n-flat deep ice, the closed form of the exponential
// profile (docs/physics.md §3) solved for ξ here by bisection, ∫ n dz for vertical paths, and the
// parabolic rays of a V-shaped n² profile (the linear layer: Budden, The Propagation of Radio
// Waves, 1985) for ducted paths. Tolerances: 0.01 ns and 0.01°, as the issue asks.
#include <catch2/catch.hpp>

#include <cmath>
#include <memory>
#include <optional>
#include <string>
#include <vector>

#include "core/constants.hpp"
#include "core/errors.hpp"
#include "paths/find_paths.hpp"
#include "model/index_profile.hpp"
#include "model/table_profile.hpp"
#include "solver/closed_form_solver.hpp"
#include "solver/make_solver.hpp"
#include "support/square_linear_profile.hpp"
#include "support/test_profiles.hpp"

using namespace firnray;

namespace {

constexpr double time_tolerance_ns = 0.01, angle_tolerance_deg = 0.01;

// Generic firn inside the published ranges of docs/physics.md §1.2 (from memory), not a site.
std::shared_ptr<FirnModel> firn_with(std::shared_ptr<const IndexProfile> index) {
    auto model = std::make_shared<FirnModel>();
    model->name = "test firn";
    model->origin = "test";
    model->index = std::move(index);
    return model;
}
std::shared_ptr<FirnModel> exponential_model() { return firn_with(std::make_shared<ExponentialProfile>(1.78, 1.35, 37.0)); }

double ns(double seconds) { return seconds * 1e9; }
double deg(double radians) { return rad_to_deg(radians); }

// The first arrival in a homogeneous medium of index n: the straight line (definition).
void check_straight_line(const std::vector<ConnectedPath>& paths, double n, double r, double zs, double zr) {
    REQUIRE_FALSE(paths.empty());
    const ConnectedPath& first = paths.front();
    const double d = std::hypot(r, zr - zs);
    CHECK(std::abs(ns(first.time_s) - ns(n * d / speed_of_light)) <= time_tolerance_ns);
    const double zenith = deg(std::atan2(r, zr - zs));  // 0 up, 180 down
    CHECK(std::abs(deg(first.launch_zenith_rad) - zenith) <= angle_tolerance_deg);
    CHECK(std::abs(deg(first.arrival_zenith_rad) - zenith) <= angle_tolerance_deg);
    CHECK(first.length_m == Approx(d).epsilon(1e-5));
}

}  // namespace

TEST_CASE("deep pairs at 1.3, 2 and 3 km take the straight line with n = n_deep on exponential, layered, table and "
          "constant profiles (homogeneous medium, definition)",
          "[paths][edges]") {
    struct Case {
        std::string name;
        std::shared_ptr<FirnModel> model;
        SolverChoice choice;
    };
    const auto table = std::make_shared<TableProfile>(std::vector<double>{0, 10, 40, 100, 200},
                                                      std::vector<double>{1.35, 1.5, 1.65, 1.75, 1.78});
    const std::vector<Case> cases{
        {"exponential, closed form", exponential_model(), SolverChoice::closed},
        {"exponential, auto", exponential_model(), SolverChoice::automatic},
        {"exponential, numeric", exponential_model(), SolverChoice::numeric},
        {"layered, auto", firn_with(std::make_shared<test::TwoStageProfile>(1.78, 1.35, 30.0, -10.0, 37.0)),
         SolverChoice::automatic},
        {"table, auto", firn_with(table), SolverChoice::automatic},
        {"constant, auto", firn_with(std::make_shared<ConstantProfile>(1.78)), SolverChoice::automatic},
    };
    struct Pair {
        double zs, zr, r;
    };
    for (const Case& c : cases) {
        const auto solver = make_solver(c.model, c.choice);
        for (const Pair& p : {Pair{-1300, -1300, 300}, Pair{-2000, -2000, 1000}, Pair{-3000, -3000, 50},
                              Pair{-1300, -2000, 300}, Pair{-3000, -2000, 500}, Pair{-1300, -3000, 100}}) {
            INFO(c.name << ": z " << p.zs << " to " << p.zr << " m, r " << p.r << " m");
            const auto paths = find_paths(*solver, {0.0, 0.0, p.zs}, {p.r, 0.0, p.zr});
            check_straight_line(paths, 1.78, p.r, p.zs, p.zr);
            for (const ConnectedPath& path : paths) {
                CHECK(path.length_m < 1e5);  // never the 6e9 m "refracted" path of old
                CHECK(path.time_s * speed_of_light >= 1.78 * std::hypot(p.r, p.zr - p.zs) * (1.0 - 1e-9));
            }
        }
    }
}

TEST_CASE("equal depths at 5 m, 300 m and 1 km and tiny separations give the closed form's paths on every solver "
          "(closed form of the exponential profile solved by bisection, straight line for short pairs)",
          "[paths][edges]") {
    const auto model = exponential_model();
    const ClosedFormSolver closed(model);
    const double n_surface = 1.35;
    // The refracted and reflected paths of two ends at depth z, from the closed form's legs.
    auto reference = [&](double z, double r) {
        std::vector<std::pair<double, double>> out;  // (time ns, launch zenith deg)
        const double n_end = model->index->index(z);
        auto refracted_x = [&](double xi) { return 2.0 * closed.distance_to_turning(xi, z).distance_m; };
        auto reflected_x = [&](double xi) { return 2.0 * closed.segment(xi, z, 0.0).distance_m; };
        auto solve = [&](auto x_of, double lo, double hi) -> std::optional<double> {
            double flo = x_of(lo) - r, fhi = x_of(hi) - r;
            if (flo * fhi > 0.0) return std::nullopt;
            for (int i = 0; i < 200; ++i) {
                const double mid = 0.5 * (lo + hi), fm = x_of(mid) - r;
                if ((fm < 0.0) == (flo < 0.0)) lo = mid, flo = fm;
                else hi = mid, fhi = fm;
            }
            return 0.5 * (lo + hi);
        };
        // The refracted family's X falls from its largest value to 0 as ξ → n(z): bracket on the
        // falling side of the scan.
        double best = n_surface, best_x = 0.0;
        for (int i = 1; i < 4000; ++i) {
            const double xi = n_surface + (n_end - n_surface) * i / 4000.0;
            const double x = refracted_x(xi);
            if (x > best_x) best_x = x, best = xi;
        }
        if (const auto xi = solve(refracted_x, best, n_end * (1.0 - 1e-15))) {
            const double turn = *closed.turning_z(*xi, z);
            out.push_back({ns(2.0 * closed.segment(*xi, z, turn).time_s), deg(std::asin(*xi / n_end))});
        }
        if (const auto xi = solve(reflected_x, 0.0, n_surface * (1.0 - 1e-12)))
            out.push_back({ns(2.0 * closed.segment(*xi, z, 0.0).time_s), deg(std::asin(*xi / n_end))});
        return out;
    };
    for (const SolverChoice choice : {SolverChoice::closed, SolverChoice::numeric, SolverChoice::stratified}) {
        const auto solver = make_solver(model, choice);
        for (const auto& [z, r] : {std::pair{-5.0, 50.0}, std::pair{-300.0, 300.0}}) {
            INFO("solver " << solver->name() << ", z " << z << " m, r " << r << " m");
            const auto paths = find_paths(*solver, {0.0, 0.0, z}, {r, 0.0, z});
            const auto expected = reference(z, r);
            REQUIRE_FALSE(expected.empty());
            REQUIRE(paths.size() == expected.size());
            for (const auto& [time, launch] : expected) {
                bool matched = false;
                for (const ConnectedPath& p : paths)
                    matched = matched || (std::abs(ns(p.time_s) - time) <= time_tolerance_ns &&
                                          std::abs(deg(p.launch_zenith_rad) - launch) <= angle_tolerance_deg);
                CHECK(matched);
            }
        }
        // 1 km: n is n_deep to 4e-13 there, the straight line.
        check_straight_line(find_paths(*solver, {0.0, 0.0, -1000.0}, {300.0, 0.0, -1000.0}), 1.78, 300.0, -1000.0, -1000.0);
        // Tiny separations, equal and unequal depths at 100 m: the straight line with the mean n.
        for (const double d : {1e-6, 1e-3, 0.1}) {
            for (const bool equal : {true, false}) {
                const double zr = equal ? -100.0 : -100.0 - d, r = d;
                INFO("solver " << solver->name() << ", separation " << d << " m, equal depths " << equal);
                const double n_mean = 0.5 * (model->index->index(-100.0) + model->index->index(zr));
                check_straight_line(find_paths(*solver, {0.0, 0.0, -100.0}, {r, 0.0, zr}), n_mean, r, -100.0, zr);
            }
        }
    }
}

TEST_CASE("vertical pairs take the vertical line with time ∫ n dz / c, launched up at 0 and down at 180 degrees "
          "(exponential integral, definition of the zenith)",
          "[paths][edges]") {
    const auto model = exponential_model();
    // ∫ n dz for n = A − B e^{z/L}, from z1 up to z2 (both <= 0).
    auto optical = [](double z1, double z2) {
        const double a = 1.78, b = 0.43, l = 37.0;
        return a * (z2 - z1) - b * l * (std::exp(z2 / l) - std::exp(z1 / l));
    };
    struct Case {
        double zs, zr, optical_m, launch_deg;
    };
    const std::vector<Case> cases{
        {-50.0, -150.0, optical(-150.0, -50.0), 180.0},   // down in the ice
        {-150.0, -50.0, optical(-150.0, -50.0), 0.0},     // up in the ice
        {0.0, 10.0, 10.0, 0.0},                           // surface to air
        {10.0, 0.0, 10.0, 180.0},                         // air to surface
        {-20.0, 10.0, optical(-20.0, 0.0) + 10.0, 0.0},   // ice to air
        {10.0, -20.0, optical(-20.0, 0.0) + 10.0, 180.0}, // air to ice
    };
    for (const SolverChoice choice : {SolverChoice::closed, SolverChoice::numeric, SolverChoice::stratified}) {
        const auto solver = make_solver(model, choice);
        for (const Case& c : cases) {
            INFO("solver " << solver->name() << ", z " << c.zs << " to " << c.zr << " m");
            const auto paths = find_paths(*solver, {0.0, 0.0, c.zs}, {0.0, 0.0, c.zr});
            REQUIRE_FALSE(paths.empty());
            CHECK(std::abs(ns(paths.front().time_s) - ns(c.optical_m / speed_of_light)) <= time_tolerance_ns);
            CHECK(std::abs(deg(paths.front().launch_zenith_rad) - c.launch_deg) <= angle_tolerance_deg);
            CHECK(std::abs(deg(paths.front().arrival_zenith_rad) - c.launch_deg) <= angle_tolerance_deg);
        }
    }
}

TEST_CASE("ends on and just above the surface: the straight air line from a source on the surface, a source 1e-6 m "
          "up as one on the surface, no ray between two surface points (definition, Snell's law)",
          "[paths][edges]") {
    const auto model = exponential_model();
    for (const SolverChoice choice : {SolverChoice::closed, SolverChoice::stratified}) {
        const auto solver = make_solver(model, choice);
        INFO("solver " << solver->name());
        // A source exactly on the surface, a receiver in the air: the straight line in the air.
        const auto up = find_paths(*solver, {0.0, 0.0, 0.0}, {100.0, 0.0, 10.0});
        REQUIRE(up.size() == 1u);
        CHECK(up[0].kind == PathKind::transmitted);
        CHECK(std::abs(ns(up[0].time_s) - ns(std::hypot(100.0, 10.0) / speed_of_light)) <= time_tolerance_ns);
        // Launched in the firn at the surface: Snell's law from the air zenith atan(100/10).
        const double launch = std::asin(std::sin(std::atan2(100.0, 10.0)) / 1.35);
        CHECK(std::abs(deg(up[0].launch_zenith_rad) - deg(launch)) <= angle_tolerance_deg);
        CHECK(std::abs(deg(up[0].arrival_zenith_rad) - deg(std::atan2(100.0, 10.0))) <= angle_tolerance_deg);
        // Other heights and distances, where tan(atan2(R, h))·h rounds below R: still the air line.
        for (const auto& [r, h] : {std::pair{50.0, 10.0}, std::pair{3.0, 7.0}, std::pair{1000.0, 1.0},
                                   std::pair{37.3, 12.9}, std::pair{0.001, 25.0}}) {
            INFO("receiver in the air at r " << r << " m, height " << h << " m");
            const auto line = find_paths(*solver, {0.0, 0.0, 0.0}, {r, 0.0, h});
            REQUIRE(line.size() == 1u);
            CHECK(std::abs(ns(line[0].time_s) - ns(std::hypot(r, h) / speed_of_light)) <= time_tolerance_ns);
            CHECK(std::abs(deg(line[0].arrival_zenith_rad) - deg(std::atan2(r, h))) <= angle_tolerance_deg);
        }
        // A source 1e-6 m above the surface reaches an ice receiver as a source on the surface does
        // (the 1e-6 m of air add 3e-6 ns), also where its air leg must graze the surface.
        for (const auto& [r, z] : {std::pair{20.0, -50.0}, std::pair{10.0, -5.0}, std::pair{100.0, -50.0}}) {
            INFO("receiver at r " << r << " m, z " << z << " m");
            const auto above = find_paths(*solver, {0.0, 0.0, 1e-6}, {r, 0.0, z});
            REQUIRE_FALSE(above.empty());
            const auto back = find_paths(*solver, {r, 0.0, z}, {0.0, 0.0, 1e-6});
            REQUIRE(back.size() == above.size());
            CHECK(std::abs(ns(back[0].time_s) - ns(above[0].time_s)) <= 1e-9);  // reciprocity
            if (r == 20.0) {
                const auto on = find_paths(*solver, {0.0, 0.0, 0.0}, {r, 0.0, z});
                REQUIRE_FALSE(on.empty());
                CHECK(std::abs(ns(above[0].time_s) - ns(on[0].time_s)) <= time_tolerance_ns);
            }
        }
        // Both ends on the surface: rays from the surface bend down into denser firn and never
        // come back, and a reflection at an end is none: no ray path (the shadow), not a failure.
        CHECK(find_paths(*solver, {0.0, 0.0, 0.0}, {100.0, 0.0, 0.0}).empty());
    }
}

TEST_CASE("ducted paths in a V-shaped n² profile: their number and times are those of the parabolic rays "
          "(linear layer, Budden 1985)",
          "[paths][edges]") {
    // n² rises with depth to z = −20 m, falls to −60 m and rises again: a duct around −20 m.
    const auto profile = std::make_shared<test::SquareLinearProfile>(std::vector<double>{0.0, -20.0, -60.0, -200.0},
                                                                     std::vector<double>{1.80, 3.10, 2.60, 3.16});
    const auto model = firn_with(profile);
    const auto solver = make_solver(model, SolverChoice::automatic);
    REQUIRE(solver->name() == "stratified");
    const double zs = -25.0, zr = -35.0, r = 600.0;  // a traversal of the duct is about 190 m
    PathOptions options;
    options.max_bounces = 4;
    const auto paths = find_paths(*solver, {0.0, 0.0, zs}, {r, 0.0, zr}, options);

    // The closed form: X(ξ) of each family (ends U, L, U, … or L, U, …) from the parabolic legs.
    auto family_x = [&](double xi, bool upward, int ends, double* optical) -> std::optional<double> {
        const auto e = profile->ends(xi, zs);
        if ((ends >= 2 || !upward) && !e.lower) return std::nullopt;
        if (e.lower && zr < *e.lower) return std::nullopt;
        if (zr > e.upper) return std::nullopt;
        const double lower = e.lower.value_or(0.0);
        const bool last_upper = upward == ((ends - 1) % 2 == 0);
        const auto first = profile->leg(xi, zs, upward ? e.upper : lower);
        const auto last = profile->leg(xi, last_upper ? e.upper : lower, zr);
        double x = first.distance + last.distance, t = first.optical + last.optical;
        if (ends >= 2) {
            const auto full = profile->leg(xi, e.upper, lower);
            x += (ends - 1) * full.distance;
            t += (ends - 1) * full.optical;
        }
        if (optical) *optical = t;
        return x;
    };
    std::vector<double> expected_ducted;  // times (ns) of the ducted paths: ≥ 2 turns, none at a reflection
    const double xi_high = std::min(profile->index(zs), profile->index(zr)), xi_low = std::sqrt(2.60);
    for (int ends = 2; ends <= 4; ++ends) {
        for (const bool upward : {true, false}) {
            const int samples = 20000;
            auto f = [&](double xi) {
                const auto x = family_x(xi, upward, ends, nullptr);
                return x ? *x - r : std::nan("");
            };
            double previous_xi = xi_low + (xi_high - xi_low) * 1e-9, previous = f(previous_xi);
            for (int i = 1; i <= samples; ++i) {
                const double xi = xi_low + (xi_high - xi_low) * (i / double(samples)) * (1.0 - 1e-12);
                const double value = f(xi);
                if (std::isfinite(previous) && std::isfinite(value) && previous * value < 0.0) {
                    double lo = previous_xi, hi = xi, flo = previous;
                    for (int k = 0; k < 200; ++k) {
                        const double mid = 0.5 * (lo + hi), fm = f(mid);
                        if ((fm < 0.0) == (flo < 0.0)) lo = mid, flo = fm;
                        else hi = mid;
                    }
                    double optical = 0.0;
                    const double xi_root = 0.5 * (lo + hi);
                    if (std::abs(*family_x(xi_root, upward, ends, &optical) - r) < 1e-6 &&
                        profile->ends(xi_root, zs).upper_turning)
                        expected_ducted.push_back(ns(optical / speed_of_light));
                }
                previous_xi = xi;
                previous = value;
            }
        }
    }
    REQUIRE_FALSE(expected_ducted.empty());
    std::vector<double> found_ducted;
    for (const ConnectedPath& p : paths) {
        if (p.kind != PathKind::ducted) continue;
        found_ducted.push_back(ns(p.time_s));
        // Turns alternate between the two ends of the duct, in order from the source.
        REQUIRE(p.events.size() >= 2u);
        CHECK(p.turning_points == static_cast<int>(p.events.size()));
        for (std::size_t i = 1; i < p.events.size(); ++i) CHECK(p.events[i].offset_m > p.events[i - 1].offset_m);
        CHECK(std::abs(p.events[0].z_m - p.events[1].z_m) > 1.0);
    }
    CHECK(found_ducted.size() == expected_ducted.size());
    for (const double t : expected_ducted) {
        bool matched = false;
        for (const double u : found_ducted) matched = matched || std::abs(u - t) <= time_tolerance_ns;
        INFO("closed-form ducted path at " << t << " ns");
        CHECK(matched);
    }
}

TEST_CASE("the numeric solver refuses a profile whose index falls with depth, naming the model and the depth "
          "(exit code 3 in the commands)",
          "[paths][edges]") {
    const auto profile = std::make_shared<test::SquareLinearProfile>(std::vector<double>{0.0, -20.0, -60.0, -200.0},
                                                                     std::vector<double>{1.80, 3.10, 2.60, 3.16});
    const auto model = firn_with(profile);
    model->name = "lens";
    try {
        make_solver(model, SolverChoice::numeric);
        FAIL("no error");
    } catch (const ModelInputError& e) {
        const std::string message = e.what();
        CHECK(message.find("'lens'") != std::string::npos);
        CHECK(message.find("from depth 20 m") != std::string::npos);
    }
    CHECK(parse_solver_choice("stratified") == SolverChoice::stratified);
    CHECK_THROWS_AS(parse_solver_choice("stratify"), DataInputError);
}
