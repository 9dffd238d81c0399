// The closed-form solver of the exponential profile against outside references: Boost.Math
// tanh_sinh quadrature of the Snell integrals (docs/validation.md), straight lines in a homogeneous
// medium (definition), the turning condition n(z_t) = ξ (definition) and central differences.
#include <catch2/catch.hpp>

#include <cmath>
#include <memory>
#include <vector>

#include <boost/math/quadrature/tanh_sinh.hpp>
#include <boost/multiprecision/cpp_bin_float.hpp>

#include "core/constants.hpp"
#include "core/errors.hpp"
#include "model/attenuation.hpp"
#include "solver/closed_form_solver.hpp"

using namespace firnray;

namespace {

struct Firn {
    double n_deep, n_surface, scale_depth;
};
// Generic values inside the published ranges of docs/physics.md §1.2 (from memory), not sites.
const Firn firns[] = {{1.78, 1.35, 40.0}, {1.775, 1.30, 20.0}, {1.80, 1.45, 80.0}};

std::shared_ptr<FirnModel> exponential_model(const Firn& f) {
    auto model = std::make_shared<FirnModel>();
    model->name = "test firn";
    model->origin = "test";
    model->index = std::make_shared<ExponentialProfile>(f.n_deep, f.n_surface, f.scale_depth);
    return model;
}

// The Snell integrals x = ∫ ξ/√(n²−ξ²) dz, c·T = ∫ n²/√(n²−ξ²) dz, s = ∫ n/√(n²−ξ²) dz by
// tanh_sinh in quadruple precision. Near the shallow end z2, n − ξ is written about z2 as
// d2 + B e^{C z2}(1 − e^{−C t}) with t = z2 − z the distance the quadrature hands over, so that
// the 1/√ singularity of a turning end (d2 = 0, e^{C z2} = (A − ξ)/B) is resolved.
struct SnellIntegrals {
    double distance, light_time, length;
};
SnellIntegrals snell_integrals(const Firn& f, double xi_, double z1_, double z2_, bool turning) {
    using Q = boost::multiprecision::cpp_bin_float_quad;
    const Q a = f.n_deep, b = Q(f.n_deep) - Q(f.n_surface), c = Q(1) / Q(f.scale_depth), xi = xi_, z1 = z1_;
    Q z2 = z2_;
    const Q u2 = turning ? (a - xi) / b : exp(c * z2);
    const Q d2 = turning ? Q(0) : (a - b * u2) - xi;
    if (turning) z2 = log(u2) / c;
    const Q height = z2 - z1;
    auto n_minus_xi = [&](Q complement) {
        const Q t = complement >= 0 ? complement : height + complement;
        return d2 - b * u2 * boost::multiprecision::expm1(-c * t);
    };
    boost::math::quadrature::tanh_sinh<Q> quadrature(10);
    const Q tol = 1e-22;
    auto integral = [&](auto weight) {
        return static_cast<double>(quadrature.integrate(
            [&](Q, Q complement) {
                const Q d = n_minus_xi(complement);
                return weight(xi + d) / sqrt(d * (2 * xi + d));
            },
            z1, z2, tol));
    };
    return {integral([&](Q) { return xi; }), integral([&](Q n) { return n * n; }), integral([&](Q n) { return n; })};
}

double relative_error(double value, double reference) {
    if (reference == 0.0) return std::abs(value);
    return std::abs(value / reference - 1.0);
}

}  // namespace

TEST_CASE("closed form: distance, time and length agree with tanh_sinh quadrature of the Snell integrals "
          "(Boost.Math, docs/validation.md)",
          "[solver][closed-form]") {
    struct Leg {
        double z1, z2;
    };
    const Leg legs[] = {{-200, -10}, {-3000, -100}, {-50, 0}, {-1e-3, 0}, {-100.5, -100}, {-60, -20}};
    for (const Firn& f : firns) {
        auto model = exponential_model(f);
        const ClosedFormSolver solver(model);
        for (const Leg& leg : legs) {
            const double n2 = model->index->index(leg.z2);
            // ξ from vertical to within 1e-6 of n at the shallow end (where the problem itself
            // amplifies rounding of the inputs by ~n/(n − ξ): hence the looser tolerance there).
            for (const auto& [fraction, tolerance] : {std::pair{0.0, 1e-14}, std::pair{0.3, 1e-13}, std::pair{0.9, 1e-13},
                                                     std::pair{0.999, 1e-12}, std::pair{1.0 - 1e-6, 1e-9}}) {
                const double xi = fraction * n2;
                const auto ref = snell_integrals(f, xi, leg.z1, leg.z2, false);
                const Segment s = solver.segment(xi, leg.z1, leg.z2);
                INFO("z0 " << f.scale_depth << " leg " << leg.z1 << " .. " << leg.z2 << " ξ " << xi);
                CHECK(relative_error(s.distance_m, ref.distance) < tolerance);
                CHECK(relative_error(s.time_s * speed_of_light, ref.light_time) < tolerance);
                CHECK(relative_error(s.length_m, ref.length) < tolerance);
            }
        }
    }
}

TEST_CASE("closed form: legs ending at the turning point agree with tanh_sinh quadrature (Boost.Math, docs/validation.md)",
          "[solver][closed-form]") {
    for (const Firn& f : firns) {
        auto model = exponential_model(f);
        const ClosedFormSolver solver(model);
        for (const double z1 : {-3000.0, -200.0, -50.0, -1.0, -1e-3}) {
            const double n1 = model->index->index(z1);
            for (const double fraction : {0.0, 0.1, 0.5, 0.9, 0.99}) {
                const double xi = f.n_surface + fraction * (n1 - f.n_surface);
                const auto top = solver.turning_z(xi, z1);
                REQUIRE(top);
                const auto ref = snell_integrals(f, xi, z1, 0.0, true);
                INFO("z0 " << f.scale_depth << " from " << z1 << " ξ " << xi << " turning at " << *top);
                const Segment s = solver.segment(xi, z1, *top);
                CHECK(relative_error(s.distance_m, ref.distance) < 1e-12);
                CHECK(relative_error(s.time_s * speed_of_light, ref.light_time) < 1e-12);
                CHECK(relative_error(s.length_m, ref.length) < 1e-12);
                CHECK(std::isnan(s.distance_derivative));
                const LegDistance up = solver.distance_to_turning(xi, z1);
                CHECK(relative_error(up.distance_m, ref.distance) < 1e-12);
                // A turning depth from elsewhere, off by rounding, still counts as the turning end.
                CHECK(relative_error(solver.segment(xi, *top * (1 + 1e-15), z1).distance_m, ref.distance) < 1e-12);
            }
        }
    }
}

TEST_CASE("closed form: a leg is the same travelled either way (definition)", "[solver][closed-form]") {
    auto model = exponential_model(firns[0]);
    const ClosedFormSolver solver(model);
    const Segment a = solver.segment(1.2, -80.0, -5.0), b = solver.segment(1.2, -5.0, -80.0);
    CHECK(a.distance_m == b.distance_m);
    CHECK(a.time_s == b.time_s);
    CHECK(a.length_m == b.length_m);
    const Segment none = solver.segment(1.2, -5.0, -5.0);
    CHECK(none.distance_m == 0.0);
    CHECK(none.time_s == 0.0);
}

TEST_CASE("closed form: vertical rays, x = 0 and c·T = ∫ n dz = A Δz − B z0 Δe^{z/z0} (definition)",
          "[solver][closed-form]") {
    for (const Firn& f : firns) {
        auto model = exponential_model(f);
        const ClosedFormSolver solver(model);
        for (const auto& [z1, z2] : {std::pair{-300.0, -2.0}, std::pair{-1e-6, 0.0}, std::pair{-2500.0, -2499.0}}) {
            const Segment s = solver.segment(0.0, z1, z2);
            const double b = f.n_deep - f.n_surface;
            const double exact_ct = f.n_deep * (z2 - z1) - b * f.scale_depth * std::exp(z1 / f.scale_depth) *
                                                                std::expm1((z2 - z1) / f.scale_depth);
            CHECK(s.distance_m == 0.0);
            CHECK(s.length_m == Approx(z2 - z1).epsilon(1e-14));
            CHECK(s.time_s * speed_of_light == Approx(exact_ct).epsilon(1e-14));
            // Nearly vertical: x grows in proportion to ξ with slope ∂x/∂ξ at 0.
            const double slope = solver.leg_distance(0.0, z1, z2).derivative;
            CHECK(solver.segment(1e-12, z1, z2).distance_m == Approx(1e-12 * slope).epsilon(1e-12));
        }
    }
}

TEST_CASE("closed form: homogeneous limit B = 0 gives straight lines, x = Δz tan θ, T = n·d/c (definition)",
          "[solver][closed-form]") {
    const double n = 1.6;
    for (auto profile : {std::shared_ptr<const IndexProfile>(std::make_shared<ExponentialProfile>(n, n, 40.0)),
                         std::shared_ptr<const IndexProfile>(std::make_shared<ConstantProfile>(n))}) {
        auto model = std::make_shared<FirnModel>();
        model->index = profile;
        const ClosedFormSolver solver(model);
        for (const double xi : {0.0, 0.4, 1.2, 1.59}) {
            const double dz = 75.0, cos_t = std::sqrt(1 - (xi / n) * (xi / n));
            const Segment s = solver.segment(xi, -80.0, -5.0);
            CHECK(s.distance_m == Approx(dz * (xi / n) / cos_t).epsilon(1e-14));
            CHECK(s.length_m == Approx(dz / cos_t).epsilon(1e-14));
            CHECK(s.time_s == Approx(n * dz / cos_t / speed_of_light).epsilon(1e-14));
            CHECK(s.distance_derivative == Approx(dz * n * n / std::pow(n * n - xi * xi, 1.5)).epsilon(1e-13));
            CHECK_FALSE(solver.turning_z(xi, -80.0));
        }
        CHECK_THROWS_AS(solver.segment(n, -80.0, -5.0), NumericalError);
        CHECK_THROWS_AS(solver.distance_to_turning(1.0, -80.0), NumericalError);
    }
    // Continuity: a tiny contrast B = 1e-10 departs from the straight line by O(B) only.
    auto model = std::make_shared<FirnModel>();
    model->index = std::make_shared<ExponentialProfile>(n, n - 1e-10, 40.0);
    const ClosedFormSolver nearly(model);
    const Segment s = nearly.segment(1.2, -80.0, -5.0);
    const double cos_t = std::sqrt(1 - (1.2 / n) * (1.2 / n));
    CHECK(s.distance_m == Approx(75.0 * (1.2 / n) / cos_t).epsilon(1e-8));
    CHECK(s.time_s == Approx(n * 75.0 / cos_t / speed_of_light).epsilon(1e-8));
}

TEST_CASE("closed form: turning depth satisfies n(z_t) = ξ and lies above the start only for ξ >= n_surface (definition)",
          "[solver][closed-form]") {
    for (const Firn& f : firns) {
        auto model = exponential_model(f);
        const ClosedFormSolver solver(model);
        const double z_start = -400.0, n_start = model->index->index(z_start);
        for (const double fraction : {0.0, 1e-9, 0.2, 0.7, 0.999999}) {
            const double xi = f.n_surface + fraction * (n_start - f.n_surface);
            const auto z = solver.turning_z(xi, z_start);
            REQUIRE(z);
            CHECK(*z <= 0.0);
            CHECK(*z >= z_start);
            CHECK(model->index->index(*z) == Approx(xi).epsilon(4e-16));
        }
        CHECK(*solver.turning_z(f.n_surface, z_start) == 0.0);
        CHECK_FALSE(solver.turning_z(f.n_surface - 1e-9, z_start));
        CHECK_FALSE(solver.turning_z(0.0, z_start));
        CHECK(*solver.turning_z(n_start, z_start) == Approx(z_start).epsilon(1e-12));
        CHECK_THROWS_AS(solver.turning_z(n_start + 1e-6, z_start), NumericalError);
    }
}

TEST_CASE("closed form: ∂x/∂ξ agrees with Richardson-extrapolated central differences", "[solver][closed-form]") {
    for (const Firn& f : firns) {
        auto model = exponential_model(f);
        const ClosedFormSolver solver(model);
        // Fixed ends.
        for (const auto& [z1, z2] : {std::pair{-200.0, -10.0}, std::pair{-3000.0, -100.0}, std::pair{-1.0, 0.0},
                                    std::pair{-100.5, -100.0}}) {
            const double n2 = model->index->index(z2);
            for (const double xi : {0.3, 0.9 * n2, n2 * (1 - 1e-3), n2 * (1 - 1e-5)}) {
                const double h = std::min(1e-3 * xi, 0.05 * (n2 - xi));
                auto x = [&](double v) { return solver.leg_distance(v, z1, z2).distance_m; };
                auto central = [&](double s) { return (x(xi + s) - x(xi - s)) / (2 * s); };
                const double r1 = (4 * central(h / 2) - central(h)) / 3, r2 = (4 * central(h / 4) - central(h / 2)) / 3;
                const double numeric = (16 * r2 - r1) / 15;
                INFO("leg " << z1 << " .. " << z2 << " ξ " << xi);
                CHECK(solver.leg_distance(xi, z1, z2).derivative == Approx(numeric).epsilon(1e-8));
                CHECK(solver.segment(xi, z1, z2).distance_derivative == solver.leg_distance(xi, z1, z2).derivative);
            }
        }
        // Turning end moving with ξ (total derivative).
        for (const double z1 : {-3000.0, -200.0, -50.0, -1.0}) {
            const double n1 = model->index->index(z1);
            for (const double fraction : {0.1, 0.5, 0.9, 0.99}) {
                const double xi = f.n_surface + fraction * (n1 - f.n_surface);
                const double h = std::min(1e-3 * (n1 - f.n_surface), 0.05 * (n1 - xi));
                auto x = [&](double v) { return solver.distance_to_turning(v, z1).distance_m; };
                auto central = [&](double s) { return (x(xi + s) - x(xi - s)) / (2 * s); };
                const double r1 = (4 * central(h / 2) - central(h)) / 3, r2 = (4 * central(h / 4) - central(h / 2)) / 3;
                const double numeric = (16 * r2 - r1) / 15;
                INFO("from " << z1 << " ξ " << xi);
                CHECK(solver.distance_to_turning(xi, z1).derivative == Approx(numeric).epsilon(1e-6));
                // The generic default of RaySolver (segment + differences) agrees as well.
                CHECK(solver.RaySolver::distance_to_turning(xi, z1).derivative == Approx(numeric).epsilon(1e-5));
            }
        }
    }
}

namespace {

class UniformAttenuation final : public AttenuationProfile {
public:
    explicit UniformAttenuation(double length) : length_(length) {}
    double length_m(double) const override { return length_; }
    std::optional<double> constant_length_m() const override { return length_; }
    std::string describe() const override { return "test: uniform"; }

private:
    double length_;
};

// Shorter attenuation lengths in the warmer deep ice (common practice); a made-up linear law.
class LinearAttenuation final : public AttenuationProfile {
public:
    double length_m(double z) const override { return 1500.0 + 0.4 * z; }
    std::string describe() const override { return "test: linear in depth"; }
};

}  // namespace

TEST_CASE("closed form: attenuation exponent s/L for a uniform length and ∫ ds/L(z) against tanh_sinh for a "
          "depth-dependent one (Boost.Math)",
          "[solver][closed-form]") {
    const Firn f = firns[0];
    auto uniform = exponential_model(f);
    uniform->attenuation = std::make_shared<UniformAttenuation>(900.0);
    const ClosedFormSolver uniform_solver(uniform);
    const Segment s = uniform_solver.segment(1.3, -250.0, -3.0);
    CHECK(s.attenuation_exponent == s.length_m / 900.0);
    // The model files' constant length takes the same exact route.
    auto from_file = exponential_model(f);
    from_file->attenuation = std::make_shared<ConstantAttenuation>(900.0);
    CHECK(ClosedFormSolver(from_file).segment(1.3, -250.0, -3.0).attenuation_exponent == s.length_m / 900.0);

    auto linear = exponential_model(f);
    linear->attenuation = std::make_shared<LinearAttenuation>();
    const ClosedFormSolver solver(linear);
    const double b = f.n_deep - f.n_surface, c = 1.0 / f.scale_depth;
    for (const auto& [xi, z1, z2, turning] : {std::tuple{0.0, -2000.0, -10.0, false}, std::tuple{1.5, -1000.0, -20.0, false},
                                             std::tuple{1.7, -1500.0, 0.0, true}, std::tuple{1.36, -80.0, 0.0, true}}) {
        const double top = turning ? *solver.turning_z(xi, z1) : z2;
        const double u2 = turning ? (f.n_deep - xi) / b : std::exp(c * top);
        const double height = top - z1;
        const LinearAttenuation law;
        boost::math::quadrature::tanh_sinh<long double> quadrature;
        const long double reference = quadrature.integrate(
            [&](long double z, long double complement) {
                const long double t = complement >= 0 ? complement : height + complement;
                // n − ξ written about the upper end, as in snell_integrals.
                const long double d = (turning ? 0.0L : (long double)(f.n_deep - b * u2) - xi) -
                                      b * u2 * std::expm1(-c * t);
                const long double n = xi + d;
                return n / (std::sqrt(d * (2 * xi + d)) * law.length_m(static_cast<double>(z)));
            },
            (long double)z1, (long double)top, 1e-16L);
        INFO("ξ " << xi << " from " << z1 << " to " << top);
        CHECK(solver.segment(xi, z1, top).attenuation_exponent == Approx(static_cast<double>(reference)).epsilon(1e-10));
    }
}

TEST_CASE("closed form: bad input is refused with typed errors", "[solver][closed-form]") {
    auto model = exponential_model(firns[0]);
    const ClosedFormSolver solver(model);
    CHECK_THROWS_AS(solver.segment(-0.1, -10.0, -5.0), DataInputError);
    CHECK_THROWS_AS(solver.segment(std::nan(""), -10.0, -5.0), DataInputError);
    CHECK_THROWS_AS(solver.segment(1.0, -10.0, 5.0), DataInputError);
    CHECK_THROWS_AS(solver.segment(1.5, -10.0, -5.0), NumericalError);  // n(-5) ≈ 1.40 < 1.5
    CHECK_THROWS_AS(solver.distance_to_turning(1.2, -10.0), NumericalError);  // ξ < n_surface: no turning
    std::vector<ClosedFormSolver::LegQuery> queries(2);
    std::vector<ClosedFormSolver::DistanceTime> answers(1);
    CHECK_THROWS_AS(solver.distance_and_time(queries, answers), DataInputError);

    class LinearProfile final : public IndexProfile {
    public:
        double index(double z) const override { return 1.35 - 0.001 * z; }
        double gradient(double) const override { return -0.001; }
        std::string kind() const override { return "linear"; }
        std::string describe() const override { return "test: linear"; }
    };
    auto other = std::make_shared<FirnModel>();
    other->index = std::make_shared<LinearProfile>();
    CHECK_THROWS_AS(ClosedFormSolver(other), ModelInputError);
}

TEST_CASE("closed form: the batch and single distance-and-time calls give the segment's numbers", "[solver][closed-form]") {
    auto model = exponential_model(firns[1]);
    const ClosedFormSolver solver(model);
    std::vector<ClosedFormSolver::LegQuery> queries{{0.0, -10.0, -1.0}, {1.3, -500.0, 0.0}, {1.7, -300.0, -60.0}};
    std::vector<ClosedFormSolver::DistanceTime> answers(queries.size());
    solver.distance_and_time(queries, answers);
    for (std::size_t i = 0; i < queries.size(); ++i) {
        const Segment s = solver.segment(queries[i].ray_parameter, queries[i].z_a, queries[i].z_b);
        CHECK(answers[i].distance_m == s.distance_m);
        CHECK(answers[i].time_s == s.time_s);
        CHECK(solver.leg_distance(queries[i].ray_parameter, queries[i].z_a, queries[i].z_b).distance_m == s.distance_m);
    }
}
