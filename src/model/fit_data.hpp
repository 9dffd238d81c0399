// Measurements that the exponential model is fitted to, read from a CSV file: depth (or z) and
// either the index n or a density converted to n with a published rule. A bad row is a
// DataInputError naming the file, the line and the column.
#pragma once

#include <optional>
#include <string>
#include <vector>

#include "model/density.hpp"
#include "model/fit.hpp"

namespace firnray {

// Which columns hold what.
struct FitColumns {
    std::string depth = "depth_m";  // depth in m, positive down ...
    bool depth_is_z = false;        // ... or, when set, z in m (up positive, <= 0)
    std::string value = "n";        // the index n, or a density when density_rule is set
    std::optional<DensityRule> density_rule;
    DensityUnit density_unit = DensityUnit::kg_m3;
};

struct FitData {
    std::string path;                         // the file, as given (reports name it)
    std::vector<double> depth_m;              // positive down
    std::vector<double> value;                // n, or density in g/cm³ when density_rule is set
    std::optional<DensityRule> density_rule;  // how densities become n

    std::vector<double> index_values() const;  // value as n
};

// Reads every row. Throws DataInputError for a missing column, a number that is not finite, a
// negative depth (z above the surface), n below 1, a density outside what snow, firn and ice
// can have (a unit mistake, most likely), or a file without data rows.
FitData read_fit_data(const std::string& path, const FitColumns& columns);

// The fit to the data: to n directly, or through the density rule.
ExponentialFit fit_exponential(const FitData& data, const ExponentialFitOptions& options = {});

}  // namespace firnray
