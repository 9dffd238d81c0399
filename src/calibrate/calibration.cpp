#include "calibrate/calibration.hpp"

#include <algorithm>
#include <cmath>
#include <limits>
#include <memory>

#include <Eigen/Dense>
#include <fmt/format.h>
#include <fmt/ranges.h>

#include "core/errors.hpp"
#include "core/parallel.hpp"
#include "core/text.hpp"
#include "model/model_parameters.hpp"
#include "solver/make_solver.hpp"

namespace firnray {

namespace {

// A predicted path of one pulser-channel pair: all the matching needs.
struct PredictedPath {
    PathKind kind = PathKind::direct;
    double time_ns = 0.0;
};

// The pairs (pulser, channel) that have pulses: each gets its paths once per profile.
struct PairTable {
    std::vector<std::size_t> pulser, channel;
    std::vector<std::size_t> pair_of_pulse;  // for every pulse, in pulser order then row order
};

PairTable make_pair_table(const PulserTimes& times) {
    PairTable table;
    for (std::size_t k = 0; k < times.pulsers.size(); ++k) {
        const std::size_t first_pair = table.pulser.size();
        for (const PulserPulse& pulse : times.pulsers[k].pulses) {
            std::size_t pair = first_pair;
            while (pair < table.pulser.size() && table.channel[pair] != pulse.channel) ++pair;
            if (pair == table.pulser.size()) {
                table.pulser.push_back(k);
                table.channel.push_back(pulse.channel);
            }
            table.pair_of_pulse.push_back(pair);
        }
    }
    return table;
}

// One profile (a full parameter vector) and everything predicted with it.
struct ProfileState {
    std::vector<double> values;
    std::shared_ptr<const IndexProfile> profile;
    std::vector<std::vector<PredictedPath>> paths;  // per pair, by arrival time
};

// Which path a pulse is matched to.
struct PulseMatch {
    std::size_t path = 0;  // index into the pair's paths (by arrival time)
    bool unresolved = false;
};

class Calibration {
public:
    Calibration(const FirnModel& start, const Station& station, const PulserTimes& times,
                const CalibrationOptions& options)
        : start_(start), station_(station), times_(times), options_(options), pairs_(make_pair_table(times)) {}

    // The state for these values, or empty when they make no valid profile or the path finder
    // cannot follow it (a failed Levenberg–Marquardt step, not an error).
    std::optional<ProfileState> state_for(const std::vector<double>& values) const {
        ProfileState state;
        state.values = values;
        std::shared_ptr<const FirnModel> model;
        try {
            model = std::make_shared<const FirnModel>(model_with_parameters(start_, values));
        } catch (const ModelInputError&) {
            return std::nullopt;
        }
        state.profile = model->index;
        const auto solver = make_solver(model, SolverChoice::automatic);
        state.paths.resize(pairs_.pulser.size());
        try {
            parallel_for(pairs_.pulser.size(), options_.threads, options_.control, [&](std::size_t pair) {
                const Receiver& r = station_.receivers[pairs_.channel[pair]];
                const auto found = find_paths(*solver, times_.pulsers[pairs_.pulser[pair]].position,
                                              Point{r.x_m, r.y_m, r.z_m}, options_.paths);
                auto& out = state.paths[pair];
                for (const ConnectedPath& p : found) out.push_back({p.kind, p.time_s * 1e9});
            });
        } catch (const NumericalError&) {
            return std::nullopt;
        }
        return state;
    }

    // The earliest path of the group of paths within the pulse width of path j (paths closer
    // than the pulse width arrive as one pulse, whose leading edge is the earlier path).
    std::size_t group_start(const std::vector<PredictedPath>& paths, std::size_t j) const {
        while (j > 0 && paths[j].time_ns - paths[j - 1].time_ns < options_.pulse_width_ns) --j;
        return j;
    }
    bool group_has_several(const std::vector<PredictedPath>& paths, std::size_t start) const {
        return start + 1 < paths.size() && paths[start + 1].time_ns - paths[start].time_ns < options_.pulse_width_ns;
    }

    // Matches every pulse to the path that fits it best given the offsets; empty when a pulse's
    // channel has no path.
    std::optional<std::vector<PulseMatch>> match(const ProfileState& state, const std::vector<double>& offsets_ns) const {
        std::vector<PulseMatch> matches(pairs_.pair_of_pulse.size());
        std::size_t pulse_index = 0;
        for (std::size_t k = 0; k < times_.pulsers.size(); ++k) {
            const auto& pulses = times_.pulsers[k].pulses;
            for (std::size_t i = 0; i < pulses.size(); ++i) {
                const std::size_t pair = pairs_.pair_of_pulse[pulse_index + i];
                const auto& paths = state.paths[pair];
                if (paths.empty()) return std::nullopt;
                // The groups of paths that a recording can tell apart, by their earliest path.
                std::vector<std::size_t> groups;
                for (std::size_t j = 0; j < paths.size(); ++j)
                    if (group_start(paths, j) == j) groups.push_back(j);
                const auto cost = [&](const PulserPulse& p, std::size_t group) {
                    const double r = (p.time_ns - offsets_ns[k] - paths[group].time_ns) / p.sigma_ns;
                    return r * r;
                };
                // The other pulse of this pulser on the same channel, if any.
                std::optional<std::size_t> other;
                for (std::size_t m = 0; m < pulses.size(); ++m)
                    if (m != i && pulses[m].channel == pulses[i].channel) other = m;
                std::size_t best = groups.front();
                if (!other || groups.size() < 2) {
                    for (std::size_t g : groups)
                        if (cost(pulses[i], g) < cost(pulses[i], best)) best = g;
                } else {
                    // Two pulses on one channel take two different paths, the earlier pulse the
                    // earlier path.
                    const bool earlier = pulses[i].time_ns < pulses[*other].time_ns ||
                                         (pulses[i].time_ns == pulses[*other].time_ns && i < *other);
                    double best_cost = std::numeric_limits<double>::infinity();
                    for (std::size_t a = 0; a < groups.size(); ++a)
                        for (std::size_t b = a + 1; b < groups.size(); ++b) {
                            const std::size_t mine = earlier ? groups[a] : groups[b];
                            const std::size_t theirs = earlier ? groups[b] : groups[a];
                            const double c = cost(pulses[i], mine) + cost(pulses[*other], theirs);
                            if (c < best_cost) {
                                best_cost = c;
                                best = mine;
                            }
                        }
                }
                matches[pulse_index + i] = {best, group_has_several(paths, best)};
            }
            pulse_index += pulses.size();
        }
        return matches;
    }

    // The offsets that minimise χ² for given matches: the weighted mean of measured − travel time.
    std::vector<double> best_offsets(const ProfileState& state, const std::vector<PulseMatch>& matches) const {
        std::vector<double> offsets(times_.pulsers.size(), 0.0);
        std::size_t pulse_index = 0;
        for (std::size_t k = 0; k < times_.pulsers.size(); ++k) {
            double sum = 0.0, weights = 0.0;
            for (const PulserPulse& p : times_.pulsers[k].pulses) {
                const auto& path = state.paths[pairs_.pair_of_pulse[pulse_index]][matches[pulse_index].path];
                const double w = 1.0 / (p.sigma_ns * p.sigma_ns);
                sum += w * (p.time_ns - path.time_ns);
                weights += w;
                ++pulse_index;
            }
            offsets[k] = sum / weights;
        }
        return offsets;
    }

    // Weighted residuals (pulses, then log points) for a state, offsets and matches.
    Eigen::VectorXd residuals(const ProfileState& state, const std::vector<double>& offsets_ns,
                              const std::vector<PulseMatch>& matches) const {
        const std::size_t pulses = matches.size(), log_points = log_n_.size();
        Eigen::VectorXd e(static_cast<Eigen::Index>(pulses + log_points));
        std::size_t pulse_index = 0;
        for (std::size_t k = 0; k < times_.pulsers.size(); ++k)
            for (const PulserPulse& p : times_.pulsers[k].pulses) {
                const auto& path = state.paths[pairs_.pair_of_pulse[pulse_index]][matches[pulse_index].path];
                e[static_cast<Eigen::Index>(pulse_index)] = (p.time_ns - offsets_ns[k] - path.time_ns) / p.sigma_ns;
                ++pulse_index;
            }
        for (std::size_t i = 0; i < log_points; ++i)
            e[static_cast<Eigen::Index>(pulses + i)] =
                (log_n_[i] - state.profile->index(-log_depth_m_[i])) / log_sigma_n_;
        return e;
    }

    // The path of `other` that is `path` of `state` for the same pair: the same kind and the same
    // rank among the paths of that kind (paths of a family keep their order as a parameter moves).
    static std::optional<double> same_path_time(const std::vector<PredictedPath>& paths,
                                                const std::vector<PredictedPath>& other, std::size_t path) {
        int rank = 0;
        for (std::size_t j = 0; j < path; ++j) rank += paths[j].kind == paths[path].kind ? 1 : 0;
        for (const PredictedPath& p : other)
            if (p.kind == paths[path].kind && rank-- == 0) return p.time_ns;
        return std::nullopt;
    }

    std::vector<double> log_depth_m_, log_n_;
    double log_sigma_n_ = 1.0;

    const FirnModel& start_;
    const Station& station_;
    const PulserTimes& times_;
    const CalibrationOptions& options_;
    PairTable pairs_;
};

double difference_step(double value, double relative_step) { return relative_step * std::max(std::abs(value), 1.0); }

void check_options(const CalibrationOptions& options) {
    if (!std::isfinite(options.pulse_width_ns) || options.pulse_width_ns < 0.0 || options.pulse_width_ns > 1e4)
        throw DataInputError(fmt::format("the pulse width must be 0 to 10000 ns, not {}",
                                         number_for_message(options.pulse_width_ns)),
                             {"", 0, "--pulse-width-ns"});
    if (!std::isfinite(options.relative_step) || options.relative_step <= 0.0 || options.relative_step > 0.1)
        throw DataInputError(fmt::format("the relative difference step must be above 0 and at most 0.1, not {}",
                                         number_for_message(options.relative_step)));
    if (options.max_iterations < 1) throw DataInputError("the fit needs at least one iteration");
    if (options.density_log && (!std::isfinite(options.density_log->sigma_n) || options.density_log->sigma_n <= 0.0))
        throw DataInputError(fmt::format("the log's index uncertainty must be a positive number, not {}",
                                         number_for_message(options.density_log->sigma_n)),
                             {"", 0, "--log-sigma-n"});
}

void check_start_kind(const FirnModel& start, CalibrationKind kind) {
    const std::string have = start.index->kind(), want = to_string(kind);
    if (have != want)
        throw ModelInputError(
            fmt::format("--fit {} needs a start model with a {} profile, but the profile of model '{}' is of kind {}{}",
                        want, want, start.name, have,
                        kind == CalibrationKind::exponential
                            ? " (leave out --model to start from the built-in exponential model)"
                            : " (give a model file whose [index] has kind = \"layered\" with its layers)"),
            {start.origin, 0, "index.kind"});
}

}  // namespace

CalibrationKind parse_calibration_kind(const std::string& text) {
    if (text == "exponential") return CalibrationKind::exponential;
    if (text == "layered") return CalibrationKind::layered;
    throw DataInputError(fmt::format("'{}' is not a profile kind calibrate can fit: exponential or layered{}",
                                     printable_excerpt(text), did_you_mean(text, {"exponential", "layered"})),
                         {"", 0, "--fit"});
}

const char* to_string(CalibrationKind kind) {
    return kind == CalibrationKind::exponential ? "exponential" : "layered";
}

namespace {

// Which parameters are free and the values the fit starts from (the start model's, with the
// fixed values put in).
struct ParameterSetup {
    std::vector<std::string> names;
    std::vector<double> start_values, values;
    std::vector<bool> fixed;
    std::vector<std::size_t> free;  // positions of the free parameters in `names`
};

ParameterSetup set_up_parameters(const FirnModel& start_model, const std::vector<FixedParameter>& fixes) {
    ParameterSetup setup;
    setup.names = profile_parameter_names(*start_model.index);
    setup.start_values = profile_parameter_values(*start_model.index);
    setup.values = setup.start_values;
    setup.fixed.assign(setup.names.size(), false);
    const auto& names = setup.names;
    for (const FixedParameter& f : fixes) {
        const auto it = std::find(names.begin(), names.end(), f.name);
        if (it == names.end())
            throw DataInputError(fmt::format("the {} profile of model '{}' has no parameter '{}'{} (its parameters: {})",
                                             start_model.index->kind(), start_model.name, printable_excerpt(f.name),
                                             did_you_mean(f.name, names), fmt::format("{}", fmt::join(names, ", "))),
                                 {"", 0, "--fix"});
        const auto k = static_cast<std::size_t>(it - names.begin());
        setup.fixed[k] = true;
        if (f.value) {
            if (!std::isfinite(*f.value))
                throw DataInputError(fmt::format("the fixed value of {} is not a finite number", f.name), {"", 0, "--fix"});
            setup.values[k] = *f.value;
        }
    }
    try {
        (void)profile_with_parameters(*start_model.index, setup.values);
    } catch (const ModelInputError& e) {
        throw DataInputError(fmt::format("the fixed values make no valid profile: {}", e.reason()), {"", 0, "--fix"});
    }
    for (std::size_t k = 0; k < names.size(); ++k)
        if (!setup.fixed[k]) setup.free.push_back(k);
    if (setup.free.empty()) throw DataInputError("every parameter is fixed: there is nothing to fit", {"", 0, "--fix"});
    return setup;
}

// Every pulse must have a path under the start model, or it cannot be matched at all.
void check_start_paths(const Calibration& calibration, const ProfileState& state) {
    std::size_t pulse_index = 0;
    for (const Pulser& pulser : calibration.times_.pulsers)
        for (const PulserPulse& p : pulser.pulses) {
            if (state.paths[calibration.pairs_.pair_of_pulse[pulse_index]].empty())
                throw DataInputError(
                    fmt::format("channel '{}' is in the shadow of pulser '{}' under the start model: no path joins "
                                "them, so its pulse cannot be matched (check the position, or drop the row)",
                                calibration.station_.receivers[p.channel].name, printable_excerpt(pulser.name)),
                    {calibration.times_.path, p.line, "channel"});
            ++pulse_index;
        }
}

// Offsets from each pulser's first arrivals, then matching and offsets alternately until the
// matches settle.
std::vector<double> starting_offsets(const Calibration& calibration, const ProfileState& state) {
    const std::vector<PulseMatch> first_paths(calibration.pairs_.pair_of_pulse.size());  // every pulse on path 0
    std::vector<double> offsets = calibration.best_offsets(state, first_paths);
    for (int round = 0; round < 10; ++round) {
        const auto matches = calibration.match(state, offsets);
        const auto next = calibration.best_offsets(state, *matches);
        if (next == offsets) break;
        offsets = next;
    }
    return offsets;
}

// Where the fit stands: the profile, the offsets, the matches, and the weighted residuals with
// their Jacobian there.
struct FitPoint {
    ProfileState state;
    std::vector<double> offsets;
    std::vector<PulseMatch> matches;
    Eigen::VectorXd residuals;
    Eigen::MatrixXd jacobian;  // columns: the free parameters, then one offset per pulser
    double chi2 = 0.0;
};

// The Jacobian of the weighted residuals: central differences in the profile parameters (the
// same path on both sides: same kind, same rank), analytic in the offsets (∂e/∂offset = −1/σ).
void linearise(const Calibration& calibration, const ParameterSetup& setup, FitPoint& point) {
    const PulserTimes& times = calibration.times_;
    const std::size_t pulse_count = calibration.pairs_.pair_of_pulse.size(), log_count = calibration.log_n_.size();
    const auto F = static_cast<Eigen::Index>(setup.free.size());
    const ProfileState& at = point.state;
    point.residuals = calibration.residuals(at, point.offsets, point.matches);
    point.chi2 = point.residuals.squaredNorm();
    point.jacobian = Eigen::MatrixXd::Zero(static_cast<Eigen::Index>(pulse_count + log_count),
                                           F + static_cast<Eigen::Index>(times.pulsers.size()));
    for (Eigen::Index f = 0; f < F; ++f) {
        const std::size_t k = setup.free[static_cast<std::size_t>(f)];
        const double h = difference_step(at.values[k], calibration.options_.relative_step);
        std::vector<double> up = at.values, down = at.values;
        up[k] += h;
        down[k] -= h;
        const std::optional<ProfileState> above = calibration.state_for(up), below = calibration.state_for(down);
        if (!above && !below)
            throw NumericalError(fmt::format("the profile is invalid on both sides of {} = {} (step {}): the "
                                             "derivative cannot be taken",
                                             setup.names[k], number_for_message(at.values[k]), number_for_message(h)));
        std::size_t pulse_index = 0;
        for (const Pulser& pulser : times.pulsers)
            for (const PulserPulse& p : pulser.pulses) {
                const std::size_t pair = calibration.pairs_.pair_of_pulse[pulse_index];
                const auto& paths = at.paths[pair];
                const std::size_t j = point.matches[pulse_index].path;
                const std::optional<double> t_up =
                    above ? Calibration::same_path_time(paths, above->paths[pair], j) : std::nullopt;
                const std::optional<double> t_down =
                    below ? Calibration::same_path_time(paths, below->paths[pair], j) : std::nullopt;
                double derivative = 0.0;
                if (t_up && t_down) derivative = (*t_up - *t_down) / (2.0 * h);
                else if (t_up) derivative = (*t_up - paths[j].time_ns) / h;
                else if (t_down) derivative = (paths[j].time_ns - *t_down) / h;
                else
                    throw NumericalError(fmt::format(
                        "the {} path from pulser '{}' to channel '{}' vanishes when {} moves by {}: the fit "
                        "cannot take its derivative (is the pulser at the edge of the shadow?)",
                        to_string(paths[j].kind), pulser.name, calibration.station_.receivers[p.channel].name,
                        setup.names[k], number_for_message(h)));
                point.jacobian(static_cast<Eigen::Index>(pulse_index), f) = -derivative / p.sigma_ns;
                ++pulse_index;
            }
        for (std::size_t i = 0; i < log_count; ++i) {
            const double z = -calibration.log_depth_m_[i];
            const double n_up = above ? above->profile->index(z) : at.profile->index(z);
            const double n_down = below ? below->profile->index(z) : at.profile->index(z);
            const double span = (above ? h : 0.0) + (below ? h : 0.0);
            point.jacobian(static_cast<Eigen::Index>(pulse_count + i), f) =
                -(n_up - n_down) / span / calibration.log_sigma_n_;
        }
    }
    std::size_t pulse_index = 0;
    for (std::size_t k = 0; k < times.pulsers.size(); ++k)
        for (const PulserPulse& p : times.pulsers[k].pulses)
            point.jacobian(static_cast<Eigen::Index>(pulse_index++), F + static_cast<Eigen::Index>(k)) = -1.0 / p.sigma_ns;
}

// A trial point after `step`, matched afresh; empty when the step leaves the valid profiles or
// a pulse loses every path.
std::optional<FitPoint> trial_point(const Calibration& calibration, const ParameterSetup& setup, const FitPoint& from,
                                    const Eigen::VectorXd& step) {
    const auto F = static_cast<Eigen::Index>(setup.free.size());
    std::vector<double> values = from.state.values;
    for (Eigen::Index f = 0; f < F; ++f) values[setup.free[static_cast<std::size_t>(f)]] += step[f];
    std::optional<ProfileState> state = calibration.state_for(values);
    if (!state) return std::nullopt;
    FitPoint trial;
    trial.offsets = from.offsets;
    for (std::size_t k = 0; k < trial.offsets.size(); ++k) trial.offsets[k] += step[F + static_cast<Eigen::Index>(k)];
    std::optional<std::vector<PulseMatch>> matches = calibration.match(*state, trial.offsets);
    if (!matches) return std::nullopt;
    trial.state = std::move(*state);
    trial.matches = std::move(*matches);
    trial.residuals = calibration.residuals(trial.state, trial.offsets, trial.matches);
    trial.chi2 = trial.residuals.squaredNorm();
    return trial;
}

// Levenberg–Marquardt with Marquardt's diagonal scaling (Nocedal & Wright, Numerical
// Optimization, §10.3), as in model/fit.cpp. Returns the iterations taken; throws NumericalError
// when it does not converge.
int levenberg_marquardt(const Calibration& calibration, const ParameterSetup& setup, FitPoint& point) {
    const CalibrationOptions& options = calibration.options_;
    const auto F = static_cast<Eigen::Index>(setup.free.size());
    const Eigen::Index unknowns = point.jacobian.cols();
    // What a step is measured against: max(|θ|, 1) for a parameter, 1 ns for an offset.
    const auto scale_of = [&](Eigen::Index u) {
        return u < F ? std::max(std::abs(point.state.values[setup.free[static_cast<std::size_t>(u)]]), 1.0) : 1.0;
    };
    double damping = 1e-3;
    int iteration = 0;
    bool converged = false;
    while (iteration < options.max_iterations && !converged) {
        options.control.throw_if_cancelled();
        ++iteration;
        const Eigen::MatrixXd normal = point.jacobian.transpose() * point.jacobian;
        const Eigen::VectorXd gradient = -(point.jacobian.transpose() * point.residuals);
        const Eigen::VectorXd newton = normal.ldlt().solve(gradient);
        double newton_size = 0.0;
        for (Eigen::Index u = 0; u < unknowns; ++u) newton_size = std::max(newton_size, std::abs(newton[u]) / scale_of(u));
        if (!std::isfinite(newton_size)) newton_size = std::numeric_limits<double>::infinity();
        if (point.chi2 == 0.0 || newton_size < 1e-10) {
            converged = true;
            break;
        }
        bool accepted = false;
        while (damping < 1e20) {
            Eigen::MatrixXd damped = normal;
            for (Eigen::Index u = 0; u < unknowns; ++u) damped(u, u) += damping * std::max(normal(u, u), 1e-300);
            std::optional<FitPoint> trial = trial_point(calibration, setup, point, damped.ldlt().solve(gradient));
            if (trial && std::isfinite(trial->chi2) && trial->chi2 <= point.chi2) {
                const double gain = (point.chi2 - trial->chi2) / point.chi2;
                point = std::move(*trial);
                linearise(calibration, setup, point);
                damping = std::max(damping / 3.0, 1e-12);
                accepted = true;
                if (gain < 1e-13 && newton_size < 1e-6) converged = true;
                break;
            }
            damping *= 4.0;
        }
        // No step lowers χ²: at the minimum to rounding if the Gauss–Newton step is already small.
        if (!accepted) {
            converged = newton_size < 1e-6;
            break;
        }
    }
    if (!converged)
        throw NumericalError(fmt::format("the calibration did not converge in {} iterations (chi2 {}); check the "
                                         "pulser positions and times, or fix parameters (--fix)",
                                         iteration, number_for_message(point.chi2)));
    return iteration;
}

// (JᵀWJ)⁻¹ over parameters and offsets together; its parameter block is the covariance with the
// offsets marginalised. Judged in correlation form, so that units do not decide what is singular;
// a singular matrix names what dominates its undetermined direction.
Eigen::MatrixXd full_covariance(const Calibration& calibration, const ParameterSetup& setup,
                                const Eigen::MatrixXd& jacobian) {
    const auto F = static_cast<Eigen::Index>(setup.free.size());
    const Eigen::Index unknowns = jacobian.cols();
    const Eigen::MatrixXd normal = jacobian.transpose() * jacobian;
    Eigen::VectorXd scale(unknowns);
    for (Eigen::Index u = 0; u < unknowns; ++u) scale[u] = normal(u, u) > 0.0 ? 1.0 / std::sqrt(normal(u, u)) : 0.0;
    const Eigen::MatrixXd correlation = scale.asDiagonal() * normal * scale.asDiagonal();
    const Eigen::SelfAdjointEigenSolver<Eigen::MatrixXd> eigen(correlation);
    if (!(eigen.eigenvalues()[0] > 1e-12 * std::max(eigen.eigenvalues()[unknowns - 1], 1e-300)) ||
        (scale.array() == 0.0).any()) {
        Eigen::Index worst = 0;
        eigen.eigenvectors().col(0).cwiseAbs().maxCoeff(&worst);
        if (scale.minCoeff() == 0.0) (scale.array() == 0.0).maxCoeff(&worst);
        const std::string what =
            worst < F ? fmt::format("parameter {}", setup.names[setup.free[static_cast<std::size_t>(worst)]])
                      : fmt::format("the emission time of pulser '{}'",
                                    calibration.times_.pulsers[static_cast<std::size_t>(worst - F)].name);
        throw NumericalError(fmt::format("the times cannot determine {} (the normal matrix is singular): add pulsers "
                                         "at other depths or distances, or fix it (--fix)",
                                         what));
    }
    return scale.asDiagonal() * correlation.ldlt().solve(Eigen::MatrixXd::Identity(unknowns, unknowns)) *
           scale.asDiagonal();
}

// The parameters, the covariance, the pulsers and one residual per pulse and log point.
CalibrationResult describe_fit(const Calibration& calibration, const ParameterSetup& setup, const FitPoint& point,
                               const Eigen::MatrixXd& covariance) {
    const PulserTimes& times = calibration.times_;
    const Station& station = calibration.station_;
    const std::size_t pulse_count = point.matches.size(), log_count = calibration.log_n_.size();
    const std::size_t free_count = setup.free.size();
    const auto F = static_cast<Eigen::Index>(free_count);
    CalibrationResult result;
    result.times_path = times.path;
    result.pulse_width_ns = calibration.options_.pulse_width_ns;
    result.ndof = static_cast<int>(pulse_count + log_count) - static_cast<int>(free_count + times.pulsers.size());
    result.chi2 = point.chi2;
    result.chi2_times = point.residuals.head(static_cast<Eigen::Index>(pulse_count)).squaredNorm();
    result.chi2_log = point.residuals.tail(static_cast<Eigen::Index>(log_count)).squaredNorm();
    for (std::size_t k = 0, f = 0; k < setup.names.size(); ++k) {
        CalibratedParameter p{setup.names[k], setup.start_values[k], point.state.values[k], 0.0, setup.fixed[k]};
        if (!setup.fixed[k]) {
            const auto u = static_cast<Eigen::Index>(f++);
            p.sigma = std::sqrt(std::max(covariance(u, u), 0.0));
            result.free_names.push_back(setup.names[k]);
        }
        result.parameters.push_back(p);
    }
    result.covariance.assign(free_count, std::vector<double>(free_count));
    for (Eigen::Index a = 0; a < F; ++a)
        for (Eigen::Index b = 0; b < F; ++b)  // symmetric to the last bit, as model files check it
            result.covariance[static_cast<std::size_t>(a)][static_cast<std::size_t>(b)] =
                0.5 * (covariance(a, b) + covariance(b, a));
    std::size_t pulse_index = 0;
    for (std::size_t k = 0; k < times.pulsers.size(); ++k) {
        const Pulser& pulser = times.pulsers[k];
        const auto u = F + static_cast<Eigen::Index>(k);
        result.pulsers.push_back({pulser.name, pulser.position, point.offsets[k],
                                  std::sqrt(std::max(covariance(u, u), 0.0)), pulser.pulses.size()});
        for (const PulserPulse& p : pulser.pulses) {
            const auto& paths = point.state.paths[calibration.pairs_.pair_of_pulse[pulse_index]];
            const PulseMatch& m = point.matches[pulse_index];
            const Receiver& r = station.receivers[p.channel];
            PulseResidual residual;
            residual.pulser = k;
            residual.channel = p.channel;
            residual.line = p.line;
            residual.measured_ns = p.time_ns;
            residual.predicted_ns = paths[m.path].time_ns + point.offsets[k];
            residual.residual_ns = p.time_ns - residual.predicted_ns;
            residual.sigma_ns = p.sigma_ns;
            residual.path_kind = paths[m.path].kind;
            residual.arrival_order = static_cast<int>(m.path) + 1;
            residual.paths_found = static_cast<int>(paths.size());
            residual.unresolved = m.unresolved;
            residual.pulser_depth_m = -pulser.position.z;
            residual.horizontal_distance_m = std::hypot(r.x_m - pulser.position.x, r.y_m - pulser.position.y);
            result.unresolved_pulses += m.unresolved ? 1 : 0;
            result.residuals.push_back(residual);
            ++pulse_index;
        }
    }
    for (std::size_t i = 0; i < log_count; ++i) {
        const double predicted = point.state.profile->index(-calibration.log_depth_m_[i]);
        result.log_residuals.push_back({calibration.log_depth_m_[i], calibration.log_n_[i], predicted,
                                        calibration.log_n_[i] - predicted});
    }
    return result;
}

}  // namespace

CalibrationResult calibrate_profile(const FirnModel& start_model, const Station& station, const PulserTimes& times,
                                    CalibrationKind kind, const CalibrationOptions& options) {
    check_options(options);
    check_start_kind(start_model, kind);
    const ParameterSetup setup = set_up_parameters(start_model, options.fixed);

    Calibration calibration(start_model, station, times, options);
    if (options.density_log) {
        calibration.log_depth_m_ = options.density_log->data.depth_m;
        calibration.log_n_ = options.density_log->data.index_values();
        calibration.log_sigma_n_ = options.density_log->sigma_n;
    }
    const std::size_t pulse_count = times.pulse_count(), log_count = calibration.log_n_.size();
    const std::size_t free_count = setup.free.size(), pulser_count = times.pulsers.size();
    if (pulse_count + log_count < free_count + pulser_count)
        throw DataInputError(fmt::format("{} pulses{} cannot determine {} free parameter{} and {} emission offsets (one "
                                         "per pulser): add pulses or fix parameters (--fix)",
                                         pulse_count, log_count ? fmt::format(" and {} log points", log_count) : "",
                                         free_count, free_count == 1 ? "" : "s", pulser_count),
                             {times.path, 0, ""});

    std::optional<ProfileState> start = calibration.state_for(setup.values);
    if (!start) throw NumericalError("the path finder failed on the start model; check the model and the pulser positions");
    check_start_paths(calibration, *start);
    FitPoint point;
    point.offsets = starting_offsets(calibration, *start);
    point.matches = *calibration.match(*start, point.offsets);
    point.state = std::move(*start);
    linearise(calibration, setup, point);
    const int iterations = levenberg_marquardt(calibration, setup, point);

    CalibrationResult result = describe_fit(calibration, setup, point, full_covariance(calibration, setup, point.jacobian));
    result.kind = kind;
    result.iterations = iterations;
    if (options.density_log) result.log_path = options.density_log->data.path;
    result.start_model = start_model;
    result.fitted_model = model_with_parameters(start_model, point.state.values);
    result.fitted_model.uncertainty =
        ModelUncertainty{ParameterCovariance{result.free_names, result.covariance}, std::nullopt, {}};
    return result;
}

double fitted_index_sigma(const CalibrationResult& result, double depth_m, double relative_step) {
    const IndexProfile& fitted = *result.fitted_model.index;
    const std::vector<std::string> names = profile_parameter_names(fitted);
    const std::vector<double> values = profile_parameter_values(fitted);
    const double z = -depth_m;
    std::vector<double> gradient;
    for (const std::string& name : result.free_names) {
        const auto k = static_cast<std::size_t>(std::find(names.begin(), names.end(), name) - names.begin());
        const double h = difference_step(values[k], relative_step);
        // One-sided where a step leaves the valid profiles (an index at its bound).
        const auto index_with = [&](double value) -> std::optional<double> {
            std::vector<double> moved = values;
            moved[k] = value;
            try {
                return profile_with_parameters(fitted, moved)->index(z);
            } catch (const ModelInputError&) {
                return std::nullopt;
            }
        };
        const std::optional<double> up = index_with(values[k] + h), down = index_with(values[k] - h);
        const double here = fitted.index(z);
        if (up && down) gradient.push_back((*up - *down) / (2.0 * h));
        else if (up) gradient.push_back((*up - here) / h);
        else if (down) gradient.push_back((here - *down) / h);
        else gradient.push_back(0.0);
    }
    double variance = 0.0;
    for (std::size_t a = 0; a < gradient.size(); ++a)
        for (std::size_t b = 0; b < gradient.size(); ++b) variance += gradient[a] * result.covariance[a][b] * gradient[b];
    return std::sqrt(std::max(variance, 0.0));
}

}  // namespace firnray
