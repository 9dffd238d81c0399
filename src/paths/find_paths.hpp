// Every ray path joining a source and a receiver in a horizontally stratified site model
// (docs/physics.md §6): direct, refracted, surface-reflected, bottom-reflected, transmitted
// through the surface, and paths with several bounces, each with its amplitude factors. Works
// with any RaySolver (closed form or numeric). Beyond the reach of every path family a pair has
// no path (the shadow zone): the result is then empty, which is not an error.
#pragma once

#include <vector>

#include "core/point.hpp"
#include "paths/connected_path.hpp"
#include "solver/ray_solver.hpp"

namespace firnray {

struct PathOptions {
    // The most times a path may turn back vertically: at the surface (reflection), at a turning
    // point (refraction) or at the bottom (reflection). 1 (the default) gives what is normally
    // wanted: direct, refracted or one surface reflection, and one bottom reflection when the
    // model has a bottom. Larger values add surface/bottom alternations. 0..32.
    int max_bounces = 1;
    // Whether to look for bottom-reflected paths at all (only when the model has a bottom).
    bool bottom_paths = true;
    // Samples of the ray parameter over each non-monotone family (refracted and the multi-bounce
    // families with a turning point) used to bracket every root; with ∂r/∂ξ at each sample the
    // extrema between samples are located too, so a few tens suffice. 4..10000.
    int scan_samples = 16;
};

// All paths from `source` to `receiver`, sorted by arrival time. Empty in the shadow zone.
// Throws DataInputError for non-finite coordinates, coincident points, an end below the bottom,
// or options out of range; NumericalError if the solver fails.
// Both ends in the air: the straight line and the reflection off the surface only.
std::vector<ConnectedPath> find_paths(const RaySolver& solver, const Point& source, const Point& receiver,
                                      const PathOptions& options = {});

}  // namespace firnray
