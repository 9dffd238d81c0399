// The RaySolver of any index profile: integrates the ray equations of physics notes §3 between
// two depths (trace/ray_stepper.hpp) and finds turning points by bracketing and TOMS748.
// Accuracy follows the integration tolerances; docs/physics.md §2.2 gives measured figures.
#pragma once

#include <memory>
#include <optional>
#include <string>

#include "solver/ray_solver.hpp"
#include "trace/ray_stepper.hpp"

namespace firnray {

class NumericSolver final : public RaySolver {
public:
    // Throws DataInputError for a model without an index profile or bad tolerances.
    explicit NumericSolver(std::shared_ptr<const FirnModel> model, IntegrationTolerances tolerances = {});

    std::string name() const override { return "numeric"; }
    const IntegrationTolerances& tolerances() const { return tolerances_; }

    // Integrates from the end where the ray is steeper toward the other, stopping where z reaches
    // it (or, for a turning end, where p_z changes sign). ∂distance/∂ξ comes from the variational
    // equations; it is NaN when an end is a turning point. Requires ξ >= 0 and z_a, z_b <= 0.
    Segment segment(double ray_parameter, double z_a, double z_b) const override;

    // Scans upward from z_start in steps no longer than 4 m (shorter where n − ξ is small against
    // dn/dz) for the first sign change of n(z) − ξ, then refines it with TOMS748, so profiles that
    // are not monotone (tables) are handled too. Throws NumericalError if ξ > n(z_start).
    std::optional<double> turning_z(double ray_parameter, double z_start) const override;

    // |n − ξ| at or below this counts as an end at the turning point.
    static constexpr double turning_index_tolerance = 1e-12;

private:
    IntegrationTolerances tolerances_;
};

}  // namespace firnray
