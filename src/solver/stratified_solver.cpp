#include "solver/stratified_solver.hpp"

#include <cmath>
#include <limits>

#include <fmt/format.h>

#include "core/constants.hpp"
#include "core/errors.hpp"
#include "core/text.hpp"
#include "solver/snell_integrals.hpp"

namespace firnray {

struct StratifiedSolver::Ends {
    LegEndpoint a, b;
};

StratifiedSolver::StratifiedSolver(std::shared_ptr<const FirnModel> model)
    : RaySolver(std::move(model)), profile_(make_stratified_profile(*model_)) {}

StratifiedSolver::Ends StratifiedSolver::classify(double ray_parameter, double z_a, double z_b) const {
    if (!std::isfinite(ray_parameter) || ray_parameter < 0.0)
        throw DataInputError(fmt::format("the ray parameter must be a finite number >= 0 (got {})",
                                         number_for_message(ray_parameter)));
    for (double z : {z_a, z_b})
        if (!std::isfinite(z) || z > 0.0 || z < profile_->floor_z())
            throw DataInputError(fmt::format("a leg end at z = {} m is not in the ice ({} m to 0)", number_for_message(z),
                                             number_for_message(profile_->floor_z())));
    Ends ends{{z_a}, {z_b}};
    for (LegEndpoint* end : {&ends.a, &ends.b}) {
        const double n = profile_->index(end->z), gap = n - ray_parameter;
        if (std::abs(gap) <= 1e-12 * n) end->kind = LegEnd::turning;
        else if (gap < 0.0)
            throw NumericalError(fmt::format("the ray parameter {} exceeds n = {} at z = {} m", ray_parameter, n, end->z));
    }
    if (ends.a.kind == LegEnd::turning && ends.b.kind == LegEnd::turning && z_a != z_b)
        ends.b.kind = LegEnd::fixed;  // the interface allows one turning end; a flat n gives two
    return ends;
}

Segment StratifiedSolver::segment(double ray_parameter, double z_a, double z_b) const {
    const Ends ends = classify(ray_parameter, z_a, z_b);
    const bool turning = ends.a.kind == LegEnd::turning || ends.b.kind == LegEnd::turning;
    const LegIntegrals leg = leg_integrals(*profile_, RayLevel::plain(ray_parameter), ends.a, ends.b, true, !turning,
                                           model_->attenuation.get());
    if (!std::isfinite(leg.distance_m))
        throw NumericalError(fmt::format("the ray parameter {} exceeds n between z = {} m and z = {} m", ray_parameter,
                                         z_a, z_b));
    Segment out;
    out.distance_m = leg.distance_m;
    out.time_s = leg.optical_path_m / speed_of_light;
    out.length_m = leg.length_m;
    out.attenuation_exponent = leg.attenuation_exponent;
    out.distance_derivative = turning ? std::numeric_limits<double>::quiet_NaN() : leg.distance_derivative;
    return out;
}

LegDistance StratifiedSolver::leg_distance(double ray_parameter, double z_a, double z_b) const {
    const Ends ends = classify(ray_parameter, z_a, z_b);
    const bool turning = ends.a.kind == LegEnd::turning || ends.b.kind == LegEnd::turning;
    const LegIntegrals leg = leg_integrals(*profile_, RayLevel::plain(ray_parameter), ends.a, ends.b, false, !turning);
    if (!std::isfinite(leg.distance_m))
        throw NumericalError(fmt::format("the ray parameter {} exceeds n between z = {} m and z = {} m", ray_parameter,
                                         z_a, z_b));
    return {leg.distance_m, turning ? std::numeric_limits<double>::quiet_NaN() : leg.distance_derivative};
}

std::optional<double> StratifiedSolver::turning_z(double ray_parameter, double z_start) const {
    const Ends ends = classify(ray_parameter, z_start, z_start);
    if (ends.a.kind == LegEnd::turning) return z_start;  // horizontal at the start: it turns there
    const auto interval = profile_->interval_around(ray_parameter, z_start);
    if (!interval || interval->upper_kind == UpperEndKind::surface) return std::nullopt;
    return interval->upper_z;
}

LegDistance StratifiedSolver::distance_to_turning(double ray_parameter, double z_start) const {
    const auto z_turn = turning_z(ray_parameter, z_start);
    if (!z_turn)
        throw NumericalError(fmt::format("a ray of parameter {} from z = {} m reaches the surface without turning",
                                         ray_parameter, z_start));
    // A start at the turning point: no leg, and the derivative's limit (the turning end moves
    // like √(n − ξ) away from the start).
    if (*z_turn == z_start) return {0.0, -std::numeric_limits<double>::infinity()};
    const LegIntegrals leg = leg_integrals(*profile_, RayLevel::plain(ray_parameter), {z_start}, {*z_turn, LegEnd::turning},
                                           false, true);
    return {leg.distance_m, leg.distance_derivative};
}

}  // namespace firnray
