#include "solver/numeric_solver.hpp"

#include <algorithm>
#include <array>
#include <cmath>
#include <limits>
#include <utility>
#include <vector>

#include <fmt/format.h>

#include "core/constants.hpp"
#include "core/errors.hpp"
#include "trace/bracketed_root.hpp"
#include "trace/ray_integration.hpp"
#include "trace/ray_system.hpp"

namespace firnray {

NumericSolver::NumericSolver(std::shared_ptr<const FirnModel> model, IntegrationTolerances tolerances,
                             DistanceDerivative derivative)
    : RaySolver(std::move(model)), tolerances_(tolerances), derivative_(derivative) {
    if (!model_ || !model_->index) throw DataInputError("the numeric solver needs a model with an index profile");
    tolerances_.validate();
}

namespace {

constexpr double nan = std::numeric_limits<double>::quiet_NaN();

void require_in_ice(double z, const char* key) {
    if (!std::isfinite(z) || z > 0.0)
        throw DataInputError(fmt::format("a segment end must be a finite z <= 0 in the ice (got {})", z), {"", 0, key});
}

void require_ray_parameter(double xi) {
    if (!std::isfinite(xi) || xi < 0.0)
        throw DataInputError(fmt::format("the ray parameter must be a finite number >= 0 (got {})", xi),
                             {"", 0, "ray_parameter"});
}

// Where a leg ended: its Segment and the state there (heights from the origin 0).
template <class State>
struct LegEnd {
    Segment segment;
    State end{};
    bool at_turning = false;
};

// The piece of a piecewise-smooth profile between two heights: the number of joins above the
// middle (joins_z is highest first).
std::size_t piece_between(std::span<const double> joins, double z_from, double z_to) {
    const double middle = 0.5 * (z_from + z_to);
    return static_cast<std::size_t>(std::count_if(joins.begin(), joins.end(), [&](double j) { return j > middle; }));
}

// The sums from the start of the ray to state y, as a Segment (no derivative).
template <class State>
Segment leg_to(const IntegratedRay<State>& ray, const State& y) {
    Segment s;
    s.distance_m = std::abs(ray.distance_to(y));
    s.time_s = ray.optical_path_to(y) / speed_of_light;
    s.length_m = ray.length_to(y);
    s.attenuation_exponent = ray.attenuation_to(y);
    s.distance_derivative = nan;
    return s;
}

// The observer of one leg (integrate_leg): it watches the next join, or reaching z_end, turning
// (p_z = 0) and, for a turning end, overshooting it; at a join the ray goes on with the next
// piece, and the leg ends at the first other event.
template <class State>
class LegObserver {
public:
    // direction: +1 for a leg that runs upward, −1 downward; cuts: the joins strictly between
    // the ends, in the order the ray meets them.
    LegObserver(std::span<const double> joins, std::vector<double> cuts, double xi, double z_end, bool turning_end,
                int direction)
        : joins_(joins), cuts_(std::move(cuts)), xi_(xi), z_end_(z_end), turning_end_(turning_end),
          direction_(direction) {}

    std::span<const LevelCrossing> crossings(const IntegratedRay<State>& ray) {
        using namespace ray_state;
        const double heading = direction() > 0 ? 1.0 : -1.0;
        events_ = !last_piece()  ? std::array{LevelCrossing{z, piece_end() - ray.origin(), direction()},
                                             LevelCrossing{pz, 0.0, 0}}
                  : turning_end_ ? std::array{LevelCrossing{pz, 0.0, 0},
                                              LevelCrossing{z, z_end_ + heading * overshoot_m - ray.origin(), direction()}}
                                 : std::array{LevelCrossing{z, z_end_ - ray.origin(), direction()}, LevelCrossing{pz, 0.0, 0}};
        return events_;
    }

    bool on_step(IntegratedRay<State>&, double, const State&) { return true; }

    AfterEvent on_event(IntegratedRay<State>& ray, std::size_t which, double, double, State& ye) {
        using namespace ray_state;
        constexpr bool with_variation = std::tuple_size_v<State> == size_with_variation;
        const LevelCrossing& hit = events_[which];
        if (!last_piece() && hit.component == z) {  // at a join: go on with the next piece
            const double join = cuts_[next_cut_++];
            return AfterEvent{AfterEvent::Action::change_piece, piece_between(joins_, join, piece_end())};
        }
        bool at_turning = false;
        if (hit.component == pz) {
            // Accept a turn at the far end (drift may make it a hair early); elsewhere ξ > n inside.
            constexpr double end_slack_m = 1e-6;
            if (std::abs(ray.height(ye) - z_end_) > end_slack_m && (!turning_end_ || !last_piece()))
                throw NumericalError(fmt::format("the ray of parameter {} turns at z = {} m, before reaching z = {} m "
                                                 "(ξ exceeds n between the ends)",
                                                 xi_, ray.height(ye), z_end_));
            at_turning = true;
        } else if (turning_end_) {
            throw NumericalError(fmt::format("the ray of parameter {} did not turn at z = {} m, where n = ξ "
                                             "(passed it by {} m)",
                                             xi_, z_end_, overshoot_m));
        }
        result_.segment = leg_to(ray, ye);
        // x at fixed end depth: x(σ_end(ξ), ξ), with dσ_end/dξ = −δz / p_z.
        if constexpr (with_variation)
            if (!at_turning) result_.segment.distance_derivative = ye[dx_dxi] - ye[px] * ye[dz_dxi] / ye[pz];
        result_.end = ye;
        result_.at_turning = at_turning;
        return AfterEvent{AfterEvent::Action::stop};
    }

    const LegEnd<State>& result() const { return result_; }

private:
    static constexpr double overshoot_m = 1.0;
    bool last_piece() const { return next_cut_ == cuts_.size(); }
    double piece_end() const { return last_piece() ? z_end_ : cuts_[next_cut_]; }
    int direction() const { return direction_; }

    std::span<const double> joins_;
    std::vector<double> cuts_;
    double xi_, z_end_;
    bool turning_end_;
    int direction_;
    std::size_t next_cut_ = 0;
    std::array<LevelCrossing, 2> events_{};
    LegEnd<State> result_;
};

// The observer of a ray read at many levels (segments_from): each step fills the legs to the
// levels it crosses, on the dense output, until the last; a turn back up before it is an error
// (or, within a micrometre of the lowest level, that level's leg).
class LevelsObserver {
public:
    LevelsObserver(std::span<const double> levels, std::span<Segment> out, std::size_t next, double xi, double z_upper)
        : levels_(levels), out_(out), next_(next), xi_(xi), z_upper_(z_upper) {}

    // The ray goes down while p_z < 0: a turn back up is the one event.
    std::span<const LevelCrossing> crossings(const IntegratedRay<RayState>&) const { return turn_; }

    bool on_step(IntegratedRay<RayState>& ray, double, const RayState&) {
        const RayStepper<RayState>& stepper = ray.stepper();
        fill(ray, stepper.end_sigma(), stepper.end_state());
        return next_ < levels_.size();
    }

    // Only the part before the turn counts (z is monotone on it).
    AfterEvent on_event(IntegratedRay<RayState>& ray, std::size_t, double, double sigma, RayState&) {
        const RayState y_turn = ray.stepper().at(sigma);
        fill(ray, sigma, y_turn);
        const double z_turn = ray.height(y_turn);
        // A turn at the lowest level itself (drift may make it a hair early) is its leg.
        constexpr double end_slack_m = 1e-6;
        for (; next_ < levels_.size() && levels_[next_] >= z_turn - end_slack_m; ++next_) out_[next_] = leg_to(ray, y_turn);
        if (next_ < levels_.size())
            throw NumericalError(fmt::format("the ray of parameter {} turns at z = {} m, before reaching z = {} m "
                                             "(ξ exceeds n on the way down from z = {} m)",
                                             xi_, z_turn, levels_.back(), z_upper_));
        return AfterEvent{AfterEvent::Action::stop};
    }

private:
    // Every level above the step's start is filled, so the next ones crossed lie in (b, a] of
    // the step, which the ray covers from its start a to b.
    void fill(const IntegratedRay<RayState>& ray, double b, const RayState& y_b) {
        using namespace ray_state;
        const RayStepper<RayState>& stepper = ray.stepper();
        const double a = stepper.begin_sigma();
        const RayState& y_a = stepper.begin_state();
        const double z_b = ray.height(y_b);
        for (; next_ < levels_.size() && levels_[next_] >= z_b; ++next_) {
            if (next_ > 0 && levels_[next_] == levels_[next_ - 1]) {
                out_[next_] = out_[next_ - 1];
                continue;
            }
            const double level = levels_[next_] - ray.origin();
            const auto crossing = stepper.locate_with_rate(z, pz, level, a, b, y_a[z] - level, y_b[z] - level);
            out_[next_] = leg_to(ray, crossing.second);
        }
    }

    static constexpr std::array<LevelCrossing, 1> turn_{LevelCrossing{ray_state::pz, 0.0, +1}};
    std::span<const double> levels_;
    std::span<Segment> out_;
    std::size_t next_;
    double xi_, z_upper_;
};

// A leg from z_start (the more open end, not a turning point) to z_end, which may be a turning
// point. The state type decides whether the variational equations come along. On a
// piecewise-smooth profile (a table) the leg is integrated piece by piece: it stops at each join
// between the ends and goes on from the state there with the next piece, each evaluated as its
// own polynomial beyond its interval, so that no step straddles the jump of a derivative of n
// (which forces tiny steps around every knot and lets |p| drift from n).
template <class State>
LegEnd<State> integrate_leg(const FirnModel& model, const IntegrationTolerances& tolerances, double xi,
                            double z_start, double n_start, double z_end, bool turning_end) {
    using namespace ray_state;
    constexpr bool with_variation = std::tuple_size_v<State> == size_with_variation;
    const double heading = z_end > z_start ? 1.0 : -1.0;
    const int direction = heading > 0.0 ? +1 : -1;
    State y{};
    y[z] = z_start;
    y[px] = xi;
    y[pz] = heading * std::sqrt((n_start - xi) * (n_start + xi));
    if constexpr (with_variation) y[dpz_dxi] = -xi / y[pz];  // keeps p_x² + p_z² = n² at fixed z_start

    const std::span<const double> joins = model.index->joins_z();
    std::vector<double> cuts;  // the joins strictly between the ends, in the order the ray meets them
    for (const double j : joins)
        if (j > std::min(z_start, z_end) && j < std::max(z_start, z_end)) cuts.push_back(j);
    if (heading > 0.0) std::reverse(cuts.begin(), cuts.end());
    const double first_piece_end = cuts.empty() ? z_end : cuts.front();

    // Legs are integrated in one go and their accuracy is set by the tolerances alone (main's
    // figures: < 1 mm and < 1 ps over 2 km); rebasing would take 1.7 times the steps.
    IntegratedRay<State> ray(model, tolerances, y, BetweenSteps::projected);
    if (!joins.empty()) ray.stepper().use_piece(piece_between(joins, z_start, first_piece_end));

    LegObserver<State> observer(joins, std::move(cuts), xi, z_end, turning_end, direction);
    integrate_ray(ray, observer);
    return observer.result();
}

}  // namespace

Segment NumericSolver::segment(double xi, double z_a, double z_b) const {
    require_in_ice(z_a, "z_a");
    require_in_ice(z_b, "z_b");
    require_ray_parameter(xi);
    const IndexProfile& profile = *model_->index;
    Segment out;
    if (z_a == z_b) return out;

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
    // The derivative is NaN at a turning end anyway: no need for the variational equations.
    if (derivative_ == DistanceDerivative::computed && !turning_end)
        return integrate_leg<RayStateWithVariation>(*model_, tolerances_, xi, z_start, n_start, z_end, false).segment;
    return integrate_leg<RayState>(*model_, tolerances_, xi, z_start, n_start, z_end, turning_end).segment;
}

void NumericSolver::segments_from(double xi, double z_upper, std::span<const double> levels,
                                  std::span<Segment> out) const {
    using namespace ray_state;
    if (out.size() != levels.size()) throw NumericalError("segments_from: levels and output differ in size");
    require_in_ice(z_upper, "z_upper");
    require_ray_parameter(xi);
    double previous = z_upper;
    for (double level : levels) {
        if (!(level <= previous)) throw NumericalError("segments_from: levels must descend from z_upper");
        previous = level;
    }
    std::size_t next = 0;  // the first level not yet filled
    for (; next < levels.size() && levels[next] == z_upper; ++next) out[next] = Segment{};
    if (next == levels.size()) return;

    const IndexProfile& profile = *model_->index;
    double n_upper, slope_upper;
    profile.index_and_gradient(z_upper, n_upper, slope_upper);
    const double open = n_upper - xi;
    if (open < -turning_index_tolerance)
        throw NumericalError(
            fmt::format("ray parameter {} exceeds the index {} at z = {} m: no ray there", xi, n_upper, z_upper));
    // At an upper end on the turning point the ray starts horizontal. p_z = 0 rather than the tiny −√(n² − ξ²) of the
    // computed n: that makes z_upper the exact turning point of the ray integrated (its |p| then
    // differs from n by at most the tolerance, like a change of ξ by 1e-12, which moves the
    // distances by far less than the legs above a turning point do), whereas a downward start
    // drops the leg between z_upper and the true turning point, which grows like √(n − ξ)/|n'|:
    // 19 µm for n − ξ = 1e-15 and 0.3 mm for 1e-13 on the exponential profile (measured against
    // the closed form). segment() likewise integrates up to p_z = 0.
    const bool upper_end_turns = open <= turning_index_tolerance;
    if (upper_end_turns && !(slope_upper < 0.0))
        throw NumericalError(fmt::format("the ray of parameter {} is horizontal at z = {} m and does not bend "
                                         "downward there (dn/dz = {} is not negative)",
                                         xi, z_upper, slope_upper));
    RayState y{};
    y[z] = z_upper;
    y[px] = xi;
    y[pz] = upper_end_turns ? 0.0 : -std::sqrt(open * (n_upper + xi));

    IntegratedRay<RayState> ray(*model_, tolerances_, y, BetweenSteps::projected_and_rebased);
    LevelsObserver observer(levels, out, next, xi, z_upper);
    integrate_ray(ray, observer);
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
            const auto r = toms748_bracket("a turning point", f, z, z_next, fz, f_next, 52, 100);
            // The end on the n >= ξ side, so that segment() sees a valid (turning) end.
            return f(r.first) >= 0.0 ? r.first : r.second;
        }
        z = z_next;
        fz = f_next;
    }
    return std::nullopt;
}

LegDistance NumericSolver::distance_to_turning(double xi, double z_start) const {
    using namespace ray_state;
    require_in_ice(z_start, "z_start");
    require_ray_parameter(xi);
    const IndexProfile& profile = *model_->index;
    const auto top = turning_z(xi, z_start);
    if (!top)
        throw NumericalError(
            fmt::format("a ray of parameter {} from z = {} m reaches the surface without turning", xi, z_start));
    const double n_start = profile.index(z_start);
    // Layered profiles have jumps in dn/dz at their joins, which the variational equations (carrying
    // d²n/dz²) do not see; there the generic differences of the distances themselves are right. So
    // they are for a ray that starts horizontal (distance 0, slope −∞) and without the derivative.
    if (n_start - xi <= turning_index_tolerance || *top == z_start || profile.kind() == "layered" ||
        derivative_ == DistanceDerivative::not_computed)
        return RaySolver::distance_to_turning(xi, z_start);
    const auto leg = integrate_leg<RayStateWithVariation>(*model_, tolerances_, xi, z_start, n_start, *top, true);
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

}  // namespace firnray
