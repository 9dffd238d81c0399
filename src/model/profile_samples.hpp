// Sampling an index profile on a regular depth grid, for tables and plots of n and dn/dz.
#pragma once

#include <vector>

#include "model/index_profile.hpp"

namespace firnray {

struct ProfileSample {
    double depth_m = 0.0;  // positive down
    double z_m = 0.0;      // = -depth_m (up positive)
    double n = 0.0;
    double dn_dz_per_m = 0.0;  // with z up: negative where n grows with depth
};

// Samples at from_depth_m, from_depth_m + step_m, ... up to to_depth_m (included when the grid
// reaches it to within a millionth of a step). Throws DataInputError for a negative or non-finite
// start, an end above the start, a step that is not positive, or more than max_samples samples.
std::vector<ProfileSample> sample_profile(const IndexProfile& profile, double from_depth_m, double to_depth_m,
                                          double step_m, std::size_t max_samples = 10'000'000);

}  // namespace firnray
