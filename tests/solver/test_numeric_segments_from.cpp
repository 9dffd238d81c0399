// Tests of NumericSolver::segments_from (one ray, legs to many levels) against the default
// RaySolver::segments_from (segment() summed level to level) and against tanh_sinh quadrature
// of the Snell integrals (Boost.Math, the reference library of docs/validation.md), for an
// exponential, a layered and a tabulated profile (TableProfile: a cubic spline through samples
// every 5 m), and against the closed form for the exponential; and an ArrivalTable built on it
// against one built on the default.
#include <catch2/catch.hpp>

#include <cmath>
#include <memory>
#include <vector>

#include <boost/math/quadrature/gauss.hpp>

#include "core/constants.hpp"
#include "core/errors.hpp"
#include "model/table_profile.hpp"
#include "solver/closed_form_solver.hpp"
#include "solver/numeric_solver.hpp"
#include "station/arrival_table.hpp"
#include "support/snell_integrals.hpp"
#include "support/test_profiles.hpp"

using namespace firnray;
using firnray::test::model_with;

namespace {

struct ProfileCase {
    std::shared_ptr<const IndexProfile> profile;
    std::vector<double> breaks;  // where the quadrature should split (kinks, knots)
    bool kinked = false;         // dn/dz jumps somewhere
};

std::vector<ProfileCase> profile_cases() {
    // A smooth firn-like shape with decaying ripples (monotone: the ripples decay faster than the
    // exponential's gradient), sampled every 5 m like a log: the spline's third derivative jumps
    // at every sample, which the integrator's error estimate does not see.
    auto shape = [](double z) {
        return 1.78 - 0.43 * std::exp(z / 40.0) + 0.004 * std::sin(z / 9.0) * std::exp(z / 30.0);
    };
    std::vector<double> depth, n, knots;
    for (double d = 0.0; d <= 1000.0; d += 5.0) {
        depth.push_back(d);
        n.push_back(shape(-d));
        knots.insert(knots.begin(), -d);  // lowest first, for the quadrature
    }
    return {{std::make_shared<ExponentialProfile>(1.78, 1.35, 40.0), {}},
            {std::make_shared<test::TwoStageProfile>(1.78, 1.30, 20.0, -15.0, 45.0), {-15.0}, true},
            {std::make_shared<TableProfile>(depth, n), knots}};
}

// n(z) − ξ below a turning point z_t (n(z_t) = ξ): close to it, as −∫ dn/dz from z to z_t by
// Gauss–Legendre, which has none of the cancellation of n(z) − n(z_t); the tanh_sinh abscissae
// crowd to within 1e-300 m of the end.
std::function<double(double, double)> gap_below_turning(const IndexProfile& profile, double xi, double z_t) {
    return [&profile, xi, z_t](double z, double below_top) {
        if (below_top > 0.01) return profile.index(z) - xi;
        // In the distance u below z_t, so that δ itself (down to 1e-300 m) is not rounded away.
        return -boost::math::quadrature::gauss<double, 10>::integrate(
            [&](double u) { return profile.gradient(z_t - u); }, 0.0, below_top);
    };
}

// The levels a map table asks for: the upper end itself (twice), a level a hair below it, repeats,
// a 1 m grid and some odd depths, down to z_bottom.
std::vector<double> levels_below(double z_upper, double z_bottom) {
    std::vector<double> levels{z_upper, z_upper, z_upper - 1e-9, z_upper - 0.37};
    for (double z = std::floor(z_upper) - 1.0; z > z_bottom; z -= 7.0) {
        levels.push_back(z);
        if (static_cast<int>(z) % 3 == 0) levels.push_back(z);  // repeated level
    }
    levels.push_back(z_bottom);
    return levels;
}

// The ray parameters tried: surface tops (ξ below n(0), including 0 and almost n(0)) and
// upper ends on the turning point at several depths.
std::vector<double> ray_parameters(const IndexProfile& profile) {
    const double n0 = profile.index(0.0);
    return {0.0, 0.7, 1.2, n0 - 1e-3, n0 + 1e-3, 1.45, 1.6, 1.72};
}

double top_of(const NumericSolver& solver, double xi, double z_bottom) {
    if (xi < solver.model().index->index(0.0)) return 0.0;
    return solver.turning_z(xi, z_bottom).value();
}

}  // namespace

TEST_CASE("numeric segments_from agrees with the default (segment() summed level to level) to 1e-6 m and 1e-14 s, "
          "from the surface and from a turning top, with repeated levels and levels at the top",
          "[solver][segments-from]") {
    for (const ProfileCase& c : profile_cases()) {
        auto model = model_with(c.profile);
        model->attenuation = std::make_shared<test::ConstantAttenuation>(900.0);
        const NumericSolver solver(model);
        const double z_bottom = -600.0;
        for (double xi : ray_parameters(*c.profile)) {
            const double top = top_of(solver, xi, z_bottom);
            const std::vector<double> levels = levels_below(top, z_bottom);
            std::vector<Segment> fast(levels.size()), reference(levels.size());
            solver.segments_from(xi, top, levels, fast);
            solver.RaySolver::segments_from(xi, top, levels, reference);
            for (std::size_t i = 0; i < levels.size(); ++i) {
                INFO(c.profile->kind() << " ξ " << xi << " top " << top << " level " << levels[i]);
                CHECK(fast[i].distance_m == Approx(reference[i].distance_m).margin(1e-6));
                CHECK(fast[i].time_s == Approx(reference[i].time_s).margin(1e-14));
                CHECK(fast[i].length_m == Approx(reference[i].length_m).margin(1e-6));
                CHECK(fast[i].attenuation_exponent == Approx(reference[i].attenuation_exponent).margin(1e-9));
                if (levels[i] == top) {
                    CHECK(fast[i].distance_m == 0.0);
                    CHECK(fast[i].time_s == 0.0);
                    CHECK(fast[i].distance_derivative == 0.0);
                } else {
                    CHECK(std::isnan(fast[i].distance_derivative));
                }
            }
        }
    }
}

TEST_CASE("numeric segments_from agrees with tanh_sinh quadrature of the Snell integrals (Boost.Math), "
          "singular at a turning top",
          "[solver][segments-from]") {
    for (const ProfileCase& c : profile_cases()) {
        const IndexProfile& profile = *c.profile;
        const NumericSolver solver(model_with(c.profile));
        for (double xi : {0.5, 1.2, 1.45, 1.7}) {
            const double top = top_of(solver, xi, -500.0);
            const bool turning = top < 0.0 || xi == profile.index(0.0);
            std::vector<double> levels{top, top - 0.01};
            for (double z : {-16.0, -40.0, -133.3, -500.0})
                if (z < levels.back()) levels.push_back(z);
            std::vector<Segment> fast(levels.size());
            solver.segments_from(xi, top, levels, fast);
            for (std::size_t i = 1; i < levels.size(); ++i) {
                const auto gap = turning ? gap_below_turning(profile, xi, top) : test::plain_gap(profile, xi);
                UNSCOPED_INFO(profile.kind() << " ξ " << xi << " top " << top << " level " << levels[i]);
                const auto ref = test::snell_integrals(profile, xi, levels[i], top, gap, c.breaks, false);
                INFO(profile.kind() << " ξ " << xi << " top " << top << " level " << levels[i]);
                CHECK(fast[i].distance_m == Approx(ref.distance_m).margin(1e-6));
                CHECK(fast[i].time_s == Approx(ref.optical_path_m / speed_of_light).margin(1e-14));
                CHECK(fast[i].length_m == Approx(ref.length_m).margin(1e-6));
            }
        }
    }
}

TEST_CASE("numeric segments_from agrees with the closed form of the exponential profile (docs/physics.md §3, "
          "Gradshteyn & Ryzhik §2.26) over 1 m levels down to 1000 m",
          "[solver][segments-from]") {
    auto model = model_with(std::make_shared<ExponentialProfile>(1.78, 1.35, 40.0));
    model->attenuation = std::make_shared<test::ConstantAttenuation>(900.0);
    const NumericSolver numeric(model);
    const ClosedFormSolver closed(model);
    for (double xi : {0.0, 0.9, 1.3, 1.35, 1.5, 1.7, 1.775}) {
        const double top = xi < 1.35 ? 0.0 : closed.turning_z(xi, -1000.0).value();
        std::vector<double> levels;
        for (double z = std::floor(top); z >= -1000.0; z -= 1.0) levels.push_back(z);
        std::vector<Segment> fast(levels.size());
        numeric.segments_from(xi, top, levels, fast);
        double worst_m = 0.0, worst_s = 0.0;
        for (std::size_t i = 0; i < levels.size(); ++i) {
            const Segment exact = levels[i] < top ? closed.segment(xi, top, levels[i]) : Segment{};
            worst_m = std::max(worst_m, std::abs(fast[i].distance_m - exact.distance_m));
            worst_s = std::max(worst_s, std::abs(fast[i].time_s - exact.time_s));
        }
        INFO("ξ " << xi << " top " << top);
        CHECK(worst_m < 1e-6);
        CHECK(worst_s < 1e-14);
        if (top < 0.0) {
            // A top a hair below the turning point (n − ξ ≈ 1e-13, within turning_index_tolerance)
            // still counts as the turning point: the ray starts horizontal there, and its legs
            // match those from the exact turning point (a start at −√(n² − ξ²) would lose 0.3 mm).
            const double low_top = top - 1e-11;
            std::vector<double> below{low_top - 1.0, -1000.0};
            std::vector<Segment> legs(below.size());
            numeric.segments_from(xi, low_top, below, legs);
            for (std::size_t i = 0; i < below.size(); ++i)
                CHECK(legs[i].distance_m == Approx(closed.segment(xi, top, below[i]).distance_m).margin(1e-6));
        }
    }
}

TEST_CASE("numeric segments_from: bad levels, a ray parameter above n at the top and a ray that turns back "
          "up before the lowest level are errors",
          "[solver][segments-from]") {
    const NumericSolver solver(model_with(std::make_shared<ExponentialProfile>(1.78, 1.35, 40.0)));
    std::vector<Segment> out(2);
    const std::vector<double> rising{-10.0, -5.0}, above_top{-1.0, -20.0}, good{-10.0, -20.0};
    CHECK_THROWS_AS(solver.segments_from(1.0, 0.0, rising, out), NumericalError);
    CHECK_THROWS_AS(solver.segments_from(1.0, -5.0, above_top, out), NumericalError);
    CHECK_THROWS_AS(solver.segments_from(1.0, 1.0, good, out), DataInputError);
    CHECK_THROWS_AS(solver.segments_from(1.5, 0.0, good, out), NumericalError);  // n(0) = 1.35 < 1.5
    std::vector<Segment> wrong_size(1);
    CHECK_THROWS_AS(solver.segments_from(1.0, 0.0, good, wrong_size), NumericalError);
    // n = 1.5 + 0.1 cos(z / 10 m): a ray horizontal (n = 1.55) and bending down at
    // z = 10(π/3 − 2π) m turns back up at z = −10(π/3 + 2π) m, where n = 1.55 again, before −100 m.
    const NumericSolver wavy(model_with(std::make_shared<test::WavyProfile>(1.5, 0.1, 10.0)));
    const double z_t = 10.0 * (pi / 3.0 - 2.0 * pi);
    const std::vector<double> deep{-60.0, -100.0};
    CHECK_THROWS_WITH(wavy.segments_from(1.55, z_t, deep, out), Catch::Contains("turns"));
    // A homogeneous medium: the horizontal ray never comes down.
    const NumericSolver flat(model_with(std::make_shared<ConstantProfile>(1.5)));
    CHECK_THROWS_AS(flat.segments_from(1.5, -10.0, good, out), NumericalError);
    // Only levels at the upper end: nothing to integrate.
    const std::vector<double> at_top{-7.0, -7.0};
    solver.segments_from(1.6, -7.0, at_top, out);
    CHECK(out[1].distance_m == 0.0);
}

namespace {

// Forwards segment() and turning_z() to a solver but keeps the default segments_from.
class DefaultSegmentsFrom final : public RaySolver {
public:
    explicit DefaultSegmentsFrom(const RaySolver& inner)
        : RaySolver(std::shared_ptr<const FirnModel>(&inner.model(), [](const FirnModel*) {})), inner_(&inner) {}
    std::string name() const override { return inner_->name(); }
    Segment segment(double xi, double z_a, double z_b) const override { return inner_->segment(xi, z_a, z_b); }
    std::optional<double> turning_z(double xi, double z_start) const override { return inner_->turning_z(xi, z_start); }

private:
    const RaySolver* inner_;
};

}  // namespace

TEST_CASE("arrival table on the numeric segments_from agrees with one on the default segments_from",
          "[solver][segments-from][arrival-table]") {
    for (const ProfileCase& c : profile_cases()) {
        auto model = model_with(c.profile);
        model->attenuation = std::make_shared<test::ConstantAttenuation>(900.0);
        const NumericSolver solver(model, {}, DistanceDerivative::not_computed);
        const DefaultSegmentsFrom by_segments(solver);
        std::vector<double> sources;
        for (double depth = 2.0; depth <= 300.0; depth += 23.0) sources.push_back(-depth);
        sources.push_back(-60.0);  // at the receiver depth
        ArrivalTableOptions options;
        options.ray_parameters = 200;
        const ArrivalTable fast(solver, -60.0, sources, options), reference(by_segments, -60.0, sources, options);
        std::vector<MapArrival> a, b;
        std::size_t compared = 0;
        for (std::size_t row = 0; row < sources.size(); ++row) {
            INFO(c.profile->kind() << " source z " << sources[row]);
            // Where the largest reach belongs to a ray turning at the join of a layered profile it
            // is a cusp in ξ, which the table's Brent refinement finds to ~1e-8 in ξ only: mm.
            CHECK(fast.max_reach_m(row) == Approx(reference.max_reach_m(row)).margin(c.kinked ? 1e-2 : 1e-6));
            for (double r : {5.0, 90.0, 400.0, 1100.0, 2500.0}) {
                fast.arrivals(row, r, a);
                reference.arrivals(row, r, b);
                INFO("distance " << r);
                REQUIRE(a.size() == b.size());
                compared += a.size();
                for (std::size_t k = 0; k < a.size(); ++k) {
                    CHECK(a[k].kind == b[k].kind);
                    CHECK(a[k].time_s == Approx(b[k].time_s).margin(1e-14));
                    CHECK(a[k].ray_parameter == Approx(b[k].ray_parameter).margin(1e-9));
                    CHECK(a[k].amplitude_per_m == Approx(b[k].amplitude_per_m).epsilon(1e-6));
                }
            }
        }
        CHECK(compared > 60);  // 70 lookups: some in the shadow, some with two paths
    }
}
