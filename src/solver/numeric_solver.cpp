#include "solver/numeric_solver.hpp"

#include <algorithm>
#include <array>
#include <cmath>
#include <limits>
#include <utility>
#include <vector>

#include <boost/math/tools/toms748_solve.hpp>
#include <fmt/format.h>

#include "core/constants.hpp"
#include "core/errors.hpp"
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

// How a ray is restarted at the end of a step. Projected: p_z is put back on |p| = n. The
// embedded pair's error estimate misses most of the error of steps across points where the
// profile is less smooth (the knots of a table, where the third derivative of n jumps; the joins
// of a layered profile, where the first does), and |p|² − n² then drifts by ~5e-9 over a few
// hundred metres, the direction with it (0.3 mm over a 5 km grazing ray through a 5 m table).
// Projecting back onto the invariant (Hairer, Lubich & Wanner, Geometric Numerical Integration,
// §IV.4) removes that; it is skipped within 0.06° of the horizontal, where the correction is
// ill-conditioned, and (for single legs) when it is below a tenth of the step tolerance of p_z,
// as on smooth profiles. Rebased as well, for rays read at many levels: the height origin moved
// to the ray and the sums (x, c·T, s, α) carried outside the state. dopri5's error control is
// relative to the size of each component, so on a state holding the depth and the running sums
// it lets through 1e-10 of hundreds of metres per step, which a nearly horizontal ray turns into
// µm of distance; on the rebased state the control applies to what each step adds. That takes
// about 1.7 times the steps and brings a whole ray to within 5e-8 m (smooth profiles) to 7e-7 m
// (a 5 m table, 4.7 km grazing ray) of legs summed level to level. A restart costs one
// right-hand side more. Figures: tests/solver/test_numeric_segments_from.cpp,
// docs/physics.md §2.7 and docs/performance.md.
enum class Restart { projected, projected_and_rebased };

template <class State>
class RestartedRay {
public:
    RestartedRay(const FirnModel& model, const IntegrationTolerances& tolerances, const State& start, Restart restart)
        : profile_(model.index.get()),
          absolute_(tolerances.absolute),
          relative_(tolerances.relative),
          rebased_(restart == Restart::projected_and_rebased),
          origin_(rebased_ ? start[ray_state::z] : 0.0),
          stepper_(equations_from(model, origin_), tolerances) {
        State y = start;
        y[ray_state::z] -= origin_;
        stepper_.start(y, 0.0, tolerances.initial_step_m);
    }

    RayStepper<State>& stepper() { return stepper_; }
    // Heights in the stepper's states are from this origin.
    double origin() const { return origin_; }
    double height(const State& y) const { return origin_ + y[ray_state::z]; }

    // The leg from the start of the ray to state y (on the current step).
    Segment leg_to(const State& y) const {
        using namespace ray_state;
        Segment s;
        s.distance_m = std::abs(gathered_[0] + y[x]);
        s.time_s = (gathered_[1] + y[optical_path]) / speed_of_light;
        s.length_m = gathered_[2] + y[length];
        s.attenuation_exponent = gathered_[3] + y[attenuation];
        s.distance_derivative = nan;
        return s;
    }

    // Ends the step: its end state goes on as the start of the next one.
    void restart() {
        using namespace ray_state;
        State y = stepper_.end_state();
        const double h = height(y);
        bool projected = false;
        if (h <= 0.0) {  // only a step that ends a leg leaves the ice
            const double n = profile_->index(h);
            const double open = (n - y[px]) * (n + y[px]);
            if (open > 0.0 && std::abs(y[pz]) >= 1e-3 * n) {
                const double on_invariant = std::copysign(std::sqrt(open), y[pz]);
                projected = rebased_ || std::abs(on_invariant - y[pz]) > 0.1 * (absolute_ + relative_ * std::abs(y[pz]));
                if (projected) y[pz] = on_invariant;
            }
        }
        if (!rebased_ && !projected) return;  // goes on as it is, without the cost of a restart
        if (rebased_) {
            for (std::size_t i = 0; i < sums.size(); ++i) {
                gathered_[i] += y[sums[i]];
                y[sums[i]] = 0.0;
            }
            origin_ = h;
            y[z] = 0.0;
        }
        stepper_.restart_at_end(y, origin_);
    }

private:
    static RayEquations equations_from(const FirnModel& model, double origin) {
        RayEquations equations(*model.index, model.attenuation.get());
        equations.set_z_origin(origin);
        return equations;
    }

    static constexpr std::array<std::size_t, 4> sums{ray_state::x, ray_state::optical_path, ray_state::length,
                                                     ray_state::attenuation};
    const IndexProfile* profile_;
    double absolute_, relative_;
    bool rebased_;
    double origin_;
    RayStepper<State> stepper_;
    std::array<double, 4> gathered_{};  // the sums, in the order of `sums`
};

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
    std::size_t next_cut = 0;
    auto piece_end = [&] { return next_cut < cuts.size() ? cuts[next_cut] : z_end; };

    // Legs are integrated in one go and their accuracy is set by the tolerances alone (main's
    // figures: < 1 mm and < 1 ps over 2 km); rebasing would take 1.7 times the steps.
    RestartedRay<State> ray(model, tolerances, y, Restart::projected);
    RayStepper<State>& stepper = ray.stepper();
    if (!joins.empty()) stepper.use_piece(piece_between(joins, z_start, piece_end()));
    constexpr double overshoot_m = 1.0;
    for (;;) {
        stepper.step();
        // Crossings, with heights from the current origin: the next join, or reaching z_end,
        // turning (p_z = 0) and, for a turning end, overshooting it.
        const bool last_piece = next_cut == cuts.size();
        const std::array<LevelCrossing, 2> events =
            !last_piece   ? std::array{LevelCrossing{z, piece_end() - ray.origin(), direction}, LevelCrossing{pz, 0.0, 0}}
            : turning_end ? std::array{LevelCrossing{pz, 0.0, 0},
                                       LevelCrossing{z, z_end + heading * overshoot_m - ray.origin(), direction}}
                          : std::array{LevelCrossing{z, z_end - ray.origin(), direction}, LevelCrossing{pz, 0.0, 0}};
        const auto found = stepper.first_crossing(events, stepper.begin_sigma(), stepper.begin_state());
        if (!found) {
            ray.restart();
            continue;
        }
        const LevelCrossing& hit = events[found->which];
        const State ye = stepper.on_level(found->sigma, hit.component, hit.level);
        if (!last_piece && hit.component == z) {  // at a join: go on with the next piece
            const double join = cuts[next_cut++];
            stepper.restart_on_piece(ye, found->sigma, piece_between(joins, join, piece_end()));
            continue;
        }
        bool at_turning = false;
        if (hit.component == pz) {
            // Accept a turn at the far end (drift may make it a hair early); elsewhere ξ > n inside.
            constexpr double end_slack_m = 1e-6;
            if (std::abs(ray.height(ye) - z_end) > end_slack_m && (!turning_end || !last_piece))
                throw NumericalError(fmt::format("the ray of parameter {} turns at z = {} m, before reaching z = {} m "
                                                 "(ξ exceeds n between the ends)",
                                                 xi, ray.height(ye), z_end));
            at_turning = true;
        } else if (turning_end) {
            throw NumericalError(fmt::format("the ray of parameter {} did not turn at z = {} m, where n = ξ "
                                             "(passed it by {} m)",
                                             xi, z_end, overshoot_m));
        }
        LegEnd<State> out;
        out.segment = ray.leg_to(ye);
        // x at fixed end depth: x(σ_end(ξ), ξ), with dσ_end/dξ = −δz / p_z.
        if constexpr (with_variation)
            if (!at_turning) out.segment.distance_derivative = ye[dx_dxi] - ye[px] * ye[dz_dxi] / ye[pz];
        out.end = ye;
        out.at_turning = at_turning;
        return out;
    }
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

void NumericSolver::segments_from(double xi, double z_top, std::span<const double> levels,
                                  std::span<Segment> out) const {
    using namespace ray_state;
    if (out.size() != levels.size()) throw NumericalError("segments_from: levels and output differ in size");
    require_in_ice(z_top, "z_top");
    require_ray_parameter(xi);
    double previous = z_top;
    for (double level : levels) {
        if (!(level <= previous)) throw NumericalError("segments_from: levels must descend from z_top");
        previous = level;
    }
    std::size_t next = 0;  // the first level not yet filled
    for (; next < levels.size() && levels[next] == z_top; ++next) out[next] = Segment{};
    if (next == levels.size()) return;

    const IndexProfile& profile = *model_->index;
    double n_top, slope_top;
    profile.index_and_gradient(z_top, n_top, slope_top);
    const double open = n_top - xi;
    if (open < -turning_index_tolerance)
        throw NumericalError(
            fmt::format("ray parameter {} exceeds the index {} at z = {} m: no ray there", xi, n_top, z_top));
    // At a turning top the ray starts horizontal. p_z = 0 rather than the tiny −√(n² − ξ²) of the
    // computed n: that makes z_top the exact turning point of the ray integrated (its |p| then
    // differs from n by at most the tolerance, like a change of ξ by 1e-12, which moves the
    // distances by far less than the legs above a turning point do), whereas a downward start
    // drops the leg between z_top and the true turning point, which grows like √(n − ξ)/|n'|:
    // 19 µm for n − ξ = 1e-15 and 0.3 mm for 1e-13 on the exponential profile (measured against
    // the closed form). segment() likewise integrates up to p_z = 0.
    const bool turning_top = open <= turning_index_tolerance;
    if (turning_top && !(slope_top < 0.0))
        throw NumericalError(fmt::format("the ray of parameter {} is horizontal at z = {} m and does not bend "
                                         "downward there (dn/dz = {} is not negative)",
                                         xi, z_top, slope_top));
    RayState y{};
    y[z] = z_top;
    y[px] = xi;
    y[pz] = turning_top ? 0.0 : -std::sqrt(open * (n_top + xi));

    RestartedRay<RayState> ray(*model_, tolerances_, y, Restart::projected_and_rebased);
    RayStepper<RayState>& stepper = ray.stepper();
    while (next < levels.size()) {
        stepper.step();
        const double a = stepper.begin_sigma();
        const RayState& y_a = stepper.begin_state();
        double b = stepper.end_sigma();
        RayState y_b = stepper.end_state();
        // The ray goes down while p_z < 0; if it turns back up inside the step, only the part
        // before the turn counts (z is monotone on it).
        const bool turns = y_b[pz] > 0.0;
        if (turns) {
            b = stepper.locate(pz, 0.0, a, b, y_a[pz], y_b[pz]);
            y_b = stepper.at(b);
        }
        // Every level above the step's start is filled, so the next ones crossed lie in
        // (end, start) of the step.
        const double z_b = ray.height(y_b);
        for (; next < levels.size() && levels[next] >= z_b; ++next) {
            if (next > 0 && levels[next] == levels[next - 1]) {
                out[next] = out[next - 1];
                continue;
            }
            const double level = levels[next] - ray.origin();
            const auto crossing = stepper.locate_with_rate(z, pz, level, a, b, y_a[z] - level, y_b[z] - level);
            out[next] = ray.leg_to(crossing.second);
        }
        if (turns && next < levels.size()) {
            // A turn at the lowest level itself (drift may make it a hair early) is its leg.
            constexpr double end_slack_m = 1e-6;
            for (; next < levels.size() && levels[next] >= z_b - end_slack_m; ++next) out[next] = ray.leg_to(y_b);
            if (next < levels.size())
                throw NumericalError(fmt::format("the ray of parameter {} turns at z = {} m, before reaching z = {} m "
                                                 "(ξ exceeds n on the way down from z = {} m)",
                                                 xi, z_b, levels.back(), z_top));
        }
        ray.restart();
    }
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
