#include "uncertainty/locate_uncertainty.hpp"

#include <algorithm>
#include <atomic>
#include <cmath>
#include <limits>
#include <memory>

#include "core/errors.hpp"

namespace firnray {

namespace {

constexpr double absent_value = std::numeric_limits<double>::quiet_NaN();

// Events per propagation: its covariance of 3 outputs per event stays below 5 MB.
constexpr std::size_t events_per_propagation = 256;

// Whether two fits of one event match every pulse to the same path (kind and rank at its channel;
// direct and refracted as one kind, as for connect and delays).
bool same_matching(const SourceFit& a, const SourceFit& b) {
    if (a.pulses.size() != b.pulses.size()) return false;
    for (std::size_t i = 0; i < a.pulses.size(); ++i) {
        const AssignedPulse &p = a.pulses[i], &q = b.pulses[i];
        if (p.matched != q.matched) return false;
        if (p.matched && (!same_path_kind(p.kind, q.kind) || p.path_rank != q.path_rank)) return false;
    }
    return true;
}

}  // namespace

std::vector<std::optional<ProfilePositionSpread>> profile_position_spreads(
    const ModelPerturbation& perturbation, const LocateRefitSetup& setup, const Station& station,
    const std::vector<ArrivalEvent>& events, const std::vector<EventFit>& nominal, const PropagationOptions& options,
    const RunControl& control) {
    if (events.size() != nominal.size()) throw NumericalError("profile_position_spreads: one nominal fit per event is needed");
    // The events that were fitted; each has three outputs (x, y, z).
    std::vector<std::size_t> fitted;
    for (std::size_t i = 0; i < nominal.size(); ++i)
        if (nominal[i].best) fitted.push_back(i);
    std::vector<std::optional<ProfilePositionSpread>> result(nominal.size());
    if (fitted.empty()) return result;
    // The propagation holds the covariance of all its outputs, so events go in chunks of a fixed
    // size (the result does not depend on it: events do not share outputs); each chunk builds the
    // perturbed models' locators again.
    const std::size_t chunks = (fitted.size() + events_per_propagation - 1) / events_per_propagation;
    const std::size_t models_per_chunk = options.method == PropagationMethod::linearised
                                             ? 2 * perturbation.dimension()
                                             : static_cast<std::size_t>(std::max(options.samples, 0));
    const Point centre = station_centre(station.receivers);
    for (std::size_t chunk = 0; chunk < chunks; ++chunk) {
        const std::size_t first = chunk * events_per_propagation;
        const std::size_t count = std::min(events_per_propagation, fitted.size() - first);
        RunControl chunk_control = control;  // progress over every chunk's models
        if (control.progress)
            chunk_control.progress = [&control, chunk, chunks, models_per_chunk](std::size_t done, std::size_t) {
                control.progress(chunk * models_per_chunk + done, chunks * models_per_chunk);
            };
        // Counted from every model, the nominal one included (where nothing changes): the count
        // does not depend on the order in which threads finish.
        std::vector<std::atomic<std::size_t>> changed(count);
        const auto evaluate = [&](const FirnModel& model) {
            std::vector<double> out(3 * count, absent_value);
            std::unique_ptr<RaySolver> solver;
            std::unique_ptr<SourceLocator> locator;
            LocateOptions refit = setup.options;
            refit.threads = 1;  // the models are what runs in parallel
            refit.control = RunControl{};
            refit.control.cancel = control.cancel;
            try {
                solver = make_solver(std::make_shared<FirnModel>(model), setup.solver);
                locator = std::make_unique<SourceLocator>(*solver, station, refit);
            } catch (const InputError&) {
                return out;  // this model's profile cannot be used for a fit: every refit is absent
            } catch (const NumericalError&) {
                return out;
            }
            for (std::size_t j = 0; j < count; ++j) {
                const std::size_t e = fitted[first + j];
                const EventFit fit = locator->fit(events[e]);
                if (!fit.best) continue;
                const SourceFit* chosen = &*fit.best;
                if (!same_matching(*chosen, *nominal[e].best)) {
                    const SourceFit* keeping = nullptr;
                    for (const SourceFit& a : fit.alternatives)
                        if (same_matching(a, *nominal[e].best)) {
                            keeping = &a;
                            break;
                        }
                    if (keeping) chosen = keeping;
                    else changed[j].fetch_add(1, std::memory_order_relaxed);
                }
                out[3 * j] = chosen->position.x;
                out[3 * j + 1] = chosen->position.y;
                out[3 * j + 2] = chosen->position.z;
            }
            return out;
        };
        const PropagatedValues values = propagate_uncertainty(perturbation, evaluate, options, chunk_control);
        for (std::size_t j = 0; j < count; ++j) {
            const std::size_t e = fitted[first + j];
            const SourceFit& best = *nominal[e].best;
            ProfilePositionSpread spread;
            spread.models = values.models - 1 - values.rejected;
            spread.absent = values.absent[3 * j];
            spread.matching_changed = changed[j].load();
            spread.defined = true;
            PositionCovariance combined{};
            for (int a = 0; a < 3; ++a)
                for (int b = 0; b < 3; ++b) {
                    const double v = values.covariance[3 * j + a][3 * j + b];
                    spread.covariance_m2[a][b] = v;
                    if (!std::isfinite(v)) spread.defined = false;
                    combined[a][b] = v + best.covariance_m2[a][b];
                }
            if (spread.defined) {
                spread.profile = view_from_centre(centre, best.position, spread.covariance_m2);
                spread.combined = view_from_centre(centre, best.position, combined);
            }
            result[e] = spread;
        }
    }
    return result;
}

}  // namespace firnray
