// Writing delay tables (station/delay_table.hpp) in the long format: one row per source ×
// receiver × path, one "none" row for a receiver in the shadow zone, an error row for a bad
// source and an error row naming the receiver for a channel that failed. Each renders to a
// std::ostream; the std::string wrappers of the same name render into memory.
#pragma once

#include <ostream>
#include <string>
#include <vector>

#include "station/delay_table.hpp"
#include "station/station.hpp"

namespace firnray {

// Columns source, source_line, receiver, path, kind, time_ns, minus_reference_same_kind_ns,
// first_minus_reference_first_ns, second_minus_first_ns, launch_zenith_deg, arrival_zenith_deg,
// (with derivatives) dt_dx_ns_per_m, dt_dy_ns_per_m, dt_dz_ns_per_m, and error.
void write_delay_table_csv(std::ostream& out, const std::vector<DelaySource>& sources,
                           const std::vector<SourceDelays>& delays, const std::vector<Receiver>& receivers,
                           const DelayOptions& options, bool derivatives);
std::string delay_table_csv(const std::vector<DelaySource>& sources, const std::vector<SourceDelays>& delays,
                            const std::vector<Receiver>& receivers, const DelayOptions& options, bool derivatives);

// {model, reference_receiver, sources: [{name, input_line, position_m, receivers: [...]}]}; a bad
// source has `error` instead of position and receivers, a failed channel `error` instead of paths.
void write_delay_table_json(std::ostream& out, const std::vector<DelaySource>& sources,
                            const std::vector<SourceDelays>& delays, const std::vector<Receiver>& receivers,
                            const DelayOptions& options, bool derivatives, const std::string& model_name);
std::string delay_table_json(const std::vector<DelaySource>& sources, const std::vector<SourceDelays>& delays,
                             const std::vector<Receiver>& receivers, const DelayOptions& options, bool derivatives,
                             const std::string& model_name);

}  // namespace firnray
