// The question every path finder asks, answered by either solver: for a ray of parameter
// ξ = n sin θ, what horizontal distance, time and length does it cover between two depths in
// the ice, and where does it turn? ClosedFormSolver (exponential profiles, docs/physics.md §3)
// and NumericSolver (any profile, the equations of §2.1) implement the same interface so that callers
// can use either and tests can compare them.
#pragma once

#include <memory>
#include <mutex>
#include <optional>
#include <span>
#include <string>

#include "model/firn_model.hpp"

namespace firnray {

class StratifiedProfile;

// A ray leg that is monotone in z between z_a and z_b (both <= 0). Either end may be the
// turning point of the ray (n = ξ there); the leg is the same whichever way it is travelled.
struct Segment {
    double distance_m = 0.0;            // horizontal distance covered, >= 0
    double time_s = 0.0;                // travel time
    double length_m = 0.0;              // arc length
    double attenuation_exponent = 0.0;  // ∫ ds / L_α (0 when the model has no attenuation)
    // ∂distance/∂ξ at fixed end depths (m per unit of ξ); NaN where the solver does not provide
    // it or where it is singular (an end exactly at the turning point is handled by the caller).
    double distance_derivative = 0.0;
};

// Only the horizontal distance of a leg and its ξ-derivative: what root finding needs, and much
// cheaper than a full Segment (no time, length or attenuation quadrature).
struct LegDistance {
    double distance_m = 0.0;
    double derivative = 0.0;  // ∂distance/∂ξ; see leg_distance and distance_to_turning for which one
};

class RaySolver {
public:
    virtual ~RaySolver() = default;
    virtual std::string name() const = 0;  // "closed" or "numeric"
    const FirnModel& model() const { return *model_; }

    // Leg between z_a and z_b for ray parameter ξ. Requires ξ <= n(z) on the whole interval
    // (ξ may equal n at one end: a turning end). Throws NumericalError when it cannot.
    virtual Segment segment(double ray_parameter, double z_a, double z_b) const = 0;

    // The turning point of a ray with parameter ξ travelling upward from z_start: the first
    // z above z_start (and at most 0) where n(z) = ξ.
    // Empty when the ray reaches the surface without turning (ξ < n just below the surface).
    virtual std::optional<double> turning_z(double ray_parameter, double z_start) const = 0;

    // Legs from z_upper down to each of `levels` (sorted from the highest to the lowest, all at or
    // below z_upper, with ξ below n on the whole way): out[i] = segment(ξ, z_upper, levels[i]).
    // Map-scale tables ask for thousands of these per ray parameter; solvers that integrate
    // override it to do them in one pass. The default sums segment() between consecutive levels.
    virtual void segments_from(double ray_parameter, double z_upper, std::span<const double> levels,
                               std::span<Segment> out) const;

    // Distance and ∂distance/∂ξ at fixed end depths of the leg between z_a and z_b (the same
    // numbers as segment(), whose result the default takes apart; solvers override it when the
    // distance alone is cheaper).
    virtual LegDistance leg_distance(double ray_parameter, double z_a, double z_b) const;

    // The leg from z_start up to the turning point of ξ (which must exist: ξ >= n at the surface,
    // ξ <= n(z_start)). Here the turning end moves with ξ, so the derivative is the total
    // d distance/dξ, finite except at ξ = n(z_start) where it tends to −∞. The default combines
    // turning_z, segment and central differences; the closed form overrides it analytically.
    virtual LegDistance distance_to_turning(double ray_parameter, double z_start) const;

    // The model's profile as the stratified path finder sees it (solver/stratified_intervals.hpp),
    // down to the model's bottom or to model_limits' deepest depth: find_paths hands it the pairs
    // this solver's legs cannot resolve (find_paths.hpp). Built on first use, once, whichever
    // thread asks first; the stratified solver returns its own.
    virtual const StratifiedProfile& stratified_profile() const;

protected:
    explicit RaySolver(std::shared_ptr<const FirnModel> model) : model_(std::move(model)) {}
    std::shared_ptr<const FirnModel> model_;

private:
    mutable std::once_flag stratified_once_;
    mutable std::shared_ptr<const StratifiedProfile> stratified_;
};

// The stratified analysis of a model's profile as every solver builds it: down to the bottom, or
// to model_limits' deepest depth when the model has none.
std::shared_ptr<const StratifiedProfile> make_stratified_profile(const FirnModel& model);

}  // namespace firnray
