// Ray legs in the exponential firn profile n(z) = A − B e^{z/z0} in closed form (the formulas as
// implemented and the cancellation-free forms are in docs/physics.md §3).
// Distance, time, length and ∂distance/∂ξ cost a few elementary functions, no quadrature.
//
// Accuracy, measured against Boost.Math tanh_sinh quadrature of the Snell integrals in quadruple
// precision (tests/solver/test_closed_form_solver.cpp; models with n_surface 1.30–1.45, n_deep
// 1.775–1.80, z0 20–80 m, depths 0–3000 m, ξ from 0 to n at the shallower end):
//   distance, time, length: relative error below 5e-14 (worst seen 3.8e-14) when n − ξ >= 1e-3·n at
//   the fixed ends, turning ends included; closer to grazing it grows like ε·n/(n − ξ), because the
//   problem itself does (9e-13 seen at n − ξ = 1e-6·n). In every case the result is that of the
//   exact formulas for depths changed by a few ε relative (backward stable, by construction).
//   ∂distance/∂ξ: agrees with 50-digit finite differences to 2e-15, with double-precision central
//   differences to 1e-9 (fixed ends) and 1e-7 (turning end), which is the limit of the differences.
//   attenuation exponent: s / L exactly for a constant length; for a depth-dependent one, adaptive
//   Gauss–Kronrod (15 points) after z = z_upper − Δ·τ², which removes the 1/√ singularity of a
//   turning end: 1e-10 relative.
// Speed (bench/bench_closed_form.cpp, docs/performance.md): one distance-and-time
// evaluation takes about 55 ns.
#pragma once

#include <memory>
#include <optional>
#include <span>
#include <string>

#include "solver/ray_solver.hpp"

namespace firnray {

class ClosedFormSolver final : public RaySolver {
public:
    // The model's profile must be exponential (a constant profile is accepted as the limit
    // B = n_deep − n_surface = 0, where rays are straight). Throws ModelInputError otherwise.
    explicit ClosedFormSolver(std::shared_ptr<const FirnModel> model);

    std::string name() const override { return "closed"; }

    // An end counts as the turning point when n − ξ there is within a few rounding errors of 0
    // (or up to 1e-12 below it, for turning depths computed elsewhere); the leg is then taken to
    // end exactly at u_t = (A − ξ)/B and distance_derivative is NaN (see distance_to_turning).
    // Throws DataInputError for ξ < 0, z > 0 or non-finite input; NumericalError when ξ exceeds n
    // on the leg, or for a horizontal ray (ξ = n_deep) on a leg of non-zero height.
    Segment segment(double ray_parameter, double z_a, double z_b) const override;

    // z_t = z0 ln((A − ξ)/B) for n_surface <= ξ; empty for ξ < n_surface (the ray reaches the
    // surface) and for a homogeneous profile. Throws NumericalError if ξ > n(z_start).
    std::optional<double> turning_z(double ray_parameter, double z_start) const override;

    LegDistance leg_distance(double ray_parameter, double z_a, double z_b) const override;
    LegDistance distance_to_turning(double ray_parameter, double z_start) const override;

    // The cheap question: distance and time only (no length, attenuation or derivative), same
    // checks and same accuracy as segment().
    struct DistanceTime {
        double distance_m = 0.0;
        double time_s = 0.0;
    };
    DistanceTime distance_and_time(double ray_parameter, double z_a, double z_b) const;

    struct LegQuery {
        double ray_parameter = 0.0;
        double z_a = 0.0, z_b = 0.0;
    };
    // Many legs at once; out.size() must equal queries.size() (DataInputError otherwise).
    void distance_and_time(std::span<const LegQuery> queries, std::span<DistanceTime> out) const;

    double n_deep() const { return a_; }
    double index_contrast() const { return b_; }  // B = n_deep − n_surface
    double scale_depth_m() const { return 1.0 / c_; }

private:
    struct Leg;  // a leg prepared for one ξ (closed_form_solver.cpp)
    struct EndValues {
        double u, n, d;  // e^{Cz}, n(z), n(z) − ξ
    };
    EndValues end_values(double z, double ray_parameter, double a_minus_ray_parameter) const;
    bool prepare(double ray_parameter, double z_a, double z_b, Leg& leg) const;
    double attenuation_exponent(const Leg& leg, double length_m) const;

    double a_ = 0.0, b_ = 0.0, c_ = 0.0;  // A = n_deep, B = n_deep − n_surface, C = 1/z0
    double n_surface_ = 0.0;
    std::optional<double> constant_attenuation_length_m_;
};

}  // namespace firnray
