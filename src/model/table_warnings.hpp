// What is merely unusual in a measured log (an index falling fast with depth, a large step, a
// point spacing far from the rest): possible in real firn, so reported as warnings located at
// the point's file, line and column, never refused. Thresholds in model/model_limits.hpp.
#pragma once

#include <optional>
#include <vector>

#include "model/firn_model.hpp"
#include "model/point_table.hpp"

namespace firnray {

// n: the index at each point of `table`, as the profile will use it (smoothed when the file
// smooths). density_kg_m3_per_unit: for a density table, the factor from the file's unit to
// kg/m³ (steps are then judged on the densities as given); none for an index table.
std::vector<ModelWarning> unusual_table_features(const PointTable& table, const std::vector<double>& n,
                                                 std::optional<double> density_kg_m3_per_unit);

}  // namespace firnray
