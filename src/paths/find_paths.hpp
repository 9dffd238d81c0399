// Every ray path joining a source and a receiver in a horizontally stratified site model
// (docs/physics.md §6, §8): direct, refracted, surface-reflected, bottom-reflected, transmitted
// through the surface, turning below, ducted, and paths with several bounces, each with its
// amplitude factors. Works with any RaySolver (closed form, numeric or stratified). Beyond the
// reach of every path family a pair has no path (the shadow zone): the result is then empty,
// which is not an error.
#pragma once

#include <vector>

#include "core/point.hpp"
#include "paths/connected_path.hpp"
#include "solver/ray_solver.hpp"

namespace firnray {

struct PathOptions {
    // The most times a path may turn back vertically: every turning point, surface reflection and
    // bottom reflection counts one. 1 (the default) gives what is normally wanted: direct,
    // refracted or one surface reflection, turning below, and one bottom reflection when the
    // model has a bottom. Larger values add ducted paths and surface/bottom alternations. 0..32.
    int max_bounces = 1;
    // Whether to look for bottom-reflected paths at all (only when the model has a bottom).
    bool bottom_paths = true;
    // Samples of the ray parameter over each non-monotone family (refracted and the multi-bounce
    // families with a turning point) used to bracket every root; with ∂r/∂ξ at each sample the
    // extrema between samples are located too, so a few tens suffice. 4..10000.
    int scan_samples = 16;
};

// Where n_deep − n at the shallower end of an ice pair falls below this fraction of n, the legs of
// the closed form and the integrator lose n − ξ to rounding (the near-n_deep limit): on the
// built-in model, below about 460 m.
inline constexpr double near_deep_limit = 1e-6;

// Whether find_paths answers an ice-to-ice pair (both z <= 0) with the stratified path finder
// (solver/path_families.hpp, on solver.stratified_profile()) rather than with the solver's legs.
// One rule, whatever the solver: yes with the stratified solver; yes for two ends at the same depth
// (the refracted path then turns within r²·|dn/dz|/(8n) of them, which a plain ξ cannot resolve
// for short pairs); yes on a profile whose index falls with depth anywhere above its floor
// (ducts); yes where the index still grows below the shallower
// end but by less than near_deep_limit × n down to the deepest depth a model may have (the
// near-n_deep limit, which the stratified finder resolves with anchored ray levels). Otherwise,
// and for every pair with an end in the air, the solver's own legs.
bool uses_stratified_paths(const RaySolver& solver, const Point& source, const Point& receiver);

// All paths from `source` to `receiver`, sorted by arrival time. Empty in the shadow zone.
// Throws DataInputError for non-finite coordinates, coincident points, an end below the bottom,
// or options out of range; NumericalError if the solver fails.
// Both ends in the air: the straight line and the reflection off the surface only.
std::vector<ConnectedPath> find_paths(const RaySolver& solver, const Point& source, const Point& receiver,
                                      const PathOptions& options = {});

}  // namespace firnray
