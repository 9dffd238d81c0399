#include "solver/closed_form_solver.hpp"

#include <algorithm>
#include <cmath>
#include <limits>

#include <boost/math/quadrature/gauss_kronrod.hpp>
#include <fmt/format.h>

#include "core/constants.hpp"
#include "core/errors.hpp"
#include "trace/bracketed_root.hpp"

namespace firnray {

namespace {

constexpr double nan = std::numeric_limits<double>::quiet_NaN();
constexpr double epsilon = std::numeric_limits<double>::epsilon();
// n − ξ below this (relative to n_deep) at an end counts as a turning end. The rounding of n(z)
// itself is a few ε, and that of z0·ln u_t moves n by less than ε (|dn/dz|·|z| <= B/e).
constexpr double snap_tolerance = 8.0 * epsilon;
// n − ξ more negative than this is a caller's error, not rounding.
constexpr double overshoot_tolerance = 1e-12;
// Below this u = e^{Cz} the ratio u2/u1 is taken from logarithms rather than from u2 − u1.
constexpr double tiny_u = 1e-250;

void check_inputs(double xi, double z_a, double z_b) {
    if (!std::isfinite(xi) || xi < 0.0)
        throw DataInputError(fmt::format("the ray parameter must be a finite number >= 0 (got {})", xi));
    if (!std::isfinite(z_a) || !std::isfinite(z_b) || z_a > 0.0 || z_b > 0.0)
        throw DataInputError(fmt::format("a leg must lie in the ice, z <= 0 (got z = {} m and z = {} m)", z_a, z_b));
}

}  // namespace

// One leg for one ξ, between a deeper end 1 and a shallower end 2 (u1 <= u2). d = n − ξ and
// q = Q = √(n² − ξ²) at each end; du = u2 − u1; ell = ln(u2/u1) = C (z2 − z1).
struct ClosedFormSolver::Leg {
    double xi = 0.0, am = 0.0, k = 0.0;  // ξ, A − ξ, √(A² − ξ²)
    double z1 = 0.0, z2 = 0.0;
    double u1 = 0.0, n1 = 0.0, d1 = 0.0, q1 = 0.0;
    double u2 = 0.0, n2 = 0.0, d2 = 0.0, q2 = 0.0;
    double du = 0.0, ell = 0.0;
    bool turning = false;  // end 2 is the turning point
};

ClosedFormSolver::ClosedFormSolver(std::shared_ptr<const FirnModel> model) : RaySolver(std::move(model)) {
    if (!model_ || !model_->index) throw ModelInputError("the closed-form solver needs a model with an index profile");
    if (const auto* exponential = dynamic_cast<const ExponentialProfile*>(model_->index.get())) {
        a_ = exponential->n_deep();
        b_ = exponential->n_deep() - exponential->n_surface();
        n_surface_ = exponential->n_surface();
        c_ = 1.0 / exponential->scale_depth_m();
    } else if (const auto* constant = dynamic_cast<const ConstantProfile*>(model_->index.get())) {
        a_ = constant->value();
        b_ = 0.0;
        n_surface_ = a_;
        c_ = 1.0;  // any scale: with B = 0 it cancels
    } else {
        throw ModelInputError(
            fmt::format("the closed-form solver needs an exponential index profile, not '{}'; use the numeric solver",
                        model_->index->kind()),
            {model_->origin, 0, "index.kind"});
    }
    if (model_->attenuation) constant_attenuation_length_m_ = model_->attenuation->constant_length_m();
}

// u, n and d = n − ξ at depth z. Near the surface (u > 1/2) they are formed from
// 1 − u = −expm1(Cz), so that n − ξ keeps its relative accuracy when the end is close to the
// surface and ξ close to n there; deeper, from u itself. Either way the rounding is that of a
// relative change of z by a few ε.
ClosedFormSolver::EndValues ClosedFormSolver::end_values(double z, double xi, double am) const {
    constexpr double ln_half = -0.69314718055994531;
    const double e = c_ * z;
    EndValues v;
    if (e > ln_half) {
        const double w = -std::expm1(e);
        v.u = 1.0 - w;
        v.n = n_surface_ + b_ * w;
        v.d = (n_surface_ - xi) + b_ * w;
    } else {
        v.u = std::exp(e);
        v.n = a_ - b_ * v.u;
        v.d = am - b_ * v.u;
    }
    return v;
}

// Fills `leg`; returns false for a leg of zero height (every quantity 0).
bool ClosedFormSolver::prepare(double xi, double z_a, double z_b, Leg& g) const {
    check_inputs(xi, z_a, z_b);
    g.xi = xi;
    g.z1 = std::min(z_a, z_b);
    g.z2 = std::max(z_a, z_b);
    g.am = a_ - xi;
    if (g.z1 == g.z2) return false;
    if (g.am <= 0.0)
        throw NumericalError(fmt::format("a ray of parameter {} is horizontal at n_deep = {} and never changes depth", xi, a_));
    g.k = std::sqrt(g.am * (a_ + xi));
    if (b_ == 0.0) {  // homogeneous: straight lines
        g.u1 = g.u2 = 1.0;
        g.n1 = g.n2 = a_;
        g.d1 = g.d2 = g.am;
        g.q1 = g.q2 = g.k;
        g.ell = c_ * (g.z2 - g.z1);
        return true;
    }
    const EndValues deep = end_values(g.z1, xi, g.am);
    const EndValues shallow = end_values(g.z2, xi, g.am);
    g.u1 = deep.u;
    g.n1 = deep.n;
    g.d1 = deep.d;
    g.d2 = shallow.d;
    if (g.d2 < -overshoot_tolerance * a_)
        throw NumericalError(fmt::format("ray parameter {} exceeds the index {} at z = {} m: the ray cannot reach that depth",
                                         xi, shallow.n, g.z2));
    if (g.d2 <= snap_tolerance * a_) {
        // The shallow end is the turning point: put it exactly at u_t = (A − ξ)/B.
        g.turning = true;
        g.u2 = g.am / b_;
        g.d2 = 0.0;
        g.n2 = xi;
        g.q2 = 0.0;
        g.du = g.d1 / b_;
        if (g.du <= 0.0) return false;  // both ends at the turning point within rounding
        g.z2 = std::min(0.0, std::log(g.u2) / c_);
        g.ell = g.u1 > tiny_u ? std::log1p(g.du / g.u1) : std::log(g.u2) - c_ * g.z1;
    } else {
        g.u2 = shallow.u;
        g.n2 = shallow.n;
        g.q2 = std::sqrt(g.d2 * (g.n2 + xi));
        g.du = g.u1 * std::expm1(c_ * (g.z2 - g.z1));
        g.ell = c_ * (g.z2 - g.z1);
    }
    g.q1 = std::sqrt(g.d1 * (g.n1 + xi));
    return true;
}

namespace {

// L = k·(I1(u2) − I1(u1)) = ln(N1/N2) + ln(u2/u1) with N = k² − ABu + kQ = A d + ξ(A − ξ) + kQ,
// and N1 − N2 = B du (A + k (n1 + n2)/(q1 + q2)): a sum of positive terms, no cancellation.
template <class Leg>
double log_term(const Leg& g, double a, double b) {
    const double s = g.q1 + g.q2;
    const double n2_big = a * g.d2 + g.xi * g.am + g.k * g.q2;
    return std::log1p(b * g.du * (a + g.k * (g.n1 + g.n2) / s) / n2_big) + g.ell;
}

}  // namespace

LegDistance ClosedFormSolver::leg_distance(double xi, double z_a, double z_b) const {
    Leg g;
    if (!prepare(xi, z_a, z_b, g)) return {0.0, 0.0};
    const double lx = log_term(g, a_, b_);
    LegDistance out;
    out.distance_m = xi * lx / (c_ * g.k);
    if (g.turning) {
        out.derivative = nan;
    } else {
        const double k2 = g.k * g.k;
        // ∂x/∂ξ = (1/C)[A² L/k³ + ΔF/k²], F = (ξ² + A n)/Q, ΔF written as a positive product.
        const double s = g.q1 + g.q2;
        const double delta_f = xi * xi * b_ * g.du * (g.n1 + g.n2) * (1.0 / s + a_ / (g.n2 * g.q1 + g.n1 * g.q2)) /
                               (g.q1 * g.q2);
        out.derivative = (a_ * a_ * lx / (k2 * g.k) + delta_f / k2) / c_;
    }
    return out;
}

ClosedFormSolver::DistanceTime ClosedFormSolver::distance_and_time(double xi, double z_a, double z_b) const {
    Leg g;
    if (!prepare(xi, z_a, z_b, g)) return {};
    const double lx = log_term(g, a_, b_);
    const double s = g.q1 + g.q2;
    const double sum_n = g.n1 + g.n2;
    // B·(I2(u2) − I2(u1)) = ln((n1 + q1)/(n2 + q2)) = log1p(B du (1 + (n1 + n2)/(q1 + q2)) / (n2 + q2)).
    const double b_i2 = std::log1p(b_ * g.du * (1.0 + sum_n / s) / (g.n2 + g.q2));
    const double length = (a_ * lx / g.k - b_i2) / c_;
    // c·T = A·s + ΔQ/C with ΔQ = q2 − q1 = −B du (n1 + n2)/(q1 + q2).
    const double ct = a_ * length - b_ * g.du * sum_n / (s * c_);
    return {xi * lx / (c_ * g.k), ct / speed_of_light};
}

void ClosedFormSolver::distance_and_time(std::span<const LegQuery> queries, std::span<DistanceTime> out) const {
    if (queries.size() != out.size())
        throw DataInputError(fmt::format("{} leg queries but room for {} answers", queries.size(), out.size()));
    for (std::size_t i = 0; i < queries.size(); ++i)
        out[i] = distance_and_time(queries[i].ray_parameter, queries[i].z_a, queries[i].z_b);
}

Segment ClosedFormSolver::segment(double xi, double z_a, double z_b) const {
    Leg g;
    Segment out;
    if (!prepare(xi, z_a, z_b, g)) return out;
    const double lx = log_term(g, a_, b_);
    const double s = g.q1 + g.q2;
    const double sum_n = g.n1 + g.n2;
    const double b_i2 = std::log1p(b_ * g.du * (1.0 + sum_n / s) / (g.n2 + g.q2));
    out.distance_m = xi * lx / (c_ * g.k);
    out.length_m = (a_ * lx / g.k - b_i2) / c_;
    out.time_s = (a_ * out.length_m - b_ * g.du * sum_n / (s * c_)) / speed_of_light;
    if (g.turning) {
        out.distance_derivative = nan;
    } else {
        const double k2 = g.k * g.k;
        const double delta_f = xi * xi * b_ * g.du * sum_n * (1.0 / s + a_ / (g.n2 * g.q1 + g.n1 * g.q2)) / (g.q1 * g.q2);
        out.distance_derivative = (a_ * a_ * lx / (k2 * g.k) + delta_f / k2) / c_;
    }
    out.attenuation_exponent = attenuation_exponent(g, out.length_m);
    if (!std::isfinite(out.distance_m) || !std::isfinite(out.time_s) || !std::isfinite(out.length_m))
        throw NumericalError(fmt::format("closed-form leg failed for ray parameter {} between z = {} m and z = {} m", xi,
                                         z_a, z_b));
    return out;
}

double ClosedFormSolver::attenuation_exponent(const Leg& g, double length_m) const {
    if (!model_->attenuation) return 0.0;
    if (constant_attenuation_length_m_) return length_m / *constant_attenuation_length_m_;
    // ∫ n / (Q L(z)) dz with z = z2 − Δ τ², τ in [0, 1]: dz = 2Δτ dτ cancels the 1/√ of Q at a
    // turning end 2. n − ξ = d2 + B (u2 − u) = d2 − B u2 expm1(−C Δ τ²) keeps Q accurate there.
    const double height = g.z2 - g.z1;
    const AttenuationProfile& profile = *model_->attenuation;
    auto integrand = [&](double tau) {
        const double t2 = tau * tau;
        const double z = g.z2 - height * t2;
        const double d = g.d2 - b_ * g.u2 * std::expm1(-c_ * height * t2);
        const double n = g.xi + d;
        const double q = std::sqrt(d * (n + g.xi));
        return 2.0 * height * tau * n / (q * profile.length_m(z));
    };
    double error = 0.0;
    const double value = guard_boost_math("the attenuation integral of a leg", [&] {
        return boost::math::quadrature::gauss_kronrod<double, 15>::integrate(integrand, 0.0, 1.0, 15, 1e-11, &error);
    });
    if (!std::isfinite(value)) throw NumericalError("attenuation quadrature failed (attenuation length not positive?)");
    return value;
}

std::optional<double> ClosedFormSolver::turning_z(double xi, double z_start) const {
    check_inputs(xi, z_start, z_start);
    const double n_start = end_values(z_start, xi, a_ - xi).n;
    if (xi > n_start + overshoot_tolerance * a_)
        throw NumericalError(fmt::format("ray parameter {} exceeds the index {} at z = {} m: no ray starts there", xi,
                                         n_start, z_start));
    if (b_ == 0.0 || xi < n_surface_) return std::nullopt;
    // (A − ξ)/B = 1 + (n_surface − ξ)/B: log1p keeps turning points near the surface accurate.
    const double z = std::log1p((n_surface_ - xi) / b_) / c_;
    return std::clamp(z, z_start, 0.0);
}

LegDistance ClosedFormSolver::distance_to_turning(double xi, double z_start) const {
    check_inputs(xi, z_start, z_start);
    if (b_ == 0.0 || xi < n_surface_)
        throw NumericalError(fmt::format("a ray of parameter {} does not turn below the surface (n there is {})", xi,
                                         n_surface_));
    Leg g;
    g.xi = xi;
    g.am = a_ - xi;
    g.z1 = z_start;
    const EndValues start = end_values(z_start, xi, g.am);
    g.u1 = start.u;
    g.n1 = start.n;
    g.d1 = start.d;
    if (g.d1 < -overshoot_tolerance * a_)
        throw NumericalError(fmt::format("ray parameter {} exceeds the index {} at z = {} m: no ray starts there", xi,
                                         g.n1, z_start));
    if (g.d1 <= snap_tolerance * a_) return {0.0, -std::numeric_limits<double>::infinity()};
    g.k = std::sqrt(g.am * (a_ + xi));
    g.q1 = std::sqrt(g.d1 * (g.n1 + xi));
    g.turning = true;
    g.u2 = g.am / b_;
    g.n2 = xi;
    g.du = g.d1 / b_;
    g.ell = g.u1 > tiny_u ? std::log1p(g.du / g.u1) : std::log(g.u2) - c_ * g.z1;
    const double lx = log_term(g, a_, b_);
    const double k2 = g.k * g.k;
    // d/dξ of (ξ/(Ck))·arccosh(w(u1)): (1/C)[A² L/k³ − F1/k²], F1 = (ξ² + A n1)/Q1.
    const double f1 = (xi * xi + a_ * g.n1) / g.q1;
    return {xi * lx / (c_ * g.k), (a_ * a_ * lx / (k2 * g.k) - f1 / k2) / c_};
}

}  // namespace firnray
