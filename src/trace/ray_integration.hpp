// The one integration driver of the ray equations, in the manner of Boost.Odeint: the system is
// RayEquations (ray_system.hpp), the stepper RayStepper (ray_stepper.hpp: dopri5 with dense
// output), the driver integrate_ray() below, and the observer a caller's object that says which
// level crossings are events, what to do at each and what to read off each step. The tracer
// (full path, end points, reflections) and the numeric solver (one leg; legs to many levels)
// differ only in their observers. The driver owns what they share: restarts after events,
// what happens between steps (projection back onto the invariant |p| = n, rebasing, drift
// monitoring) and the location of events on the dense output (RayStepper::first_crossing,
// TOMS748 on the interpolated state). docs/physics.md §2.2–2.3 and §2.5 describe the method.
#pragma once

#include <algorithm>
#include <array>
#include <cmath>
#include <cstddef>
#include <limits>
#include <span>

#include "core/constants.hpp"
#include "model/firn_model.hpp"
#include "trace/ray_stepper.hpp"
#include "trace/ray_system.hpp"

namespace firnray {

// Accuracy monitor along a numeric branch (zero for straight air branches).
struct InvariantDrift {
    double index_mismatch = 0.0;        // max | |p| − n(z) |
    double ray_parameter_change = 0.0;  // max | n(z) sin θ − ξ0 |, θ from the integrated direction
};

// What the driver does with the end state of a step that had no event, before the next step.
// Monitored: nothing but measure the drift from the invariants (the tracer reports it).
// Projected: p_z is put back on |p| = n. The embedded pair's error estimate misses most of the
// error of steps across points where the profile is less smooth (the knots of a table, where the
// third derivative of n jumps; the joins of a layered profile, where the first does), and
// |p|² − n² then drifts by ~5e-9 over a few hundred metres, the direction with it (0.3 mm over a
// 5 km grazing ray through a 5 m table). Projecting back onto the invariant (Hairer, Lubich &
// Wanner, Geometric Numerical Integration, §IV.4) removes that; it is skipped within 0.06° of
// the horizontal, where the correction is ill-conditioned, and (for single legs) when it is below
// a tenth of the step tolerance of p_z, as on smooth profiles.
// Projected and rebased, for rays read at many levels: as projected, and the height origin moved
// to the ray and the sums (x, c·T, s, α) carried outside the state. dopri5's error control is
// relative to the size of each component, so on a state holding the depth and the running sums
// it lets through 1e-10 of hundreds of metres per step, which a nearly horizontal ray turns into
// µm of distance; on the rebased state the control applies to what each step adds. That takes
// about 1.7 times the steps and brings a whole ray to within 5e-8 m (smooth profiles) to 7e-7 m
// (a 5 m table, 4.7 km grazing ray) of legs summed level to level. A restart costs one
// right-hand side more. Figures: tests/solver/test_numeric_segments_from.cpp,
// docs/physics.md §2.7 and docs/performance.md.
enum class BetweenSteps { monitored, projected, projected_and_rebased };

// One ray under integration: the stepper, the height origin and the sums carried outside the
// state when rebased, and the drift measured when monitored.
template <class State>
class IntegratedRay {
public:
    IntegratedRay(const FirnModel& model, const IntegrationTolerances& tolerances, const State& start,
                  BetweenSteps between)
        : profile_(model.index.get()),
          absolute_(tolerances.absolute),
          relative_(tolerances.relative),
          between_(between),
          origin_(between == BetweenSteps::projected_and_rebased ? start[ray_state::z] : 0.0),
          ray_parameter_(start[ray_state::px]),
          stepper_(equations_from(model, origin_), tolerances) {
        State y = start;
        y[ray_state::z] -= origin_;
        stepper_.start(y, 0.0, tolerances.initial_step_m);
    }

    RayStepper<State>& stepper() { return stepper_; }
    const RayStepper<State>& stepper() const { return stepper_; }
    // Heights in the stepper's states are from this origin.
    double origin() const { return origin_; }
    double height(const State& y) const { return origin_ + y[ray_state::z]; }
    // Accepted steps so far, over all restarts.
    std::size_t steps() const { return steps_; }
    const InvariantDrift& drift() const { return drift_; }

    // The sums from the start of the ray to state y (on the current step): x, c·T, s and the
    // attenuation exponent, in the order of ray_state.
    double distance_to(const State& y) const { return gathered_[0] + y[ray_state::x]; }
    double optical_path_to(const State& y) const { return gathered_[1] + y[ray_state::optical_path]; }
    double length_to(const State& y) const { return gathered_[2] + y[ray_state::length]; }
    double attenuation_to(const State& y) const { return gathered_[3] + y[ray_state::attenuation]; }

    void step() {
        stepper_.step();
        ++steps_;
    }

    // The state y (an event, or a step end) against the invariants, when monitored.
    void note_drift(const State& y) {
        using namespace ray_state;
        if (between_ != BetweenSteps::monitored) return;
        const double h = height(y);
        if (h > 0.0) return;
        const double n = profile_->index(h);
        const double p = std::hypot(y[px], y[pz]);
        drift_.index_mismatch = std::max(drift_.index_mismatch, std::abs(p - n));
        drift_.ray_parameter_change = std::max(drift_.ray_parameter_change, std::abs(n * y[px] / p - ray_parameter_));
    }

    // Ends a step without event: its end state goes on as the start of the next one.
    void end_step() {
        using namespace ray_state;
        if (between_ == BetweenSteps::monitored) {
            note_drift(stepper_.end_state());
            return;
        }
        const bool rebased = between_ == BetweenSteps::projected_and_rebased;
        State y = stepper_.end_state();
        const double h = height(y);
        bool projected = false;
        if (h <= 0.0) {  // only a step that ends a leg leaves the ice
            const double n = profile_->index(h);
            const double open = (n - y[px]) * (n + y[px]);
            if (open > 0.0 && std::abs(y[pz]) >= 1e-3 * n) {
                const double on_invariant = std::copysign(std::sqrt(open), y[pz]);
                projected = rebased || std::abs(on_invariant - y[pz]) > 0.1 * (absolute_ + relative_ * std::abs(y[pz]));
                if (projected) y[pz] = on_invariant;
            }
        }
        if (!rebased && !projected) return;  // goes on as it is, without the cost of a restart
        if (rebased) {
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
    BetweenSteps between_;
    double origin_;
    double ray_parameter_;
    RayStepper<State> stepper_;
    std::array<double, 4> gathered_{};  // the sums, in the order of `sums`
    std::size_t steps_ = 0;
    InvariantDrift drift_;
};

// What the observer asks of the driver after an event.
struct AfterEvent {
    enum class Action {
        look_further,  // not a discontinuity (a turning point): look for more events on this step
        reflect,       // restart from the (reflected) event state, with a fresh step count
        change_piece,  // restart from the event state with the equations of `piece` (a join)
        stop,          // the integration is over
    };
    Action action = Action::stop;
    std::size_t piece = 0;
};

// The driver. The observer provides:
//   std::span<const LevelCrossing> crossings(const IntegratedRay<State>&)
//       the events watched on the step just taken (heights from the ray's current origin);
//   bool on_step(IntegratedRay<State>&, double from, const State& y_from)
//       the event-free part (from, end] of the step just taken; false stops the integration;
//   AfterEvent on_event(IntegratedRay<State>&, std::size_t which, double from, double sigma, State& y)
//       the earliest event on the part (from, end] of the step: crossings()[which] at σ, y the
//       state on its level (RayStepper::on_level), which the observer may change (a reflection
//       flips p_z).
// Between event-free steps the ray does what its BetweenSteps says. Errors of the stepper and of
// event location are NumericalError.
template <class State, class Observer>
void integrate_ray(IntegratedRay<State>& ray, Observer& observer) {
    RayStepper<State>& stepper = ray.stepper();
    for (;;) {
        ray.step();
        double from = stepper.begin_sigma();
        State y_from = stepper.begin_state();
        for (;;) {
            const std::span<const LevelCrossing> crossings = observer.crossings(ray);
            const auto found = stepper.first_crossing(crossings, from, y_from);
            if (!found) {
                if (!observer.on_step(ray, from, y_from)) return;
                ray.end_step();
                break;
            }
            const double sigma = found->sigma;
            const LevelCrossing& crossing = crossings[found->which];
            State y = stepper.on_level(sigma, crossing.component, crossing.level);
            ray.note_drift(y);
            const AfterEvent after = observer.on_event(ray, found->which, from, sigma, y);
            if (after.action == AfterEvent::Action::look_further) {
                from = sigma;
                y_from = y;
                continue;
            }
            if (after.action == AfterEvent::Action::stop) return;
            if (after.action == AfterEvent::Action::reflect) stepper.start(y, sigma, std::max(stepper.last_step(), 1e-6));
            else stepper.restart_on_piece(y, sigma, after.piece);
            break;
        }
    }
}

}  // namespace firnray
