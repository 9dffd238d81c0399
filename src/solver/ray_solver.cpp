// Generic answers to the cheaper RaySolver questions, built on segment() and turning_z(), for
// solvers that have no faster way.
#include "solver/ray_solver.hpp"

#include <algorithm>
#include <cmath>
#include <limits>

#include <fmt/format.h>

#include "core/errors.hpp"
#include "model/model_limits.hpp"
#include "solver/stratified_intervals.hpp"

namespace firnray {

void RaySolver::segments_from(double ray_parameter, double z_upper, std::span<const double> levels,
                              std::span<Segment> out) const {
    if (out.size() != levels.size()) throw NumericalError("segments_from: levels and output differ in size");
    Segment total;
    double previous = z_upper;
    for (std::size_t i = 0; i < levels.size(); ++i) {
        if (levels[i] > previous) throw NumericalError("segments_from: levels must descend from z_upper");
        if (levels[i] < previous) {
            const Segment leg = segment(ray_parameter, previous, levels[i]);
            total.distance_m += leg.distance_m;
            total.time_s += leg.time_s;
            total.length_m += leg.length_m;
            total.attenuation_exponent += leg.attenuation_exponent;
            total.distance_derivative += leg.distance_derivative;
            previous = levels[i];
        }
        out[i] = total;
    }
}

LegDistance RaySolver::leg_distance(double ray_parameter, double z_a, double z_b) const {
    const Segment leg = segment(ray_parameter, z_a, z_b);
    return {leg.distance_m, leg.distance_derivative};
}

LegDistance RaySolver::distance_to_turning(double ray_parameter, double z_start) const {
    auto distance_at = [&](double xi) {
        const auto top = turning_z(xi, z_start);
        if (!top)
            throw NumericalError(fmt::format("a ray of parameter {} from z = {} m reaches the surface without turning",
                                             xi, z_start));
        return segment(xi, z_start, *top).distance_m;
    };
    LegDistance out;
    out.distance_m = distance_at(ray_parameter);
    // Central differences inside the range where a turning point exists (n at the surface up to
    // n at z_start), forward three-point differences next to its lower end. The distance has a
    // square-root singularity at ξ = n(z_start), so the step stays well inside that scale.
    const double n_start = model().index->index(z_start);
    const double n_top = model().index->index(0.0);
    const double room_up = n_start - ray_parameter, room_down = ray_parameter - n_top;
    if (room_up <= 0.0) {
        out.derivative = -std::numeric_limits<double>::infinity();
        return out;
    }
    const double h = std::min(1e-6 * std::max(1.0, ray_parameter), 1e-3 * room_up);
    if (room_down >= h)
        out.derivative = (distance_at(ray_parameter + h) - distance_at(ray_parameter - h)) / (2.0 * h);
    else
        out.derivative =
            (-3.0 * out.distance_m + 4.0 * distance_at(ray_parameter + h) - distance_at(ray_parameter + 2.0 * h)) / (2.0 * h);
    return out;
}

std::shared_ptr<const StratifiedProfile> make_stratified_profile(const FirnModel& model) {
    std::optional<double> bottom;
    if (model.bottom) bottom = model.bottom->z_m;
    return std::make_shared<const StratifiedProfile>(model.index, bottom, model_limits::deepest_depth_m);
}

const StratifiedProfile& RaySolver::stratified_profile() const {
    std::call_once(stratified_once_, [this] { stratified_ = make_stratified_profile(*model_); });
    return *stratified_;
}

}  // namespace firnray
