// The stratified core (solver/stratified_intervals, snell_integrals, path_families) against the
// closed form of a profile whose n² is linear in z between knots: rays are parabolas,
// x − x0 = 2ξ(Q − Q0)/b and c·T − c·T0 = (2/(3b))(Q³ − Q0³) + 2ξ²(Q − Q0)/b (the linear layer:
// Budden, The Propagation of Radio Waves, 1985; Červený, Seismic Ray Theory, 2001). The profile
// has a duct: n² rises with depth to z = −20 m, falls to z = −60 m and rises again.
#include <catch2/catch.hpp>

#include <algorithm>
#include <cmath>
#include <map>
#include <memory>
#include <string>

#include "core/constants.hpp"
#include "solver/path_families.hpp"
#include "support/square_linear_profile.hpp"

using namespace firnray;

namespace {

std::shared_ptr<test::SquareLinearProfile> duct_profile() {
    return std::make_shared<test::SquareLinearProfile>(std::vector<double>{0.0, -20.0, -60.0, -200.0},
                                                       std::vector<double>{1.80, 3.10, 2.60, 3.16});
}

// X and c·T of a family (ends U, L, U, … or L, U, …) in the closed form; empty when it does not exist.
struct ClosedFamily {
    double distance = 0.0, optical = 0.0;
};
std::optional<ClosedFamily> closed_family(const test::SquareLinearProfile& p, double xi, bool upward, int ends,
                                          double zs, double zr) {
    const auto e = p.ends(xi, zs);
    ClosedFamily out;
    auto add = [&](const test::SquareLinearProfile::Leg& leg, double times = 1.0) {
        out.distance += times * leg.distance;
        out.optical += times * leg.optical;
    };
    if (ends == 0) {
        add(p.leg(xi, zs, zr));
        return out;
    }
    if ((ends >= 2 || !upward) && !e.lower) return std::nullopt;
    const double lower = e.lower.value_or(0.0);
    const bool last_upper = upward == ((ends - 1) % 2 == 0);
    add(p.leg(xi, zs, upward ? e.upper : lower));
    add(p.leg(xi, last_upper ? e.upper : lower, zr));
    if (ends >= 2) add(p.leg(xi, e.upper, lower), ends - 1);
    return out;
}

}  // namespace

TEST_CASE("stratified intervals, inversions and ducts of a piecewise n² profile match n² = ξ solved by hand "
          "(linear layer, Budden 1985)",
          "[solver][stratified]") {
    const StratifiedProfile profile(duct_profile());
    const auto inversions = profile.inversions();
    REQUIRE(inversions.size() == 1);
    CHECK(inversions[0].z_top == Approx(-20.0).margin(1e-9));
    CHECK(inversions[0].z_bottom == Approx(-60.0).margin(1e-9));
    const auto ducts = profile.ducts();
    REQUIRE(ducts.size() == 1);
    CHECK(ducts[0].axis_z == Approx(-20.0).margin(1e-9));
    CHECK(ducts[0].ray_parameter_low == Approx(std::sqrt(2.60)).epsilon(1e-12));
    CHECK(ducts[0].ray_parameter_high == Approx(std::sqrt(3.10)).epsilon(1e-12));
    CHECK(ducts[0].z_top == Approx((2.60 - 1.80) / -0.065).margin(1e-5));
    CHECK(ducts[0].z_bottom == Approx(-60.0).margin(1e-5));
    CHECK_FALSE(ducts[0].surface_ray_parameter);

    for (double xi : {0.5, 1.2, 1.4, 1.5, 1.65, 1.70, 1.75}) {
        const auto p = duct_profile();
        const auto expected = p->ends(xi, -30.0);
        const auto interval = profile.interval_around(xi, -30.0);
        INFO("ξ " << xi);
        if (p->index(-30.0) <= xi) {
            CHECK_FALSE(interval);
            continue;
        }
        REQUIRE(interval);
        CHECK((interval->upper_kind == UpperEndKind::turning) == expected.upper_turning);
        CHECK(interval->upper_z == Approx(expected.upper).margin(1e-10));
        CHECK((interval->lower_kind == LowerEndKind::turning) == expected.lower.has_value());
        if (expected.lower) CHECK(interval->lower_z == Approx(*expected.lower).margin(1e-10));
        CHECK(interval->is_duct() == (xi > std::sqrt(2.60)));
    }
    // Above the duct's top ξ nothing is accessible at its axis; below −60 m a second interval opens.
    CHECK_FALSE(profile.interval_around(1.77, -20.0));
    const auto all = profile.intervals(1.70);
    REQUIRE(all.size() == 2);
    CHECK(all[0].is_duct());
    CHECK(all[1].lower_kind == LowerEndKind::unbounded);
}

TEST_CASE("stratified legs with fixed and turning ends agree with the parabolic closed form of the linear "
          "layer (Budden 1985, Červený 2001)",
          "[solver][stratified]") {
    const auto p = duct_profile();
    const StratifiedProfile profile(p);
    double worst_distance = 0.0, worst_time = 0.0;
    for (double xi : {0.0, 0.3, 1.2, 1.33, 1.5, 1.62, 1.65, 1.70, 1.74}) {
        const auto interval = profile.interval_around(xi, -30.0);
        if (!interval) continue;
        const auto ends = p->ends(xi, -30.0);
        const LegEndpoint upper{interval->upper_z, interval->upper_kind == UpperEndKind::turning ? LegEnd::turning : LegEnd::fixed};
        struct Case {
            LegEndpoint a, b;
            double za, zb;
        };
        std::vector<Case> cases{{{-30.0}, upper, -30.0, ends.upper}, {{-30.0}, {-25.0}, -30.0, -25.0},
                                {{-21.0}, {-19.0}, -21.0, -19.0}, {{-30.0}, {-30.0 + 1e-7}, -30.0, -30.0 + 1e-7}};
        if (ends.lower) {
            const LegEndpoint lower{interval->lower_z, LegEnd::turning};
            cases.push_back({upper, lower, ends.upper, *ends.lower});
            cases.push_back({{-30.0}, lower, -30.0, *ends.lower});
        } else {
            cases.push_back({{-30.0}, {-500.0}, -30.0, -500.0});
        }
        for (const Case& c : cases) {
            const auto got = leg_integrals(profile, RayLevel::plain(xi), c.a, c.b);
            const auto ref = p->leg(xi, c.za, c.zb);
            INFO("ξ " << xi << " from " << c.za << " to " << c.zb);
            CHECK(got.distance_m == Approx(ref.distance).epsilon(1e-11).margin(1e-11));
            CHECK(got.optical_path_m == Approx(ref.optical).epsilon(1e-11).margin(1e-12));
            CHECK(got.length_m == Approx(ref.length).epsilon(1e-11).margin(1e-12));
            worst_distance = std::max(worst_distance, std::abs(got.distance_m - ref.distance));
            worst_time = std::max(worst_time, std::abs(got.optical_path_m - ref.optical) / speed_of_light);
        }
    }
    WARN("largest leg error against the closed form: " << worst_distance << " m, " << worst_time * 1e9 << " ns");
}

TEST_CASE("stratified ∂x/∂ξ of legs, fixed and turning ends, agrees with central differences of the closed form "
          "of the linear layer (Budden 1985)",
          "[solver][stratified]") {
    const auto p = duct_profile();
    const StratifiedProfile profile(p);
    for (double xi : {1.4, 1.5, 1.65, 1.70}) {
        const double h = 1e-6;
        auto closed_to_turn = [&](double x) { return p->leg(x, -30.0, p->ends(x, -30.0).upper).distance; };
        const double fd_turn = (closed_to_turn(xi + h) - closed_to_turn(xi - h)) / (2 * h);
        const auto interval = profile.interval_around(xi, -30.0);
        REQUIRE(interval);
        const auto turn = leg_integrals(profile, RayLevel::plain(xi), {-30.0}, {interval->upper_z, LegEnd::turning});
        INFO("ξ " << xi);
        CHECK(turn.distance_derivative == Approx(fd_turn).epsilon(1e-6));
        auto closed_fixed = [&](double x) { return p->leg(x, -30.0, -24.0).distance; };
        const double fd_fixed = (closed_fixed(xi + h) - closed_fixed(xi - h)) / (2 * h);
        const auto fixed = leg_integrals(profile, RayLevel::plain(xi), {-30.0}, {-24.0});
        CHECK(fixed.distance_derivative == Approx(fd_fixed).epsilon(1e-6));
        if (interval->is_duct()) {
            auto closed_traversal = [&](double x) {
                const auto e = p->ends(x, -30.0);
                return p->leg(x, e.upper, *e.lower).distance;
            };
            const double fd = (closed_traversal(xi + h) - closed_traversal(xi - h)) / (2 * h);
            const auto full = leg_integrals(profile, RayLevel::plain(xi), {interval->upper_z, LegEnd::turning},
                                            {interval->lower_z, LegEnd::turning});
            CHECK(full.distance_derivative == Approx(fd).epsilon(1e-6));
        }
    }
}

TEST_CASE("stratified paths in a duct: every ducted path, its number per family and its time agree with the "
          "parabolic closed form of the linear layer (Budden 1985, Červený 2001)",
          "[solver][stratified]") {
    const auto p = duct_profile();
    const StratifiedProfile profile(p);
    const double zs = -25.0, zr = -40.0;
    StratifiedPathOptions options;
    options.max_bounces = 8;
    for (double distance : {150.0, 800.0}) {
        const auto paths = find_stratified_paths(profile, zs, zr, distance, options);
        std::map<std::string, int> found;
        double worst_time = 0.0, worst_angle = 0.0;
        for (const auto& path : paths) {
            ++found[path.family];
            const bool upward = path.family == "direct" ? zr > zs : path.family[0] == 'U';
            const int ends = path.family == "direct" ? 0 : static_cast<int>(path.family.size());
            const auto ref = closed_family(*p, path.ray_parameter, upward, ends, zs, zr);
            REQUIRE(ref);
            INFO(path.family << " ξ " << path.ray_parameter);
            CHECK(ref->distance == Approx(distance).epsilon(1e-9));
            worst_time = std::max(worst_time, std::abs(path.time_s - ref->optical / speed_of_light));
            const double q = std::sqrt(p->index(zs) * p->index(zs) - path.ray_parameter * path.ray_parameter);
            const double launch = upward ? std::atan2(path.ray_parameter, q) : pi - std::atan2(path.ray_parameter, q);
            worst_angle = std::max(worst_angle, std::abs(launch - path.launch_zenith_rad));
            if (ends >= 2) CHECK(path.kind == StratifiedPathKind::ducted);
            CHECK(static_cast<int>(path.turns.size()) == ends);
        }
        CHECK(worst_time < 1e-14);                 // 0.01 ps; the project asks 0.01 ns
        CHECK(worst_angle < deg_to_rad(1e-9));
        // Count the roots of each family by scanning the closed form finely in ξ.
        const double xi_max = p->index(zr);
        for (int ends = 0; ends <= options.max_bounces; ++ends)
            for (bool upward : {true, false}) {
                if (ends == 0 && !upward) continue;
                const std::string label = ends == 0 ? "direct" : PathFamily{upward, ends}.label();
                int roots = 0;
                std::optional<double> previous;
                constexpr int steps = 200000;
                for (int i = 1; i < steps; ++i) {
                    const double xi = xi_max * i / steps;
                    const auto f = closed_family(*p, xi, ends == 0 ? zr > zs : upward, ends, zs, zr);
                    if (!f || !std::isfinite(f->distance)) {
                        previous.reset();
                        continue;
                    }
                    const double value = f->distance - distance;
                    if (previous && value * *previous < 0.0) ++roots;
                    previous = value;
                }
                INFO("R " << distance << " family " << label);
                CHECK(found[label] == roots);
            }
        WARN("R " << distance << " m: " << paths.size() << " paths, largest time error " << worst_time * 1e9
                  << " ns, launch angle " << rad_to_deg(worst_angle) << " deg");
    }
}

TEST_CASE("stratified paths grazing the duct's minimum of n from both sides (ξ within 1e-3 to 1e-12 of it) are "
          "all found, with the times of the parabolic closed form of the linear layer (Budden 1985)",
          "[solver][stratified]") {
    // Below the minimum at −60 m a ray turns just under it (ξ above n_min) or crosses it nearly
    // horizontally into the duct and turns near the surface (ξ below n_min): X jumps there, and
    // the samples at the cut itself belong to the other side.
    const auto p = duct_profile();
    const StratifiedProfile profile(p);
    const double n_min = std::sqrt(2.60), zs = -65.6, zr = -100.0;
    int checked = 0;
    for (double offset : {1e-3, 1e-5, 1.6e-8, 1e-10, 1e-12}) {
        for (double side : {1.0, -1.0}) {
            const double xi = n_min + side * offset;
            for (bool upward : {false, true}) {
                const auto ref = closed_family(*p, xi, upward, upward ? 1 : 0, zs, zr);
                REQUIRE(ref);
                const double distance = ref->distance;
                const auto paths = find_stratified_paths(profile, zs, zr, distance);
                const std::string label = upward ? "U" : "direct";
                INFO("ξ − n_min " << side * offset << ", family " << label << ", R " << distance << " m");
                auto found = std::find_if(paths.begin(), paths.end(), [&](const StratifiedPath& path) {
                    // ξ to what 1e-11 of R says about it (X is steep here: ∂X/∂ξ ~ 1e4 m).
                    return path.family == label &&
                           std::abs(path.ray_parameter - xi) <= 1e-11 * distance / std::abs(path.distance_derivative) + 1e-15;
                });
                REQUIRE(found != paths.end());
                CHECK(found->time_s == Approx(ref->optical / speed_of_light).epsilon(1e-12));
                ++checked;
            }
        }
    }
    CHECK(checked == 20);
}
