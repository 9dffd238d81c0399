// Stepping the ray equations with an embedded Runge–Kutta pair under dense output
// (Boost.Odeint runge_kutta_dopri5) and locating events on the dense output: the step where
// a component crosses a level is bracketed, then the crossing is refined with TOMS748 on the
// interpolated state. The ray tracer and the numeric solver use it through the one integration
// driver, trace/ray_integration.hpp.
#pragma once

#include <cmath>
#include <cstddef>
#include <optional>
#include <span>
#include <stdexcept>
#include <utility>

#include <boost/numeric/odeint/stepper/generation.hpp>
#include <boost/numeric/odeint/stepper/runge_kutta_dopri5.hpp>
#include <fmt/format.h>

#include "core/errors.hpp"
#include "trace/bracketed_root.hpp"
#include "trace/ray_system.hpp"

namespace firnray {

// Accuracy and safety limits of the integration. With the defaults a 2 km ray through firn
// is accurate to well under 1 mm in position and 1 ps in time (tests/trace/test_ray_tracer.cpp
// and docs/physics.md §2.2 give the measured figures).
struct IntegrationTolerances {
    double relative = 1e-10;       // per-step error control of dopri5 (all components in metres)
    double absolute = 1e-10;       // m
    double max_step_m = 100.0;     // longest step in σ (≈ arc length / n); keeps sampling sane
    double initial_step_m = 1.0;   // first trial step in σ; the controller adapts it at once
    std::size_t max_steps = 1'000'000;  // per branch or segment; more is a NumericalError

    // Throws DataInputError naming the bad field (key "tolerances.<field>").
    void validate() const;
};

inline void IntegrationTolerances::validate() const {
    auto positive = [](double v, const char* key) {
        if (!(std::isfinite(v) && v > 0.0))
            throw DataInputError(fmt::format("must be a positive finite number (got {})", v), {"", 0, key});
    };
    positive(relative, "tolerances.relative");
    positive(absolute, "tolerances.absolute");
    positive(max_step_m, "tolerances.max_step_m");
    positive(initial_step_m, "tolerances.initial_step_m");
    if (max_steps == 0) throw DataInputError("must be at least 1", {"", 0, "tolerances.max_steps"});
}

// "Component `component` of the state crosses `level`": rising (+1), falling (-1) or either (0).
struct LevelCrossing {
    std::size_t component;
    double level;
    int direction;
};

// Where the earliest crossing of a step lies: its index in the list passed in and its σ.
struct CrossingFound {
    std::size_t which;
    double sigma;
};

template <class State>
class RayStepper {
    using Dopri = boost::numeric::odeint::runge_kutta_dopri5<State>;
    using Dense = typename boost::numeric::odeint::result_of::make_dense_output<Dopri>::type;

public:
    RayStepper(RayEquations equations, const IntegrationTolerances& tolerances)
        : equations_(equations),
          tolerances_(tolerances),
          dense_(boost::numeric::odeint::make_dense_output(tolerances.absolute, tolerances.relative,
                                                           tolerances.max_step_m, Dopri())) {}

    // Starts (or restarts, after a reflection) at state y and parameter σ.
    void start(const State& y, double sigma, double first_step) {
        dense_.initialize(y, sigma, std::min(first_step, tolerances_.max_step_m));
        steps_ = 0;
    }

    // One accepted step; returns its [σ_begin, σ_end].
    std::pair<double, double> step() {
        if (++steps_ > tolerances_.max_steps)
            throw NumericalError(fmt::format("the ray integration took more than {} steps (tolerances too tight, "
                                             "or a ray trapped without end?)",
                                             tolerances_.max_steps));
        std::pair<double, double> span;
        try {
            span = dense_.do_step(equations_);
        } catch (const Error&) {
            throw;
        } catch (const std::exception& e) {  // odeint's step_adjustment_error, or anything below it
            throw NumericalError(std::string("the ray integrator could not control its step: ") + e.what());
        }
        // A NaN in the state defeats the error control (every comparison with it is false, so
        // the step is accepted): stop at the first one instead of stepping on to max_steps.
        for (const double v : dense_.current_state())
            if (!std::isfinite(v))
                throw NumericalError(fmt::format("the ray integration produced a non-finite state at σ = {} m "
                                                 "(the index profile is not finite or not smooth there?)",
                                                 span.second));
        return span;
    }

    // Goes on from y in place of the end state of the last step (e.g. that state projected back
    // onto an invariant the integration drifts from, or rebased on a new height origin: see
    // RayEquations::set_z_origin), with the step size the controller proposed. The dense output
    // of the last step is gone; the step count carries on.
    void restart_at_end(const State& y, double z_origin) {
        equations_.set_z_origin(z_origin);
        dense_.initialize(y, end_sigma(), dense_.current_time_step());
    }

    // Goes on from state y at σ (an event inside the last step, such as a join of a piecewise
    // profile) with the equations of another piece (RayEquations::use_piece), with the step size
    // the controller proposed. The dense output of the last step is gone; the step count carries on.
    void restart_on_piece(const State& y, double sigma, std::size_t piece) {
        equations_.use_piece(piece);
        dense_.initialize(y, sigma, dense_.current_time_step());
    }
    void use_piece(std::size_t piece) { equations_.use_piece(piece); }

    double begin_sigma() const { return dense_.previous_time(); }
    double end_sigma() const { return dense_.current_time(); }
    double last_step() const { return dense_.current_time_step(); }
    const State& begin_state() const { return dense_.previous_state(); }
    const State& end_state() const { return dense_.current_state(); }

    // The state anywhere on the last step (dense output, same order as the step).
    State at(double sigma) const {
        if (sigma >= end_sigma()) return end_state();
        State y;
        dense_.calc_state(sigma, y);
        return y;
    }

    // The state at σ by one fresh dopri5 step from the start of the last step: fifth order,
    // where the dense output is fourth. Used for the states that a branch restarts or ends from.
    State stepped_to(double sigma) const {
        if (sigma >= end_sigma()) return end_state();
        State y = begin_state();
        if (sigma > begin_sigma()) {
            Dopri single;
            single.do_step(equations_, y, begin_sigma(), sigma - begin_sigma());
        }
        return y;
    }

    // The state where component k equals level, near σ (found on the dense output): the fifth-order
    // state at σ, moved along the ray by the first-order shift that puts y[k] on the level (the
    // dense output's own error is then gone from the event), and y[k] set to the level exactly.
    State on_level(double sigma, std::size_t k, double level) const {
        State y = stepped_to(sigma);
        State dy;
        equations_(y, dy, sigma);
        if (dy[k] != 0.0) {
            const double shift = -(y[k] - level) / dy[k];
            if (std::abs(shift) <= 1e-3)
                for (std::size_t i = 0; i < y.size(); ++i) y[i] += shift * dy[i];
        }
        y[k] = level;
        return y;
    }

    // σ in [a, b] where component k equals level; requires a sign change of y[k] − level.
    double locate(std::size_t k, double level, double a, double b, double ga, double gb) const {
        if (gb == 0.0) return b;
        if (ga == 0.0) return a;
        auto f = [&](double sigma) { return at(sigma)[k] - level; };
        return toms748_root("an event on the dense output of a ray step", f, a, b, ga, gb, 50, 100);
    }

    // σ in [a, b] where component k equals level, with the dense state there, for a step on
    // which y[k] is monotone and whose rate dy[k]/dσ is component `rate` of the state (z and p_z):
    // Newton's method on the dense output from the secant guess, kept inside the shrinking
    // bracket (bisection when a Newton step would leave it). Two or three dense-output
    // evaluations, against about ten for locate(): for tables with thousands of levels per ray.
    // Stops once the Newton step is below 1e-12 m of σ: the state returned is off the crossing by
    // at most that much.
    std::pair<double, State> locate_with_rate(std::size_t k, std::size_t rate, double level, double a, double b,
                                              double ga, double gb) const {
        if (gb == 0.0) return {b, at(b)};
        if (ga == 0.0) return {a, at(a)};
        constexpr double settled = 1e-12;
        const bool rising = ga < 0.0;
        double lo = a, hi = b;
        double sigma = a + (b - a) * ga / (ga - gb);
        State y = at(sigma);
        for (int i = 0; i < 200; ++i) {
            const double g = y[k] - level;
            if (g == 0.0) break;
            ((g < 0.0) == rising ? lo : hi) = sigma;
            const double newton = y[rate] != 0.0 ? -g / y[rate] : hi - lo;
            if (std::abs(newton) <= settled || hi - lo <= settled) break;
            sigma = sigma + newton > lo && sigma + newton < hi ? sigma + newton : 0.5 * (lo + hi);
            y = at(sigma);
        }
        return {sigma, y};
    }

    // The earliest crossing, among `crossings`, on the part (from, end] of the last step, where
    // y_from is the state at `from`. z is monotone between the turning points of p_z, so the
    // step is first split where p_z changes sign; a crossing on p_z at level 0 is that split.
    std::optional<CrossingFound> first_crossing(std::span<const LevelCrossing> crossings, double from,
                                                const State& y_from) const {
        using namespace ray_state;
        const double b = end_sigma();
        const State& y_b = end_state();
        if (!(b > from)) return std::nullopt;

        double split = b;
        State y_split = y_b;
        const bool turns = (y_from[pz] > 0.0 && y_b[pz] <= 0.0) || (y_from[pz] < 0.0 && y_b[pz] >= 0.0);
        if (turns) {
            split = locate(pz, 0.0, from, b, y_from[pz], y_b[pz]);
            y_split = at(split);
        }

        auto crosses = [](int direction, double ga, double gb) {
            const bool rising = ga < 0.0 && gb >= 0.0;
            const bool falling = ga > 0.0 && gb <= 0.0;
            return direction > 0 ? rising : direction < 0 ? falling : (rising || falling);
        };
        auto earliest_on = [&](double a, const State& y_a, double c, const State& y_c, bool include_turn)
            -> std::optional<CrossingFound> {
            std::optional<CrossingFound> best;
            for (std::size_t i = 0; i < crossings.size(); ++i) {
                const LevelCrossing& e = crossings[i];
                double sigma;
                if (e.component == pz && e.level == 0.0) {
                    if (!include_turn || !crosses(e.direction, y_from[pz], y_b[pz])) continue;
                    sigma = split;
                } else {
                    const double ga = y_a[e.component] - e.level, gc = y_c[e.component] - e.level;
                    if (!crosses(e.direction, ga, gc)) continue;
                    sigma = locate(e.component, e.level, a, c, ga, gc);
                }
                if (!best || sigma < best->sigma) best = CrossingFound{i, sigma};
            }
            return best;
        };

        if (auto found = earliest_on(from, y_from, split, y_split, turns)) return found;
        if (turns) return earliest_on(split, y_split, b, y_b, false);
        return std::nullopt;
    }

private:
    RayEquations equations_;
    IntegrationTolerances tolerances_;
    Dense dense_;
    std::size_t steps_ = 0;
};

}  // namespace firnray
