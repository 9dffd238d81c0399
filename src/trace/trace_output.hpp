// Writing traced rays as CSV (one row per sampled point) or JSON (rays → branches → points,
// events, amplitudes, drift). Positions in m, times in ns, angles in degrees, as named.
#pragma once

#include <string>
#include <vector>

#include "model/firn_model.hpp"
#include "trace/ray_tracer.hpp"

namespace firnray {

// Columns: ray, branch, parent, kind, launch_zenith_deg, x_m, z_m, time_ns, length_m.
std::string trace_csv(const std::vector<RayTrace>& rays);

// The whole trace, with the model's name and description and the conventions used.
std::string trace_json(const FirnModel& model, const std::vector<RayTrace>& rays);

}  // namespace firnray
