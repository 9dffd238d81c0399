#include "model/table_checks.hpp"

#include <cmath>

#include <fmt/format.h>

#include "core/errors.hpp"

namespace firnray {

void require_table_depths(const std::vector<double>& depth, std::size_t values, std::size_t minimum, const char* what,
                          const char* value_key) {
    if (depth.size() != values)
        throw ModelInputError(fmt::format("the table has {} depths but {} values", depth.size(), values),
                              {"", 0, value_key});
    if (depth.size() < minimum)
        throw ModelInputError(fmt::format("{} needs at least {} points (got {})", what, minimum, depth.size()),
                              {"", 0, "depth_m"});
    for (std::size_t i = 0; i < depth.size(); ++i) {
        if (!std::isfinite(depth[i]))
            throw ModelInputError(fmt::format("point {}: depth is not a finite number", i + 1), {"", 0, "depth_m"});
        if (depth[i] < 0.0)
            throw ModelInputError(fmt::format("point {}: depth {} m is above the surface", i + 1, depth[i]),
                                  {"", 0, "depth_m"});
        if (i > 0 && !(depth[i] > depth[i - 1]))
            throw ModelInputError(fmt::format("point {}: depth {} m is not deeper than the point before ({} m); "
                                              "depths must increase strictly",
                                              i + 1, depth[i], depth[i - 1]),
                                  {"", 0, "depth_m"});
    }
}

}  // namespace firnray
