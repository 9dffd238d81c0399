// Every path between a source and a receiver, against outside references: straight lines and
// image sources in a homogeneous medium (definition), the reciprocity theorem, Fermat's
// principle, Snell's law, Hecht's Fresnel formulas, dT/dR = ξ/c along a family (definition of the
// ray parameter), and the reach of the closed-form families computed here by a plain scan.
#include <catch2/catch.hpp>

#include <algorithm>
#include <cmath>
#include <complex>
#include <cstdint>
#include <memory>
#include <vector>

#include <boost/math/tools/minima.hpp>

#include "core/constants.hpp"
#include "core/errors.hpp"
#include "paths/find_paths.hpp"
#include "solver/closed_form_solver.hpp"
#include "solver/numeric_solver.hpp"
#include "support/straight_line_solver.hpp"
#include "support/test_profiles.hpp"

using namespace firnray;

namespace {

// Generic firn inside the published ranges of docs/physics.md §1.2 (from memory), not a site.
std::shared_ptr<FirnModel> firn_model() {
    auto model = std::make_shared<FirnModel>();
    model->name = "test firn";
    model->origin = "test";
    model->index = std::make_shared<ExponentialProfile>(1.78, 1.35, 40.0);
    return model;
}

// Hecht, Optics (§4.6): the textbook formulas, with cos θt = +i√(sin²θt − 1) beyond the
// critical angle.
struct Hecht {
    std::complex<double> rs, rp, ts, tp;
};
Hecht hecht(double n1, double n2, double cos_i) {
    const double sin_i = std::sqrt(std::max(0.0, 1.0 - cos_i * cos_i));
    const double sin_t = n1 / n2 * sin_i;
    const std::complex<double> cos_t = sin_t <= 1.0 ? std::complex<double>(std::sqrt(1.0 - sin_t * sin_t), 0.0)
                                                    : std::complex<double>(0.0, std::sqrt(sin_t * sin_t - 1.0));
    Hecht h;
    h.rs = (n1 * cos_i - n2 * cos_t) / (n1 * cos_i + n2 * cos_t);
    h.rp = (n2 * cos_i - n1 * cos_t) / (n2 * cos_i + n1 * cos_t);
    h.ts = 2.0 * n1 * cos_i / (n1 * cos_i + n2 * cos_t);
    h.tp = 2.0 * n1 * cos_i / (n2 * cos_i + n1 * cos_t);
    return h;
}

bool close(std::complex<double> a, std::complex<double> b, double tolerance) { return std::abs(a - b) <= tolerance; }

// Vertical distance travelled, leg by leg from the source through every event to the receiver.
double vertical_travel(const ConnectedPath& p, double z_source, double z_receiver) {
    double total = 0.0, z = z_source;
    for (const PathEvent& e : p.events) {
        total += std::abs(e.z_m - z);
        z = e.z_m;
    }
    return total + std::abs(z_receiver - z);
}

}  // namespace

TEST_CASE("paths, homogeneous medium: every path is a straight line from an image source, T = n·d/c, L_eff = d, "
          "interface factors from Hecht and √R (definition, image sources, Hecht, Optics)",
          "[paths]") {
    const double n = 1.78, reflectivity = 0.25;
    auto model = std::const_pointer_cast<FirnModel>(test::homogeneous_model(n));
    model->bottom = Bottom{-500.0, reflectivity};
    const test::StraightLineSolver straight(model);
    const ClosedFormSolver closed(model);
    PathOptions options;
    options.max_bounces = 3;
    struct Pair {
        double zs, zr, r;
    };
    for (const RaySolver* solver : {static_cast<const RaySolver*>(&straight), static_cast<const RaySolver*>(&closed)}) {
        for (const Pair& pair : {Pair{-10, -60, 0}, Pair{-10, -60, 5}, Pair{-10, -60, 80}, Pair{-60, -10, 700},
                                 Pair{-30, -30, 40}, Pair{-499, -1, 3000}}) {
            const auto paths = find_paths(*solver, {0, 0, pair.zs}, {pair.r, 0, pair.zr}, options);
            INFO(solver->name() << ": " << pair.zs << " -> " << pair.zr << " at " << pair.r << " m");
            REQUIRE(paths.size() == 7u);  // direct, and T/B-first sequences of 1, 2 and 3 apexes
            for (const ConnectedPath& p : paths) {
                const double v = vertical_travel(p, pair.zs, pair.zr), d = std::hypot(pair.r, v);
                CHECK(p.time_s == Approx(n * d / speed_of_light).epsilon(1e-12));
                CHECK(p.length_m == Approx(d).epsilon(1e-12));
                CHECK(p.ray_parameter == Approx(n * pair.r / d).epsilon(1e-9).margin(1e-12));
                CHECK(p.amplitude.spreading_distance_m == Approx(d).epsilon(1e-7));
                CHECK_FALSE(p.amplitude.caustic);
                CHECK(p.surface_bounces + p.bottom_bounces <= 3);
                CHECK(std::abs(p.surface_bounces - p.bottom_bounces) <= 1);
                const double cos_i = v / d;
                const Hecht h = hecht(n, model->n_air, cos_i);
                const double bottom = std::pow(std::sqrt(reflectivity), p.bottom_bounces);
                CHECK(close(p.amplitude.interface_s, std::pow(h.rs, p.surface_bounces) * bottom, 1e-12));
                CHECK(close(p.amplitude.interface_p, std::pow(h.rp, p.surface_bounces) * bottom, 1e-12));
                CHECK(p.amplitude.flux_factor == Approx(1.0));
                CHECK(close(p.amplitude.field_s, p.amplitude.interface_s / d, 1e-12 / d));
            }
            CHECK(std::is_sorted(paths.begin(), paths.end(),
                                 [](const auto& a, const auto& b) { return a.time_s < b.time_s; }));
        }
    }
}

TEST_CASE("paths: reciprocity theorem, swapping source and receiver gives the same times, ray parameters and field "
          "magnitudes, with the angles reversed",
          "[paths]") {
    auto model = firn_model();
    model->bottom = Bottom{-1200.0, 0.4};
    class Uniform final : public AttenuationProfile {
    public:
        double length_m(double) const override { return 900.0; }
        std::optional<double> constant_length_m() const override { return 900.0; }
        std::string describe() const override { return "test"; }
    };
    model->attenuation = std::make_shared<Uniform>();
    const ClosedFormSolver solver(model);
    PathOptions options;
    options.max_bounces = 2;
    struct Pair {
        Point a, b;
    };
    for (const Pair& pair : {Pair{{0, 0, -100}, {150, 0, -20}}, Pair{{0, 0, -100}, {240, 0, -20}},
                             Pair{{0, 0, -5}, {60, 0, -180}}, Pair{{0, 0, -40}, {90, 0, -40}},
                             Pair{{0, 0, -70}, {300, 0, 8}}, Pair{{0, 0, -1}, {25, 0, 2}}}) {
        const auto forward = find_paths(solver, pair.a, pair.b, options);
        const auto backward = find_paths(solver, pair.b, pair.a, options);
        INFO("z " << pair.a.z << " and " << pair.b.z << ", r " << pair.b.x);
        REQUIRE(forward.size() == backward.size());
        REQUIRE_FALSE(forward.empty());
        for (const ConnectedPath& f : forward) {
            // Mirror-image paths at equal depths arrive together: match on time and direction.
            const auto match = std::find_if(backward.begin(), backward.end(), [&](const ConnectedPath& b) {
                return b.kind == f.kind && std::abs(b.time_s - f.time_s) <= 1e-12 * f.time_s &&
                       std::abs(f.launch_zenith_rad - (pi - b.arrival_zenith_rad)) < 1e-6;
            });
            REQUIRE(match != backward.end());
            const ConnectedPath& b = *match;
            CHECK(f.kind == b.kind);
            CHECK(f.time_s == Approx(b.time_s).epsilon(1e-12));
            CHECK(f.ray_parameter == Approx(b.ray_parameter).epsilon(1e-9));
            CHECK(f.length_m == Approx(b.length_m).epsilon(1e-9));
            CHECK(f.launch_zenith_rad == Approx(pi - b.arrival_zenith_rad).margin(1e-7));
            CHECK(f.arrival_zenith_rad == Approx(pi - b.launch_zenith_rad).margin(1e-7));
            CHECK(std::abs(f.amplitude.field_s) == Approx(std::abs(b.amplitude.field_s)).epsilon(1e-6));
            CHECK(std::abs(f.amplitude.field_p) == Approx(std::abs(b.amplitude.field_p)).epsilon(1e-6));
            CHECK(f.amplitude.attenuation_factor == Approx(b.amplitude.attenuation_factor).epsilon(1e-9));
        }
    }
}

TEST_CASE("paths: a vertical pair has ξ = 0 paths with c·T = ∫ n dz = A Δz − B z0 Δe^{z/z0} (definition)", "[paths]") {
    auto model = firn_model();
    model->bottom = Bottom{-1000.0, 0.5};
    const ClosedFormSolver solver(model);
    const double a = 1.78, b = 0.43, z0 = 40.0;
    auto optical = [&](double z1, double z2) {  // ∫ n dz from z1 up to z2
        return a * (z2 - z1) - b * z0 * (std::exp(z2 / z0) - std::exp(z1 / z0));
    };
    const double zs = -150.0, zr = -30.0, zb = -1000.0;
    const auto paths = find_paths(solver, {0, 0, zs}, {0, 0, zr});
    REQUIRE(paths.size() == 3u);
    CHECK(paths[0].kind == PathKind::direct);
    CHECK(paths[0].time_s * speed_of_light == Approx(optical(zs, zr)).epsilon(1e-13));
    CHECK(paths[0].launch_zenith_rad == 0.0);
    CHECK(paths[1].kind == PathKind::reflected);
    CHECK(paths[1].time_s * speed_of_light == Approx(optical(zs, 0) + optical(zr, 0)).epsilon(1e-13));
    CHECK(paths[1].arrival_zenith_rad == Approx(pi));
    CHECK(paths[2].kind == PathKind::bottom);
    CHECK(paths[2].time_s * speed_of_light == Approx(optical(zb, zs) + optical(zb, zr)).epsilon(1e-13));
    CHECK(paths[2].launch_zenith_rad == Approx(pi));
    for (const ConnectedPath& p : paths) {
        CHECK(p.ray_parameter == 0.0);
        CHECK(p.horizontal_distance_m == 0.0);
        CHECK_FALSE(p.amplitude.caustic);
        // Near-vertical spreading is close to the length (the index changes little along it).
        CHECK(p.amplitude.spreading_distance_m == Approx(p.length_m).epsilon(0.2));
    }
}

TEST_CASE("paths: at equal depths in graded firn only rays that rise and come back down join the two ends "
          "(docs/physics.md §3), in a homogeneous layer the horizontal ray does, with T = n·r/c (definition)",
          "[paths]") {
    const ClosedFormSolver solver(firn_model());
    for (const double r : {1.0, 30.0, 100.0}) {
        const auto paths = find_paths(solver, {0, 0, -50}, {r, 0, -50});
        INFO("r " << r);
        REQUIRE_FALSE(paths.empty());
        for (const ConnectedPath& p : paths) {
            CHECK((p.kind == PathKind::refracted || p.kind == PathKind::reflected));
            CHECK(p.launch_zenith_rad < 0.5 * pi);
            CHECK(p.arrival_zenith_rad > 0.5 * pi);
            CHECK(p.launch_zenith_rad == Approx(pi - p.arrival_zenith_rad));
        }
    }
    const test::StraightLineSolver straight(test::homogeneous_model(1.6));
    const auto flat = find_paths(straight, {0, 0, -50}, {30, 0, -50});
    REQUIRE(flat.size() == 2u);
    CHECK(flat[0].kind == PathKind::direct);
    CHECK(flat[0].time_s == Approx(1.6 * 30.0 / speed_of_light));
    CHECK(flat[0].amplitude.spreading_distance_m == Approx(30.0));
    CHECK(flat[1].kind == PathKind::reflected);
}

TEST_CASE("paths: a source at the surface and a receiver just below it are joined only by the direct path, out to "
          "the distance of the ray that leaves the surface horizontally (definition of the grazing ray)",
          "[paths]") {
    auto model = firn_model();
    const ClosedFormSolver solver(model);
    const double zr = -0.01, n_s = 1.35;
    const double reach = solver.segment(n_s, zr, 0.0).distance_m;
    const auto inside = find_paths(solver, {0, 0, 0}, {0.5 * reach, 0, zr});
    REQUIRE(inside.size() == 1u);
    CHECK(inside[0].kind == PathKind::direct);
    const double d = std::hypot(0.5 * reach, zr);
    CHECK(inside[0].time_s > n_s * d / speed_of_light);
    CHECK(inside[0].time_s < model->index->index(zr) * d / speed_of_light);
    CHECK(find_paths(solver, {0, 0, 0}, {1.01 * reach, 0, zr}).empty());
    // A millimetre below the surface the source also sees the receiver through the surface
    // reflection, out to the distance of the reflection that grazes the surface.
    const double reflected_reach = solver.segment(n_s, -1e-3, 0.0).distance_m + reach;
    const auto below = find_paths(solver, {0, 0, -1e-3}, {0.9 * reflected_reach, 0, zr});
    REQUIRE_FALSE(below.empty());
    CHECK(below.back().kind == PathKind::reflected);
    CHECK(find_paths(solver, {0, 0, -1e-3}, {1.01 * reflected_reach, 0, zr}).empty());
}

TEST_CASE("paths: across the meeting point of the direct and refracted families the time follows dT/dR = ξ/c "
          "and the spreading stays continuous (definition of the ray parameter, Červený 2001)",
          "[paths]") {
    auto model = firn_model();
    const ClosedFormSolver solver(model);
    for (const auto& [z_deep, z_shallow] : {std::pair{-100.0, -20.0}, std::pair{-300.0, -150.0}, std::pair{-8.0, -2.0}}) {
        const double n_meet = model->index->index(z_shallow);
        const Segment meeting = solver.segment(n_meet, z_deep, z_shallow);
        double spreading_at_meeting = 0.0;
        for (const double step : {0.0, -1e-9, 1e-9, -1e-6, 1e-6, -1e-3, 1e-3}) {
            const double r = meeting.distance_m * (1.0 + step);
            const auto paths = find_paths(solver, {0, 0, z_deep}, {r, 0, z_shallow});
            // The path nearest the meeting point: the largest ray parameter.
            const auto near = std::max_element(paths.begin(), paths.end(), [](const auto& a, const auto& b) {
                return a.ray_parameter < b.ray_parameter;
            });
            INFO("pair " << z_deep << " / " << z_shallow << ", r = meeting distance × (1 + " << step << ")");
            REQUIRE(near != paths.end());
            CHECK(near->kind == (step <= 0.0 ? PathKind::direct : PathKind::refracted));
            const double predicted = meeting.time_s + n_meet * (r - meeting.distance_m) / speed_of_light;
            CHECK(near->time_s == Approx(predicted).epsilon(std::max(1e-13, 10 * step * step)));
            CHECK(near->arrival_zenith_rad == Approx(0.5 * pi).margin(2 * std::sqrt(std::abs(step)) + 1e-9));
            if (step == 0.0) {
                CHECK(near->arrival_zenith_rad == 0.5 * pi);
                spreading_at_meeting = near->amplitude.spreading_distance_m;
                CHECK(std::isfinite(spreading_at_meeting));
                CHECK_FALSE(near->amplitude.caustic);
            } else {
                CHECK(near->amplitude.spreading_distance_m ==
                      Approx(spreading_at_meeting).epsilon(std::abs(step) <= 1e-6 ? 1e-5 : 3e-3));
            }
        }
    }
}

namespace {

// The largest distance any direct, refracted or reflected ray of the pair reaches, by a plain
// dense scan of the closed-form legs over ξ (independent of the root finding in find_paths).
double largest_reach(const ClosedFormSolver& solver, double z1, double z2) {
    const double lo = std::min(z1, z2), hi = std::max(z1, z2);
    const double n_hi = solver.model().index->index(hi);
    double best = 0.0;
    const int samples = 20000;
    for (int i = 0; i <= samples; ++i) {
        const double xi = n_hi * std::sin(0.5 * pi * i / samples);
        if (lo < hi) best = std::max(best, solver.segment(xi, lo, hi).distance_m);
        const double top = solver.turning_z(xi, lo).value_or(0.0);
        best = std::max(best, solver.segment(xi, lo, top).distance_m + solver.segment(xi, hi, top).distance_m);
    }
    return best;
}

}  // namespace

TEST_CASE("paths: beyond the largest distance the families reach there is no path, the shadow zone "
          "(docs/physics.md §3, reach from a dense scan of the closed form)",
          "[paths]") {
    const ClosedFormSolver solver(firn_model());
    for (const auto& [z1, z2] : {std::pair{-100.0, -20.0}, std::pair{-60.0, -3.0}, std::pair{-250.0, -120.0},
                                std::pair{-10.0, -10.0}, std::pair{-400.0, -399.0}}) {
        const double reach = largest_reach(solver, z1, z2);
        INFO("pair " << z1 << " / " << z2 << ", reach " << reach << " m");
        CHECK(find_paths(solver, {0, 0, z1}, {1.001 * reach, 0, z2}).empty());
        CHECK(find_paths(solver, {0, 0, z1}, {3.0 * reach, 0, z2}).empty());
        CHECK(find_paths(solver, {0, 0, z1}, {50.0 * reach, 0, z2}).empty());
        const auto inside = find_paths(solver, {0, 0, z1}, {0.999 * reach, 0, z2});
        CHECK_FALSE(inside.empty());
        for (const ConnectedPath& p : inside) CHECK(std::isfinite(p.time_s));
    }
}

TEST_CASE("paths: near-grazing surface reflections carry Hecht's r_s, r_p at their angle with |r| → 1 and meet "
          "the refracted family at the grazing ray, beyond which the reflected family ends (Hecht, Optics, "
          "definition of the grazing ray)",
          "[paths]") {
    auto model = firn_model();
    const ClosedFormSolver solver(model);
    const double n_s = 1.35, zs = -5.0, zr = -3.0;
    const double grazing = solver.segment(n_s, zs, 0.0).distance_m + solver.segment(n_s, zr, 0.0).distance_m;
    auto find_kind = [](const std::vector<ConnectedPath>& paths, PathKind kind) {
        return std::find_if(paths.begin(), paths.end(), [&](const auto& p) { return p.kind == kind; });
    };
    for (const double step : {1e-3, 1e-6}) {
        const auto before = find_paths(solver, {0, 0, zs}, {grazing * (1 - step), 0, zr});
        const auto reflected = find_kind(before, PathKind::reflected);
        const auto refracted = find_kind(before, PathKind::refracted);
        INFO("r = grazing distance × (1 − " << step << ")");
        REQUIRE(reflected != before.end());
        REQUIRE(refracted != before.end());
        CHECK(reflected->ray_parameter == Approx(n_s).epsilon(1e-4));
        CHECK(reflected->ray_parameter <= n_s);
        CHECK(refracted->ray_parameter > n_s);
        CHECK(*refracted->turning_z_m > -0.1);
        const double cos_i = std::sqrt((n_s - reflected->ray_parameter) * (n_s + reflected->ray_parameter)) / n_s;
        const Hecht h = hecht(n_s, 1.0, cos_i);
        CHECK(close(reflected->amplitude.interface_s, h.rs, 1e-12));
        CHECK(close(reflected->amplitude.interface_p, h.rp, 1e-12));
        CHECK(std::abs(reflected->amplitude.interface_s) == Approx(1.0));
        CHECK(std::real(reflected->amplitude.interface_s) < -0.9);  // r_s → −1 at grazing
        // The two families meet at the grazing ray: their times converge.
        CHECK(std::abs(refracted->time_s - reflected->time_s) < 1e3 * step * step * reflected->time_s);
    }
    const auto beyond = find_paths(solver, {0, 0, zs}, {grazing * (1 + 1e-6), 0, zr});
    CHECK(find_kind(beyond, PathKind::reflected) == beyond.end());
}

TEST_CASE("paths: total versus partial reflection at the surface on either side of ξ = n_air (Hecht, Optics)",
          "[paths]") {
    auto model = firn_model();
    const ClosedFormSolver solver(model);
    const double n_s = 1.35;
    for (const auto& [r, total] : {std::pair{20.0, false}, std::pair{300.0, true}}) {
        const auto paths = find_paths(solver, {0, 0, -100}, {r, 0, -80});
        const auto p = std::find_if(paths.begin(), paths.end(), [](const auto& q) { return q.kind == PathKind::reflected; });
        REQUIRE(p != paths.end());
        INFO("r " << r << ", ξ " << p->ray_parameter);
        CHECK((p->ray_parameter > model->n_air) == total);
        const double cos_i = std::sqrt((n_s - p->ray_parameter) * (n_s + p->ray_parameter)) / n_s;
        const Hecht h = hecht(n_s, model->n_air, cos_i);
        CHECK(close(p->amplitude.interface_s, h.rs, 1e-12));
        CHECK(close(p->amplitude.interface_p, h.rp, 1e-12));
        if (total) {
            CHECK(std::abs(p->amplitude.interface_s) == Approx(1.0));
            CHECK(std::abs(p->amplitude.interface_p) == Approx(1.0));
            CHECK(std::abs(std::arg(p->amplitude.interface_s) - std::arg(p->amplitude.interface_p)) > 1e-3);
        } else {
            CHECK(std::abs(p->amplitude.interface_s) < 0.9);
            CHECK(std::imag(p->amplitude.interface_s) == 0.0);
        }
    }
}

TEST_CASE("paths: a receiver in the air is reached through the surface with Snell's law, a straight air leg and "
          "Hecht's t_s, t_p, in homogeneous ice the time is Fermat's minimum (Snell, Hecht, Optics, Fermat)",
          "[paths]") {
    auto model = firn_model();
    const ClosedFormSolver solver(model);
    const double zs = -50.0, h = 10.0, r = 200.0, n_s = 1.35;
    const auto paths = find_paths(solver, {0, 0, zs}, {r, 0, h});
    REQUIRE(paths.size() == 1u);
    const ConnectedPath& p = paths[0];
    CHECK(p.kind == PathKind::transmitted);
    CHECK(p.crosses_surface);
    const double xi = p.ray_parameter;
    CHECK(model->n_air * std::sin(p.arrival_zenith_rad) == Approx(xi).epsilon(1e-14));
    const double cos_air = std::cos(p.arrival_zenith_rad);
    const Segment ice = solver.segment(xi, zs, 0.0);
    CHECK(ice.distance_m + h * std::tan(p.arrival_zenith_rad) == Approx(r).epsilon(1e-12));
    CHECK(p.time_s == Approx(ice.time_s + model->n_air * h / cos_air / speed_of_light).epsilon(1e-12));
    const double cos_i = std::sqrt((n_s - xi) * (n_s + xi)) / n_s;
    const Hecht t = hecht(n_s, model->n_air, cos_i);
    CHECK(close(p.amplitude.interface_s, t.ts, 1e-12));
    CHECK(close(p.amplitude.interface_p, t.tp, 1e-12));
    REQUIRE(p.events.size() == 1u);
    CHECK(p.events[0].kind == PathEventKind::surface_crossing);
    CHECK(p.events[0].offset_m == Approx(ice.distance_m));

    // Homogeneous ice under air: Fermat's principle, the crossing point that minimises the time.
    const double n = 1.78;
    const test::StraightLineSolver straight(test::homogeneous_model(n));
    const auto flat = find_paths(straight, {0, 0, zs}, {r, 0, h});
    REQUIRE(flat.size() == 1u);
    auto time_through = [&](double x) { return (n * std::hypot(x, zs) + std::hypot(r - x, h)) / speed_of_light; };
    const auto [x_best, t_best] = boost::math::tools::brent_find_minima(time_through, 0.0, r, 60);
    CHECK(flat[0].time_s == Approx(t_best).epsilon(1e-12));
    CHECK(flat[0].events[0].offset_m == Approx(x_best).epsilon(1e-6));
    // The source in the air instead: the same path backwards.
    const auto back = find_paths(straight, {r, 0, h}, {0, 0, zs});
    REQUIRE(back.size() == 1u);
    CHECK(back[0].time_s == Approx(t_best).epsilon(1e-12));
    CHECK(back[0].kind == PathKind::transmitted);
}

TEST_CASE("paths: two ends in the air, the straight line and the surface reflection from the image source "
          "(definition, Hecht, Optics)",
          "[paths]") {
    auto model = firn_model();
    const ClosedFormSolver solver(model);
    const auto paths = find_paths(solver, {0, 0, 3}, {40, 0, 7});
    REQUIRE(paths.size() == 2u);
    CHECK(paths[0].kind == PathKind::direct);
    CHECK(paths[0].time_s == Approx(std::hypot(40.0, 4.0) / speed_of_light));
    CHECK(paths[1].kind == PathKind::reflected);
    const double d = std::hypot(40.0, 10.0);
    CHECK(paths[1].time_s == Approx(d / speed_of_light));
    const Hecht h = hecht(1.0, 1.35, 10.0 / d);
    CHECK(close(paths[1].amplitude.interface_s, h.rs, 1e-12));
    CHECK(paths[1].amplitude.spreading_distance_m == Approx(d));
}

namespace {

// A solver that answers only the two required questions, so that find_paths runs on the generic
// RaySolver defaults (distances from segment(), turning derivatives from differences), as it
// would on the numeric solver.
class SegmentOnlySolver final : public RaySolver {
public:
    explicit SegmentOnlySolver(std::shared_ptr<const FirnModel> model) : RaySolver(model), inner_(model) {}
    std::string name() const override { return "segment-only"; }
    Segment segment(double xi, double z_a, double z_b) const override { return inner_.segment(xi, z_a, z_b); }
    std::optional<double> turning_z(double xi, double z) const override { return inner_.turning_z(xi, z); }

private:
    ClosedFormSolver inner_;
};

}  // namespace

TEST_CASE("paths: the same code on any RaySolver, with only segment() and turning_z() the results agree",
          "[paths]") {
    auto model = firn_model();
    model->bottom = Bottom{-900.0, 0.3};
    const ClosedFormSolver closed(model);
    const SegmentOnlySolver generic(model);
    for (const auto& [zs, zr, r] : {std::tuple{-100.0, -20.0, 150.0}, std::tuple{-100.0, -20.0, 224.0},
                                   std::tuple{-30.0, -30.0, 70.0}, std::tuple{-60.0, 4.0, 90.0}}) {
        const auto a = find_paths(closed, {0, 0, zs}, {r, 0, zr});
        const auto b = find_paths(generic, {0, 0, zs}, {r, 0, zr});
        INFO(zs << " -> " << zr << " at " << r);
        REQUIRE(a.size() == b.size());
        for (std::size_t i = 0; i < a.size(); ++i) {
            CHECK(a[i].kind == b[i].kind);
            CHECK(a[i].time_s == Approx(b[i].time_s).epsilon(1e-12));
            CHECK(a[i].ray_parameter == Approx(b[i].ray_parameter).epsilon(1e-10));
            CHECK(a[i].amplitude.spreading_distance_m == Approx(b[i].amplitude.spreading_distance_m).epsilon(1e-4));
        }
    }
}

TEST_CASE("paths: every path closes, its legs re-added from its events and ray parameter give r and its time "
          "(definition)",
          "[paths]") {
    auto model = firn_model();
    model->bottom = Bottom{-700.0, 0.6};
    const ClosedFormSolver solver(model);
    PathOptions options;
    options.max_bounces = 3;
    std::size_t checked = 0;
    for (const auto& [zs, zr, r] : {std::tuple{-100.0, -20.0, 150.0}, std::tuple{-10.0, -250.0, 600.0},
                                   std::tuple{-45.0, -45.0, 1500.0}, std::tuple{-2.0, -650.0, 40.0}}) {
        for (const ConnectedPath& p : find_paths(solver, {0, 0, zs}, {r, 0, zr}, options)) {
            double x = 0.0, t = 0.0, z = zs;
            for (const PathEvent& e : p.events) {
                const Segment s = solver.segment(p.ray_parameter, z, e.z_m);
                x += s.distance_m;
                t += s.time_s;
                CHECK(x == Approx(e.offset_m).epsilon(1e-9));
                z = e.z_m;
            }
            const Segment s = solver.segment(p.ray_parameter, z, zr);
            INFO(to_string(p.kind) << " from " << zs << " to " << zr << " at " << r);
            CHECK(x + s.distance_m == Approx(r).epsilon(1e-9));
            CHECK(t + s.time_s == Approx(p.time_s).epsilon(1e-12));
            CHECK(p.surface_bounces + p.bottom_bounces + p.turning_points <= 3);
            ++checked;
        }
    }
    CHECK(checked > 12u);
}

TEST_CASE("paths: x,y,z points use the horizontal distance hypot(Δx, Δy) and report the azimuth atan2(Δy, Δx) "
          "(definition)",
          "[paths]") {
    const ClosedFormSolver solver(firn_model());
    const auto planar = find_paths(solver, {0, 0, -60}, {100, 0, -15});
    const auto spatial = find_paths(solver, {10, 20, -60}, {10 + 60, 20 - 80, -15});
    REQUIRE(planar.size() == spatial.size());
    for (std::size_t i = 0; i < planar.size(); ++i) {
        CHECK(spatial[i].time_s == Approx(planar[i].time_s).epsilon(1e-14));
        CHECK(spatial[i].horizontal_distance_m == Approx(100.0));
        CHECK(spatial[i].azimuth_rad == Approx(std::atan2(-80.0, 60.0)));
    }
}

TEST_CASE("paths: attenuation factor exp(−s/L) for a uniform attenuation length (definition)", "[paths]") {
    auto model = firn_model();
    class Uniform final : public AttenuationProfile {
    public:
        double length_m(double) const override { return 700.0; }
        std::optional<double> constant_length_m() const override { return 700.0; }
        std::string describe() const override { return "test"; }
    };
    model->attenuation = std::make_shared<Uniform>();
    const ClosedFormSolver solver(model);
    for (const ConnectedPath& p : find_paths(solver, {0, 0, -100}, {150, 0, -20})) {
        CHECK(p.attenuation_exponent == Approx(p.length_m / 700.0));
        CHECK(p.amplitude.attenuation_factor == Approx(std::exp(-p.length_m / 700.0)));
    }
    const auto up = find_paths(solver, {0, 0, -30}, {50, 0, 5});
    REQUIRE(up.size() == 1u);
    const double air_leg = 5.0 / std::cos(up[0].arrival_zenith_rad);
    CHECK(up[0].attenuation_exponent == Approx((up[0].length_m - air_leg) / 700.0));
}

TEST_CASE("paths: bad input is refused with typed errors", "[paths]") {
    auto model = firn_model();
    model->bottom = Bottom{-300.0, 0.5};
    const ClosedFormSolver solver(model);
    CHECK_THROWS_AS(find_paths(solver, {0, 0, -10}, {0, 0, -10}), DataInputError);
    CHECK_THROWS_AS(find_paths(solver, {0, 0, -10}, {5, 0, -400}), DataInputError);
    CHECK_THROWS_AS(find_paths(solver, {0, 0, std::nan("")}, {5, 0, -4}), DataInputError);
    PathOptions options;
    options.max_bounces = -1;
    CHECK_THROWS_AS(find_paths(solver, {0, 0, -10}, {5, 0, -4}, options), DataInputError);
    options = {};
    options.scan_samples = 2;
    CHECK_THROWS_AS(find_paths(solver, {0, 0, -10}, {5, 0, -4}, options), DataInputError);
    CHECK(std::string(to_string(PathKind::bottom)) == "bottom");
    CHECK(std::string(to_string(PathEventKind::surface_crossing)) == "surface crossing");
}

TEST_CASE("paths: no root is missed, the paths of each family match the sign changes of a dense scan of the "
          "closed-form distance over ξ (independent brute force)",
          "[paths]") {
    std::uint64_t state = 12345;  // a small LCG keeps the pairs the same on every platform
    auto uniform = [&] {
        state = state * 6364136223846793005ULL + 1442695040888963407ULL;
        return static_cast<double>(state >> 11) / 9007199254740992.0;
    };
    for (int trial = 0; trial < 40; ++trial) {
        const double z0 = 20 + 60 * uniform(), n_s = 1.3 + 0.15 * uniform();
        auto model = std::make_shared<FirnModel>();
        model->index = std::make_shared<ExponentialProfile>(1.78, n_s, z0);
        const ClosedFormSolver solver(model);
        const double zs = -std::pow(10.0, -2 + 4.5 * uniform());
        const double zr = trial % 8 == 0 ? zs : -std::pow(10.0, -2 + 4.5 * uniform());
        const double lo = std::min(zs, zr), hi = std::max(zs, zr), n_hi = model->index->index(hi);
        auto direct = [&](double xi) { return solver.segment(xi, lo, hi).distance_m; };
        auto rising = [&](double xi) {
            const double top = solver.turning_z(xi, lo).value_or(0.0);
            return solver.segment(xi, lo, top).distance_m + solver.segment(xi, hi, top).distance_m;
        };
        const int samples = 20000;
        double reach = 0.0;
        for (int i = 0; i <= samples; ++i) {
            const double xi = n_hi * std::sin(0.5 * pi * i / samples);
            reach = std::max({reach, lo < hi ? direct(xi) : 0.0, rising(xi)});
        }
        const double r = reach * (0.02 + 0.97 * uniform());
        // Sign changes on grids that straighten the square-root ends of each ξ range.
        auto crossings = [&](auto distance, double xi_low, double xi_high) {
            int count = 0;
            double previous = 0.0;
            for (int i = 0; i <= samples; ++i) {
                const double w = 1.0 - static_cast<double>(i) / samples;
                const double f = distance(xi_high - (xi_high - xi_low) * w * w) - r;
                if (i > 0 && f * previous < 0.0) ++count;
                previous = f;
            }
            return count;
        };
        const int expected_direct = lo < hi ? crossings(direct, 0.0, n_hi) : 0;
        const int expected_reflected = crossings(rising, 0.0, std::min(n_s, n_hi));
        const int expected_refracted = n_hi > n_s ? crossings(rising, n_s, n_hi) : 0;
        int found_direct = 0, found_reflected = 0, found_refracted = 0;
        for (const ConnectedPath& p : find_paths(solver, {0, 0, zs}, {r, 0, zr})) {
            found_direct += p.kind == PathKind::direct;
            found_reflected += p.kind == PathKind::reflected;
            found_refracted += p.kind == PathKind::refracted;
        }
        INFO("z0 " << z0 << " n_s " << n_s << " zs " << zs << " zr " << zr << " r " << r);
        CHECK(found_direct == expected_direct);
        CHECK(found_reflected == expected_reflected);
        CHECK(found_refracted == expected_refracted);
    }
}

TEST_CASE("paths: on the numeric solver (ODE of docs/physics.md §2) the paths agree with those of the closed form (§3), and "
          "on a two-stage profile only it can handle they obey reciprocity",
          "[paths][numeric]") {
    auto model = firn_model();
    model->bottom = Bottom{-900.0, 0.3};
    const ClosedFormSolver closed(model);
    const NumericSolver numeric(model);
    for (const auto& [zs, zr, r] : {std::tuple{-100.0, -20.0, 150.0}, std::tuple{-100.0, -20.0, 224.0},
                                    std::tuple{-30.0, -30.0, 70.0}, std::tuple{-60.0, 4.0, 90.0}}) {
        const auto a = find_paths(closed, {0, 0, zs}, {r, 0, zr});
        const auto b = find_paths(numeric, {0, 0, zs}, {r, 0, zr});
        INFO(zs << " -> " << zr << " at " << r);
        REQUIRE(a.size() == b.size());
        for (std::size_t i = 0; i < a.size(); ++i) {
            CHECK(a[i].kind == b[i].kind);
            CHECK(b[i].time_s == Approx(a[i].time_s).epsilon(1e-9));
            CHECK(b[i].ray_parameter == Approx(a[i].ray_parameter).epsilon(1e-9));
            CHECK(b[i].amplitude.spreading_distance_m == Approx(a[i].amplitude.spreading_distance_m).epsilon(1e-5));
        }
    }
    auto layered = std::make_shared<FirnModel>();
    layered->index = std::make_shared<test::TwoStageProfile>(1.78, 1.33, 25.0, -15.0, 45.0);
    const NumericSolver solver(layered);
    const auto forward = find_paths(solver, {0, 0, -80}, {120, 0, -10});
    const auto backward = find_paths(solver, {120, 0, -10}, {0, 0, -80});
    REQUIRE(forward.size() == backward.size());
    REQUIRE(forward.size() >= 2u);
    for (std::size_t i = 0; i < forward.size(); ++i) {
        CHECK(forward[i].kind == backward[i].kind);
        CHECK(forward[i].time_s == Approx(backward[i].time_s).epsilon(1e-10));
        CHECK(std::abs(forward[i].amplitude.field_s) == Approx(std::abs(backward[i].amplitude.field_s)).epsilon(1e-4));
    }
}

TEST_CASE("paths: towards a fold caustic (the largest distance of the refracted family) two refracted paths merge "
          "and L_eff vanishes like (R_max − R)^{1/4} (fold caustic, Červený 2001), the flag is set, nothing is "
          "divided by zero",
          "[paths]") {
    auto model = firn_model();
    const ClosedFormSolver solver(model);
    const double zs = -100.0, zr = -80.0, n_s = 1.35, n_hi = model->index->index(zr);
    auto rising = [&](double xi) {
        return -(solver.distance_to_turning(xi, zs).distance_m + solver.distance_to_turning(xi, zr).distance_m);
    };
    const auto [xi_fold, minus_r] = boost::math::tools::brent_find_minima(rising, n_s + 1e-6, n_hi - 1e-9, 60);
    const double r_max = -minus_r;
    REQUIRE(xi_fold > n_s + 1e-3);  // an interior maximum, not the grazing ray
    auto refracted = [&](double r) {
        std::vector<ConnectedPath> out;
        for (const ConnectedPath& p : find_paths(solver, {0, 0, zs}, {r, 0, zr}))
            if (p.kind == PathKind::refracted) out.push_back(p);
        return out;
    };
    const auto far = refracted(r_max * (1 - 1e-4)), near = refracted(r_max * (1 - 1e-8));
    REQUIRE(far.size() == 2u);
    REQUIRE(near.size() == 2u);
    for (int i = 0; i < 2; ++i) {
        const double ratio = near[i].amplitude.spreading_distance_m / far[i].amplitude.spreading_distance_m;
        CHECK(ratio == Approx(std::pow(1e-4, 0.25)).epsilon(0.05));
        CHECK(near[i].ray_parameter == Approx(xi_fold).epsilon(1e-3));
    }
    CHECK(refracted(r_max * (1 + 1e-8)).empty());
    // At the fold itself, whatever the root finder lands on is either a flagged caustic or finite.
    for (const ConnectedPath& p : refracted(r_max)) {
        CHECK(std::isfinite(p.amplitude.spreading_distance_m));
        if (p.amplitude.spreading_distance_m <= 1e-3 * p.length_m) {
            CHECK(p.amplitude.caustic);
            CHECK(std::isnan(p.amplitude.field_s.real()));
        } else {
            CHECK(std::isfinite(std::abs(p.amplitude.field_s)));
        }
    }
}

#include "station/arrival_table.hpp"

TEST_CASE("paths: find_paths and the arrival table of maps agree on amplitude and caustic flag at the same pair, "
          "also next to a fold caustic (one computation, paths/amplitude.hpp, Červený 2001)",
          "[paths][amplitude]") {
    auto model = firn_model();
    const ClosedFormSolver solver(model);
    const double zs = -100.0, zr = -80.0;
    const ArrivalTable table(solver, zr, {zs});
    const double r_max = table.max_reach_m(0);
    std::vector<MapArrival> arrivals;
    auto mean_field = [](const ConnectedPath& p) {
        return std::sqrt(0.5 * (std::norm(p.amplitude.field_s) + std::norm(p.amplitude.field_p)));
    };
    // Away from the fold the table's ∂R/∂ξ (a difference of its samples) is good to about 1 %;
    // next to it, where ∂R/∂ξ → 0, to a few %. At r_max·(1 − 1e-12) L_eff ≈ 0.52 m against a path
    // of 457 m: above the threshold for both; at r_max L_eff ≈ 0.15 m: a caustic for both (the
    // table used to flag only L_eff below 1e-6 m, and said "not a caustic" there).
    struct Case {
        double r, tolerance;
        bool caustic;
    };
    for (const Case c : {Case{30.0, 2e-2, false}, Case{150.0, 2e-2, false}, Case{300.0, 2e-2, false},
                         Case{r_max * (1 - 1e-4), 6e-2, false}, Case{r_max * (1 - 1e-12), 6e-2, false},
                         Case{r_max, 0.0, true}}) {
        const auto paths = find_paths(solver, {0, 0, zs}, {c.r, 0, zr});
        table.arrivals(0, c.r, arrivals);
        INFO("r " << c.r << " of r_max " << r_max);
        REQUIRE(paths.size() == 2u);
        REQUIRE(arrivals.size() == paths.size());
        std::vector<double> from_paths, from_table;
        for (std::size_t k = 0; k < paths.size(); ++k) {
            CHECK(paths[k].amplitude.caustic == c.caustic);
            CHECK(arrivals[k].caustic == c.caustic);
            CHECK(std::abs(paths[k].time_s - arrivals[k].time_s) < 5e-12);
            from_paths.push_back(mean_field(paths[k]));
            from_table.push_back(arrivals[k].amplitude_per_m);
        }
        if (c.caustic) {
            for (std::size_t k = 0; k < paths.size(); ++k) {
                CHECK(std::isnan(from_paths[k]));
                CHECK(std::isnan(from_table[k]));
            }
            continue;
        }
        // The two paths next to the fold arrive within a picosecond: compare them as a set.
        std::sort(from_paths.begin(), from_paths.end());
        std::sort(from_table.begin(), from_table.end());
        for (std::size_t k = 0; k < paths.size(); ++k) CHECK(from_table[k] == Approx(from_paths[k]).epsilon(c.tolerance));
    }
}

#include <random>
#include <sstream>

namespace {

// What may come out of find_paths for valid input: typed errors, or paths that are physically
// sane (finite fields, no shorter than the straight line, no faster than light in the fastest
// medium). Returns a description of the first insanity, or "" when all is well.
std::string insanity(const std::vector<ConnectedPath>& paths, const Point& s, const Point& r, double n_min) {
    const double straight = std::sqrt((r.x - s.x) * (r.x - s.x) + (r.y - s.y) * (r.y - s.y) + (r.z - s.z) * (r.z - s.z));
    for (const ConnectedPath& p : paths) {
        std::ostringstream what;
        what << to_string(p.kind) << " path, ξ " << p.ray_parameter << ": ";
        for (const double v : {p.time_s, p.length_m, p.ray_parameter, p.launch_zenith_rad, p.arrival_zenith_rad,
                               p.horizontal_distance_m, p.attenuation_exponent, p.amplitude.spreading_distance_m,
                               p.amplitude.flux_factor, p.amplitude.attenuation_factor})
            if (std::isnan(v)) return what.str() + "a NaN field";
        if (!std::isfinite(p.time_s) || !std::isfinite(p.length_m)) return what.str() + "infinite time or length";
        if (p.amplitude.caustic != !std::isfinite(std::abs(p.amplitude.field_s)))
            return what.str() + "field not finite without the caustic flag (or the flag on a finite field)";
        what << "length " << p.length_m << " m against a straight line of " << straight << " m, c·T "
             << p.time_s * speed_of_light << " m: ";
        // The root may miss the receiver by 1e-6·max(r, 1 m) (find_paths.cpp), which the length keeps.
        if (p.length_m < straight * (1 - 1e-9) - 1e-6 * std::max(p.horizontal_distance_m, 1.0))
            return what.str() + "shorter than the straight line";
        if (p.time_s * speed_of_light < straight * n_min * (1 - 1e-9)) return what.str() + "faster than light";
    }
    return "";
}

}  // namespace

TEST_CASE("paths: fed extreme but valid numbers (scale depths 1e-6 to 1e4 m, distances to 1e6 m, ends at the "
          "surface, in the air and deep) find_paths throws only typed errors or returns sane paths (seeded random "
          "test, common practice)",
          "[paths][random]") {
    std::mt19937_64 random(20261203);
    auto uniform = [&](double a, double b) { return std::uniform_real_distribution<double>(a, b)(random); };
    auto log_uniform = [&](double a, double b) { return std::exp(uniform(std::log(a), std::log(b))); };
    auto end_height = [&]() {
        switch (std::uniform_int_distribution<int>(0, 4)(random)) {
            case 0: return 0.0;                         // at the surface
            case 1: return log_uniform(1e-6, 1e3);      // in the air
            case 2: return -log_uniform(1e-6, 1.0);     // just below the surface
            case 3: return -log_uniform(1.0, 1e4);      // deep
            default: return -uniform(0.0, 200.0);       // in the firn
        }
    };
    int typed_errors = 0, sane = 0;
    std::ostringstream failures;
    for (int trial = 0; trial < 4000; ++trial) {
        const double n_surface = uniform(1.0, 1.6), n_deep = n_surface + log_uniform(1e-6, 0.8);
        const double scale = log_uniform(1e-6, 1e4);
        auto model = std::make_shared<FirnModel>();
        model->name = "random";
        model->index = std::make_shared<ExponentialProfile>(n_deep, n_surface, scale);
        const ClosedFormSolver solver(model);
        const Point source{0.0, 0.0, end_height()};
        const double r = std::uniform_int_distribution<int>(0, 5)(random) == 0 ? 0.0 : log_uniform(1e-3, 1e6);
        const Point receiver{r, 0.0, end_height()};
        PathOptions options;
        options.max_bounces = std::uniform_int_distribution<int>(0, 3)(random);
        std::ostringstream pair;
        pair << "trial " << trial << ": n " << n_deep << "/" << n_surface << ", scale " << scale << " m, source z "
             << source.z << ", receiver r " << r << " z " << receiver.z << ", bounces " << options.max_bounces;
        try {
            const auto paths = find_paths(solver, source, receiver, options);
            const std::string bad = insanity(paths, source, receiver, std::min(model->n_air, n_surface));
            if (bad.empty()) ++sane;
            else failures << pair.str() << ": " << bad << "\n";
        } catch (const Error&) {
            ++typed_errors;
        } catch (const std::exception& e) {
            failures << pair.str() << ": untyped exception: " << e.what() << "\n";
        }
    }
    INFO(failures.str());
    CHECK(failures.str().empty());
    // Scale depths far below a metre make the deep ice uniform to the last bit (e^{z/z0}
    // underflows), where many families have no resolvable ray: typed errors, but a minority.
    CHECK(sane > typed_errors);
}
