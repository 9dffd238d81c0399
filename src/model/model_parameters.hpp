// The adjustable numbers of an index profile, by name, so that fits (calibrate), covariances in
// model files and uncertainty propagation treat every profile kind alike. Names follow the keys
// of model files relative to [index]: "n_surface", "n_deep", "scale_depth_m" (exponential), "n"
// (constant), "n_surface", "layer[0].n_deep", "layer[0].scale_depth_m", "layer[0].bottom_depth_m"
// … (layered, 0-based, the deepest layer has no bottom). A table has no parameters: its
// uncertainty is a 1σ per point (IndexUncertainty in model/firn_model.hpp).
#pragma once

#include <memory>
#include <span>
#include <string>
#include <vector>

#include "model/firn_model.hpp"

namespace firnray {

// The parameter names of a profile, in a fixed order (the order of the values below).
std::vector<std::string> profile_parameter_names(const IndexProfile& profile);

// The values, in the order of the names.
std::vector<double> profile_parameter_values(const IndexProfile& profile);

// The same profile with new values (one per name, in order). Throws ModelInputError, naming the
// parameter, when the values make no valid profile (an index below 1, n falling with depth, a
// scale depth not positive, layer bottoms out of order) or when the count does not match.
std::shared_ptr<const IndexProfile> profile_with_parameters(const IndexProfile& profile,
                                                            std::span<const double> values);

// The model with its profile's parameters replaced; everything else (air, bottom, attenuation,
// name, origin) is kept, and the uncertainty is dropped (it described the old values).
FirnModel model_with_parameters(const FirnModel& model, std::span<const double> values);

// A table profile with new values of n at its points (same depths, interpolation and smoothing).
// Throws ModelInputError when a value is below 1 or the count does not match.
std::shared_ptr<const IndexProfile> table_with_index(const IndexProfile& table, std::span<const double> n);

// Position of `name` in `names`; throws ModelInputError at `where` (with "did you mean") when
// the profile has no such parameter. `what_profile` names the profile in the message.
std::size_t parameter_position(const std::vector<std::string>& names, const std::string& name,
                               const InputLocation& where, const std::string& what_profile);

}  // namespace firnray
