// The site model as the JSON outputs of profiles and traces describe it. Kept in the output layer
// so that model/ computes and never formats.
#pragma once

#include "io/json_writer.hpp"
#include "model/firn_model.hpp"

namespace firnray {

// An object with name, origin, index (the profile's description), smoothing_m (for a smoothed
// table only) and n_air, written as the next value (after a key).
void write_model_json(JsonWriter& json, const FirnModel& model);

}  // namespace firnray
