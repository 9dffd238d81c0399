// The profile's part of a reconstructed source position (locate --uncertainty, docs/uncertainty.md
// "locate"): every event is fitted again in each perturbed model, with a SourceLocator of its own,
// and the fitted positions are propagated like any other output. Linearised, this is the
// implicit-function derivative of the fitted position with respect to the model, by central
// differences of refits; Monte Carlo, the spread of the refits. It adds to the timing part
// (Jᵀ W J)⁻¹ of the nominal fit: the two are independent.
#pragma once

#include <cstddef>
#include <optional>
#include <vector>

#include "core/cancel.hpp"
#include "locate/arrival_events.hpp"
#include "locate/source_fit.hpp"
#include "locate/source_view.hpp"
#include "uncertainty/path_uncertainty.hpp"

namespace firnray {

struct ProfilePositionSpread {
    // Covariance of (x, y, z) from the profile alone, m²; NaN where it cannot be given (linearised,
    // when a step's refit fails).
    PositionCovariance covariance_m2{};
    // The 1σ of distance, depth, zenith and azimuth from the station centre: from the profile part
    // alone, and from the profile and timing parts together (their covariances added).
    SourceView profile, combined;
    bool defined = false;         // false: covariance_m2 has NaN, the views are not given
    std::size_t models = 0;       // perturbed models that made a valid profile
    std::size_t absent = 0;       // of those, models whose refit failed
    // Of the refits, those whose best minimum matched the pulses to other paths than the nominal
    // fit, and for which no other reported minimum keeps the nominal matching (their best was used).
    std::size_t matching_changed = 0;
};

// The locator's options for the refits (the same as the nominal one, its threads and control aside).
struct LocateRefitSetup {
    SolverChoice solver = SolverChoice::automatic;
    LocateOptions options;
};

// One entry per fit, in order; empty for an event that the nominal fit could not fit. The refit
// of an event in a perturbed model keeps the nominal pulse matching where it can: it takes the
// best minimum when it matches every pulse to the same path kind and rank as the nominal fit,
// else the first other reported minimum that does, else the best (counted in matching_changed).
// Throws NumericalError when too few perturbed models make a valid profile.
std::vector<std::optional<ProfilePositionSpread>> profile_position_spreads(
    const ModelPerturbation& perturbation, const LocateRefitSetup& setup, const Station& station,
    const std::vector<ArrivalEvent>& events, const std::vector<EventFit>& nominal, const PropagationOptions& options,
    const RunControl& control = {});

}  // namespace firnray
