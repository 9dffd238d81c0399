// The RaySolver questions (docs/physics.md §4) answered by the stratified quadrature of
// solver/snell_integrals.hpp, for any profile: a drop-in third solver next to the closed form and
// the numeric integrator, so that today's path finder and maps can use the new integrals before
// they are rewired to solver/path_families.hpp. Accuracy: about 1e-12 relative against the closed
// form, the parabolic n²-linear layer and tanh_sinh quadrature (tests/solver/test_stratified_*.cpp).
#pragma once

#include <memory>
#include <optional>
#include <string>

#include "solver/ray_solver.hpp"
#include "solver/stratified_intervals.hpp"

namespace firnray {

class StratifiedSolver final : public RaySolver {
public:
    // Analyses the model's profile once (cells, monotone runs), down to its bottom if it has one
    // (else to model_limits' deepest depth).
    explicit StratifiedSolver(std::shared_ptr<const FirnModel> model);

    std::string name() const override { return "stratified"; }
    const StratifiedProfile& stratified_profile() const override { return *profile_; }

    // An end where |n − ξ| <= 1e-12·n is the turning point (distance_derivative NaN, as the
    // interface asks). Throws DataInputError for ξ < 0, ends above the surface or non-finite
    // input; NumericalError when ξ exceeds n between the ends.
    Segment segment(double ray_parameter, double z_a, double z_b) const override;
    std::optional<double> turning_z(double ray_parameter, double z_start) const override;
    LegDistance leg_distance(double ray_parameter, double z_a, double z_b) const override;
    LegDistance distance_to_turning(double ray_parameter, double z_start) const override;

private:
    struct Ends;
    Ends classify(double ray_parameter, double z_a, double z_b) const;

    std::shared_ptr<const StratifiedProfile> profile_;
};

}  // namespace firnray
