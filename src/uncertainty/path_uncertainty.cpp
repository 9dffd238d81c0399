#include "uncertainty/path_uncertainty.hpp"

#include <cmath>
#include <limits>
#include <memory>

#include <fmt/format.h>

#include "core/constants.hpp"
#include "core/errors.hpp"

namespace firnray {

namespace {

constexpr double absent_value = std::numeric_limits<double>::quiet_NaN();

// The perturbed models that made a valid profile (the nominal one not counted).
std::size_t valid_perturbed_models(const PropagatedValues& values) { return values.models - 1 - values.rejected; }


// The time (s) of the path of `kind` with rank `rank` (0-based) among the paths of that kind.
std::optional<double> time_of_kind(const std::vector<ConnectedPath>& paths, PathKind kind, std::size_t rank) {
    for (const ConnectedPath& p : paths)
        if (same_path_kind(p.kind, kind) && rank-- == 0) return p.time_s;
    return std::nullopt;
}

std::size_t rank_within_kind(const std::vector<ConnectedPath>& paths, std::size_t index) {
    std::size_t rank = 0;
    for (std::size_t k = 0; k < index; ++k) rank += same_path_kind(paths[k].kind, paths[index].kind);
    return rank;
}

}  // namespace

bool same_path_kind(PathKind a, PathKind b) {
    const auto through_firn = [](PathKind k) { return k == PathKind::direct || k == PathKind::refracted; };
    return a == b || (through_firn(a) && through_firn(b));
}

const char* UncertaintyReport::method_name() const {
    return method == PropagationMethod::linearised ? "linearised" : "monte-carlo";
}

std::size_t UncertaintyReport::perturbed_models() const {
    return method == PropagationMethod::linearised ? 2 * components : static_cast<std::size_t>(samples);
}

std::string UncertaintyReport::summary() const {
    if (method == PropagationMethod::linearised)
        return fmt::format("linearised, ±{:g}σ along {} component{}, {} models per propagation; {}", step_sigma,
                           components, components == 1 ? "" : "s", perturbed_models() + 1, description);
    return fmt::format("Monte Carlo, {} draws, seed {}, {} models per propagation; {}", samples, seed,
                       perturbed_models() + 1, description);
}

UncertaintyReport make_uncertainty_report(const ModelPerturbation& perturbation, const PropagationOptions& options) {
    UncertaintyReport report;
    report.method = options.method;
    report.samples = options.method == PropagationMethod::monte_carlo ? options.samples : 0;
    report.seed = options.seed;
    report.step_sigma = options.step_sigma;
    report.components = perturbation.dimension();
    report.description = perturbation.describe();
    return report;
}

std::optional<std::size_t> matching_path(const std::vector<ConnectedPath>& candidates,
                                         const std::vector<ConnectedPath>& nominal, std::size_t index) {
    std::size_t rank = rank_within_kind(nominal, index);
    for (std::size_t i = 0; i < candidates.size(); ++i)
        if (same_path_kind(candidates[i].kind, nominal[index].kind) && rank-- == 0) return i;
    return std::nullopt;
}

void add_path_spreads(const ModelPerturbation& perturbation, const PathSolverSetup& setup,
                      const PropagationOptions& options, const Point& source, const Point& receiver,
                      PairPaths& result, const RunControl& control) {
    const std::vector<ConnectedPath>& nominal = result.paths;
    result.spreads.assign(nominal.size(), PathSpread{});
    result.spread_models = 0;
    if (nominal.empty()) return;  // the shadow zone: nothing to give a σ to
    // Three outputs per nominal path: time (ns), launch and arrival zenith (deg).
    const auto evaluate = [&](const FirnModel& model) {
        std::vector<double> out(3 * nominal.size(), absent_value);
        std::vector<ConnectedPath> paths;
        try {
            const auto solver =
                make_solver(std::make_shared<FirnModel>(model), setup.solver, setup.numeric_tolerance);
            paths = find_paths(*solver, source, receiver, setup.paths);
        } catch (const InputError&) {
            return out;  // this model lacks every path (e.g. the solver refuses its profile)
        } catch (const NumericalError&) {
            return out;
        }
        for (std::size_t i = 0; i < nominal.size(); ++i) {
            const auto match = matching_path(paths, nominal, i);
            if (!match) continue;
            out[3 * i] = paths[*match].time_s * seconds_to_ns;
            out[3 * i + 1] = rad_to_deg(paths[*match].launch_zenith_rad);
            out[3 * i + 2] = rad_to_deg(paths[*match].arrival_zenith_rad);
        }
        return out;
    };
    const PropagatedValues values = propagate_uncertainty(perturbation, evaluate, options, control);
    for (std::size_t i = 0; i < nominal.size(); ++i) {
        PathSpread& spread = result.spreads[i];
        spread.time_ns = values.sigma[3 * i];
        spread.launch_zenith_deg = values.sigma[3 * i + 1];
        spread.arrival_zenith_deg = values.sigma[3 * i + 2];
        spread.absent = values.absent[3 * i];
    }
    result.spread_models = valid_perturbed_models(values);
}

void add_delay_spreads(const ModelPerturbation& perturbation, const PathSolverSetup& setup,
                       const PropagationOptions& options, const std::vector<Receiver>& receivers,
                       std::size_t reference, const Point& source, SourceDelays& delays, const RunControl& control) {
    if (!delays.error.empty()) return;
    const std::vector<ReceiverArrivals>& nominal = delays.receivers;
    const std::vector<ConnectedPath>& nominal_reference = nominal[reference].paths;
    // Where each channel's outputs start in the vector of one model: per path its time and its
    // difference to the reference channel, then the channel's two differences (all in ns).
    std::vector<std::size_t> offset(receivers.size() + 1, 0);
    for (std::size_t k = 0; k < receivers.size(); ++k) offset[k + 1] = offset[k] + 2 * nominal[k].paths.size() + 2;
    const auto evaluate = [&](const FirnModel& model) {
        std::vector<double> out(offset.back(), absent_value);
        std::vector<SourceDelays> perturbed;
        try {
            const auto solver =
                make_solver(std::make_shared<FirnModel>(model), setup.solver, setup.numeric_tolerance);
            DelayOptions one;
            one.reference = reference;
            one.paths = setup.paths;
            perturbed = compute_delays(*solver, receivers, {DelaySource{"", 0, source, ""}}, one);
        } catch (const InputError&) {
            return out;  // the solver refuses this profile: every output is absent in it
        } catch (const NumericalError&) {
            return out;
        }
        const std::vector<ReceiverArrivals>& here = perturbed.front().receivers;
        const ReceiverArrivals& at_reference = here[reference];
        for (std::size_t k = 0; k < receivers.size(); ++k) {
            if (!nominal[k].error.empty() || !here[k].error.empty()) continue;
            const std::vector<ConnectedPath>& expected = nominal[k].paths;
            const std::vector<ConnectedPath>& found = here[k].paths;
            double* channel = out.data() + offset[k];
            for (std::size_t p = 0; p < expected.size(); ++p) {
                const auto match = matching_path(found, expected, p);
                if (!match) continue;
                channel[2 * p] = found[*match].time_s * seconds_to_ns;
                // minus_reference_same_kind: only where the nominal run has it too
                if (!at_reference.error.empty()) continue;
                const std::size_t rank = rank_within_kind(expected, p);
                if (!time_of_kind(nominal_reference, expected[p].kind, rank)) continue;
                if (const auto t = time_of_kind(at_reference.paths, expected[p].kind, rank))
                    channel[2 * p + 1] = (found[*match].time_s - *t) * seconds_to_ns;
            }
            double* differences = channel + 2 * expected.size();
            if (!found.empty() && at_reference.error.empty() && !at_reference.paths.empty() &&
                !nominal_reference.empty() && !expected.empty())
                differences[0] = (found.front().time_s - at_reference.paths.front().time_s) * seconds_to_ns;
            if (found.size() >= 2 && expected.size() >= 2)
                differences[1] = (found[1].time_s - found[0].time_s) * seconds_to_ns;
        }
        return out;
    };
    const PropagatedValues values = propagate_uncertainty(perturbation, evaluate, options, control);
    constexpr double ns_to_seconds = 1.0 / seconds_to_ns;
    for (std::size_t k = 0; k < receivers.size(); ++k) {
        ReceiverArrivals& channel = delays.receivers[k];
        channel.spreads.clear();
        if (!channel.error.empty()) continue;
        for (std::size_t p = 0; p < channel.paths.size(); ++p) {
            ReceiverArrivals::Spread spread;
            spread.time_s = values.sigma[offset[k] + 2 * p] * ns_to_seconds;
            spread.minus_reference_same_kind_s = values.sigma[offset[k] + 2 * p + 1] * ns_to_seconds;
            spread.absent = values.absent[offset[k] + 2 * p];
            channel.spreads.push_back(spread);
        }
        const std::size_t differences = offset[k] + 2 * channel.paths.size();
        channel.first_minus_reference_first_sigma_s = values.sigma[differences] * ns_to_seconds;
        channel.second_minus_first_sigma_s = values.sigma[differences + 1] * ns_to_seconds;
    }
    delays.spread_models = valid_perturbed_models(values);
}

}  // namespace firnray
