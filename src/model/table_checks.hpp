// Checks shared by the tabulated profiles (index and attenuation): the depths of a table's
// points, reported as ModelInputError naming the point and the key, so a model file can say where.
#pragma once

#include <cstddef>
#include <vector>

namespace firnray {

// depth and values the same size, at least `minimum` points, depths finite, >= 0 and strictly
// increasing. `what` names the table in messages ("an index table"); `value_key` is the key
// blamed for a size mismatch.
void require_table_depths(const std::vector<double>& depth_m, std::size_t values, std::size_t minimum,
                          const char* what, const char* value_key);

}  // namespace firnray
