// Writing traced rays as CSV (one row per sampled point), JSON (rays → branches → points,
// events, amplitudes, drift) or an SVG figure of the fan. Positions in m, times in ns, angles in
// degrees, as named. Each renders to a std::ostream; the std::string wrappers of the same name
// let the front end render everything first and write files only once all of it succeeded.
#pragma once

#include <ostream>
#include <string>
#include <vector>

#include "model/firn_model.hpp"
#include "trace/ray_tracer.hpp"

namespace firnray {

// Columns: ray, branch, parent, kind, launch_zenith_deg, x_m, z_m, time_ns, length_m.
void write_trace_csv(std::ostream& out, const std::vector<RayTrace>& rays);
std::string trace_csv(const std::vector<RayTrace>& rays);

// The whole trace, with the model's name and description and the conventions used.
void write_trace_json(std::ostream& out, const FirnModel& model, const std::vector<RayTrace>& rays);
std::string trace_json(const FirnModel& model, const std::vector<RayTrace>& rays);

// The rays in the x-z plane, coloured by branch kind, over the air, the surface, the model's
// bottom (if any) and the launch point (launch_x_m, launch_z_m).
void write_ray_fan_svg(std::ostream& out, const FirnModel& model, const std::vector<RayTrace>& rays, double launch_x_m,
                       double launch_z_m);
std::string ray_fan_svg(const FirnModel& model, const std::vector<RayTrace>& rays, double launch_x_m, double launch_z_m);

}  // namespace firnray
