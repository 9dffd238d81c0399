// The RaySolver of any index profile: integrates the ray equations of docs/physics.md §2.1 between
// two depths (trace/ray_stepper.hpp) and finds turning points by bracketing and TOMS748.
// Accuracy follows the integration tolerances; docs/physics.md §2.2 gives measured figures.
#pragma once

#include <memory>
#include <optional>
#include <span>
#include <string>

#include "solver/ray_solver.hpp"
#include "trace/ray_stepper.hpp"

namespace firnray {

// Whether NumericSolver::segment() works out ∂distance/∂ξ. It needs the variational equations
// (three more components, and two more profile evaluations per right-hand side for d²n/dz²),
// which more than doubles the cost of a leg (5 times on a table profile, where d²n/dz² has a
// kink at every knot); tables and maps, which difference their samples in ξ, can do without.
enum class DistanceDerivative {
    computed,      // from the variational equations (NaN at a turning end, as the interface allows)
    not_computed,  // always NaN
};

class NumericSolver final : public RaySolver {
public:
    // Throws DataInputError for a model without an index profile or bad tolerances.
    explicit NumericSolver(std::shared_ptr<const FirnModel> model, IntegrationTolerances tolerances = {},
                           DistanceDerivative derivative = DistanceDerivative::computed);

    std::string name() const override { return "numeric"; }
    const IntegrationTolerances& tolerances() const { return tolerances_; }
    DistanceDerivative distance_derivative() const { return derivative_; }

    // Integrates from the end where the ray is steeper toward the other, stopping where z reaches
    // it (or, for a turning end, where p_z changes sign). ∂distance/∂ξ comes from the variational
    // equations when the solver computes it; it is NaN when an end is a turning point, and then
    // the variational equations are not carried at all. p_z is put back on |p| = n after a step
    // where it drifted (tables, layered profiles). Requires ξ >= 0 and z_a, z_b <= 0.
    Segment segment(double ray_parameter, double z_a, double z_b) const override;

    // One ray integrated from z_upper downward, each level's leg read off the dense output where z
    // crosses it (Newton on z within the step, 2–3 evaluations per level), so the cost is one ray
    // plus that per level instead of one integration per level. Levels equal to z_upper (or to the
    // level before) are copied. When n(z_upper) = ξ within turning_index_tolerance, z_upper is taken
    // as the ray's turning point: the ray starts horizontal (p_z = 0) and bends down, the σ-form
    // equations being regular there. The ray is restarted every step on a new base (height
    // origin and sums) so that the tolerances apply to what each step adds, and with p_z put
    // back on |p| = n (BetweenSteps in trace/ray_integration.hpp says why). ∂distance/∂ξ is not provided:
    // distance_derivative is NaN below z_upper and 0 at it. Agrees with the default (segment()
    // summed level to level) within 5e-8 m / 3e-16 s on smooth profiles and 7e-7 m / 4e-15 s on
    // a table sampled every 5 m, at the default tolerances (tests/solver/test_numeric_segments_from.cpp,
    // docs/physics.md §2.7). Throws NumericalError for levels that do not descend
    // from z_upper, and if the ray turns back up above the lowest level (ξ exceeds n on the way).
    void segments_from(double ray_parameter, double z_upper, std::span<const double> levels,
                       std::span<Segment> out) const override;

    // Scans upward from z_start in steps no longer than 4 m (shorter where n − ξ is small against
    // dn/dz) for the first sign change of n(z) − ξ, then refines it with TOMS748, so profiles that
    // are not monotone (tables) are handled too. Throws NumericalError if ξ > n(z_start).
    std::optional<double> turning_z(double ray_parameter, double z_start) const override;

    // One integration up to the turning point, with the total d distance/dξ from the variational
    // equations (the turning end moves by dσ_t/dξ = −δp_z / (n dn/dz)) instead of the generic
    // central differences, which cost three integrations and three turning-point searches. Layered
    // profiles (dn/dz jumps at the joins, invisible to the variational equations) and a solver
    // made with DistanceDerivative::not_computed keep the latter.
    LegDistance distance_to_turning(double ray_parameter, double z_start) const override;

    // |n − ξ| at or below this counts as an end at the turning point.
    static constexpr double turning_index_tolerance = 1e-12;

private:
    IntegrationTolerances tolerances_;
    DistanceDerivative derivative_;
};

}  // namespace firnray
