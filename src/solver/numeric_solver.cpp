#include "solver/numeric_solver.hpp"

#include <algorithm>
#include <array>
#include <vector>
#include <cmath>
#include <limits>

#include <boost/math/tools/toms748_solve.hpp>
#include <fmt/format.h>

#include "core/constants.hpp"
#include "core/errors.hpp"
#include "trace/ray_system.hpp"

namespace firnray {

NumericSolver::NumericSolver(std::shared_ptr<const FirnModel> model, IntegrationTolerances tolerances)
    : RaySolver(std::move(model)), tolerances_(tolerances) {
    if (!model_ || !model_->index) throw DataInputError("the numeric solver needs a model with an index profile");
    tolerances_.validate();
}

namespace {

void require_in_ice(double z, const char* key) {
    if (!std::isfinite(z) || z > 0.0)
        throw DataInputError(fmt::format("a segment end must be a finite z <= 0 in the ice (got {})", z), {"", 0, key});
}

}  // namespace

Segment NumericSolver::segment(double xi, double z_a, double z_b) const {
    require_in_ice(z_a, "z_a");
    require_in_ice(z_b, "z_b");
    if (!std::isfinite(xi) || xi < 0.0)
        throw DataInputError(fmt::format("the ray parameter must be a finite number >= 0 (got {})", xi),
                             {"", 0, "ray_parameter"});
    if (z_a == z_b) return {};
    return integrate_leg(xi, z_a, z_b).segment;
}

NumericSolver::LegEnd NumericSolver::integrate_leg(double xi, double z_a, double z_b) const {
    using namespace ray_state;
    const IndexProfile& profile = *model_->index;
    LegEnd result;
    Segment& out = result.segment;

    const double n_a = profile.index(z_a), n_b = profile.index(z_b);
    const double open_a = n_a - xi, open_b = n_b - xi;  // > 0 where the ray is not horizontal
    for (const auto& [open, z] : {std::pair{open_a, z_a}, std::pair{open_b, z_b}})
        if (open < -turning_index_tolerance)
            throw NumericalError(fmt::format("ray parameter {} exceeds the index {} at z = {} m: no ray there", xi,
                                             xi + open, z));
    const bool turning_a = open_a <= turning_index_tolerance, turning_b = open_b <= turning_index_tolerance;
    if (turning_a && turning_b)
        throw NumericalError(fmt::format("ray parameter {} equals the index at both z = {} m and z = {} m: "
                                         "the ray runs horizontally and never joins them",
                                         xi, z_a, z_b));

    // Start at the more open end: any turning point is then at the far end, where it is an event.
    const bool from_a = open_a >= open_b;
    const double z_start = from_a ? z_a : z_b, z_end = from_a ? z_b : z_a;
    const double n_start = from_a ? n_a : n_b;
    const bool turning_end = from_a ? turning_b : turning_a;
    const double heading = z_end > z_start ? 1.0 : -1.0;

    RayStateWithVariation y{};
    y[z] = z_start;
    y[px] = xi;
    y[pz] = heading * std::sqrt((n_start - xi) * (n_start + xi));
    y[dpz_dxi] = -xi / y[pz];  // keeps p_x² + p_z² = n² at fixed z_start

    // Crossings: 0 = reaching z_end, 1 = turning (p_z = 0), 2 = overshooting a turning end.
    constexpr double overshoot_m = 1.0;
    std::array<LevelCrossing, 3> crossings{LevelCrossing{z, z_end, heading > 0.0 ? +1 : -1},
                                           LevelCrossing{pz, 0.0, 0},
                                           LevelCrossing{z, z_end + heading * overshoot_m, heading > 0.0 ? +1 : -1}};
    const std::span<const LevelCrossing> events =
        turning_end ? std::span<const LevelCrossing>(crossings.data() + 1, 2)
                    : std::span<const LevelCrossing>(crossings.data(), 2);

    // A piecewise-smooth profile (a table) is integrated piece by piece, stopping at each join
    // between the ends and going on from the state there with the next piece, so that no step
    // straddles a jump in a derivative of n (which would force tiny steps around every knot).
    const std::span<const double> joins = profile.joins_z();  // highest first
    std::vector<double> cuts;
    for (const double j : joins)
        if (j > std::min(z_start, z_end) && j < std::max(z_start, z_end)) cuts.push_back(j);
    if (heading > 0.0) std::reverse(cuts.begin(), cuts.end());  // in the order the ray meets them
    auto piece_between = [&](double z_from, double z_to) {
        const double middle = 0.5 * (z_from + z_to);
        return static_cast<std::size_t>(std::count_if(joins.begin(), joins.end(), [&](double j) { return j > middle; }));
    };
    const std::array<LevelCrossing, 2> cut_events{LevelCrossing{z, 0.0, heading > 0.0 ? +1 : -1},
                                                  LevelCrossing{pz, 0.0, 0}};

    RayEquations equations(profile, model_->attenuation.get());
    double sigma = 0.0, first_step = tolerances_.initial_step_m;
    for (std::size_t piece = 0;; ++piece) {
        const bool last_piece = piece == cuts.size();
        const double piece_end = last_piece ? z_end : cuts[piece];
        if (!joins.empty()) equations.use_piece(piece_between(y[z], piece_end));
        std::array<LevelCrossing, 2> to_cut = cut_events;
        to_cut[0].level = piece_end;
        const std::span<const LevelCrossing> targets = last_piece ? events : std::span<const LevelCrossing>(to_cut);

        RayStepper<RayStateWithVariation> stepper(equations, tolerances_);
        stepper.start(y, sigma, first_step);
        for (;;) {
            stepper.step();
            const auto found = stepper.first_crossing(targets, stepper.begin_sigma(), stepper.begin_state());
            if (!found) continue;
            const LevelCrossing& hit = targets[found->which];
            RayStateWithVariation ye = stepper.on_level(found->sigma, hit.component, hit.level);
            if (!last_piece && hit.component == z) {  // at a join: go on with the next piece
                y = ye;
                sigma = found->sigma;
                first_step = std::min(stepper.last_step(), tolerances_.max_step_m);
                break;
            }
            bool at_turning = false;
            if (hit.component == pz) {
                // Accept a turn at the far end (drift may make it a hair early); elsewhere ξ > n inside.
                constexpr double end_slack_m = 1e-6;
                if (!turning_end && std::abs(ye[z] - z_end) > end_slack_m)
                    throw NumericalError(fmt::format("the ray of parameter {} turns at z = {} m, before reaching z = {} m "
                                                     "(ξ exceeds n between the ends)",
                                                     xi, ye[z], z_end));
                if (!last_piece && std::abs(ye[z] - z_end) > end_slack_m)
                    throw NumericalError(fmt::format("the ray of parameter {} turns at z = {} m, before reaching its "
                                                     "turning point z = {} m", xi, ye[z], z_end));
                at_turning = true;
            } else if (hit.level != z_end) {
                throw NumericalError(fmt::format("the ray of parameter {} did not turn at z = {} m, where n = ξ "
                                                 "(passed it by {} m)",
                                                 xi, z_end, overshoot_m));
            }
            out.distance_m = std::abs(ye[x]);
            out.time_s = ye[optical_path] / speed_of_light;
            out.length_m = ye[length];
            out.attenuation_exponent = ye[attenuation];
            // x at fixed end depth: x(σ_end(ξ), ξ), with dσ_end/dξ = −δz / p_z.
            out.distance_derivative = at_turning ? std::numeric_limits<double>::quiet_NaN()
                                                 : ye[dx_dxi] - ye[px] * ye[dz_dxi] / ye[pz];
            result.at_turning = at_turning;
            result.end = ye;
            return result;
        }
    }
}

LegDistance NumericSolver::distance_to_turning(double xi, double z_start) const {
    using namespace ray_state;
    require_in_ice(z_start, "z_start");
    const IndexProfile& profile = *model_->index;
    const auto top = turning_z(xi, z_start);
    if (!top)
        throw NumericalError(
            fmt::format("a ray of parameter {} from z = {} m reaches the surface without turning", xi, z_start));
    // Layered profiles have jumps in dn/dz at their joins, which the variational equations (carrying
    // d²n/dz²) do not see; there the generic differences of the distances themselves are right.
    if (profile.index(z_start) - xi <= turning_index_tolerance || *top == z_start || profile.kind() == "layered")
        return RaySolver::distance_to_turning(xi, z_start);  // or: starts horizontal, distance 0, slope −∞
    const LegEnd leg = integrate_leg(xi, z_start, *top);
    double n = 0.0, dn_dz = 0.0;
    profile.index_and_gradient(leg.end[z], n, dn_dz);
    // The turning end moves with ξ: σ_t(ξ) is where p_z = 0, so dσ_t/dξ = −δp_z / (dp_z/dσ) with
    // dp_z/dσ = n dn/dz, and the total derivative is δx + p_x dσ_t/dξ. Where the index hardly
    // changes at the turning point that quotient is ill-conditioned: use the generic differences.
    const double bend = n * dn_dz;
    if (!leg.at_turning || !(std::abs(bend) > 1e-9) || !std::isfinite(leg.end[dpz_dxi]))
        return RaySolver::distance_to_turning(xi, z_start);
    return {leg.segment.distance_m, leg.end[dx_dxi] - leg.end[px] * leg.end[dpz_dxi] / bend};
}

std::optional<double> NumericSolver::turning_z(double xi, double z_start) const {
    require_in_ice(z_start, "z_start");
    if (!std::isfinite(xi))
        throw DataInputError("the ray parameter must be a finite number", {"", 0, "ray_parameter"});
    const IndexProfile& profile = *model_->index;
    auto f = [&](double z) { return profile.index(z) - xi; };

    double z = z_start, fz = f(z);
    if (fz < -turning_index_tolerance)
        throw NumericalError(fmt::format("ray parameter {} exceeds the index {} at z = {} m: no ray there", xi,
                                         xi + fz, z_start));
    if (fz <= 0.0) return z_start;

    constexpr double longest_m = 4.0, shortest_m = 0.05;
    while (z < 0.0) {
        const double slope = std::abs(profile.gradient(z));
        const double stride = slope > 0.0 ? std::clamp(0.5 * fz / slope, shortest_m, longest_m) : longest_m;
        const double z_next = std::min(z + stride, 0.0);
        const double f_next = f(z_next);
        if (f_next <= 0.0) {
            if (f_next == 0.0) return z_next;
            boost::uintmax_t iterations = 100;
            const auto r = boost::math::tools::toms748_solve(f, z, z_next, fz, f_next,
                                                             boost::math::tools::eps_tolerance<double>(52), iterations);
            // The end on the n >= ξ side, so that segment() sees a valid (turning) end.
            return f(r.first) >= 0.0 ? r.first : r.second;
        }
        z = z_next;
        fz = f_next;
    }
    return std::nullopt;
}

}  // namespace firnray
