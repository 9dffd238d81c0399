#include "solver/ray_solver.hpp"

#include "core/errors.hpp"

namespace firnray {

void RaySolver::segments_from(double ray_parameter, double z_top, std::span<const double> levels,
                              std::span<Segment> out) const {
    if (out.size() != levels.size()) throw NumericalError("segments_from: levels and output differ in size");
    Segment total;
    double previous = z_top;
    for (std::size_t i = 0; i < levels.size(); ++i) {
        if (levels[i] > previous) throw NumericalError("segments_from: levels must descend from z_top");
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

}  // namespace firnray
