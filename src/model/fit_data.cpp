#include "model/fit_data.hpp"

#include <fmt/format.h>

#include "core/errors.hpp"
#include "io/csv_reader.hpp"

namespace firnray {

std::vector<double> FitData::index_values() const {
    std::vector<double> n = value;
    if (density_rule)
        for (auto& v : n) v = index_from_density(v, *density_rule);
    return n;
}

FitData read_fit_data(const std::string& path, const FitColumns& columns) {
    const CsvTable csv = read_csv(path, CsvErrorKind::data);
    FitData data;
    data.path = path;
    data.density_rule = columns.density_rule;
    const bool density = columns.density_rule.has_value();
    const std::size_t depth_index = csv.column(columns.depth);
    const std::size_t value_index = csv.column(columns.value);
    for (const CsvRow& row : csv.rows) {
        double depth = csv.number(row, depth_index);
        if (columns.depth_is_z) depth = -depth;
        if (depth < 0.0)
            csv.fail(row, csv.columns[depth_index],
                     columns.depth_is_z ? fmt::format("z = {} m is above the surface (the ice is z <= 0)", -depth)
                                        : fmt::format("depth {} m is negative (depths are positive down)", depth));
        double value = csv.number(row, value_index);
        if (density) {
            value = to_g_cm3(value, columns.density_unit);
            if (value < lowest_plausible_density_g_cm3 || value > highest_plausible_density_g_cm3)
                csv.fail(row, csv.columns[value_index],
                         fmt::format("density {} {} is not a snow, firn or ice density; is --density-unit right?",
                                     csv.number(row, value_index), density_unit_name(columns.density_unit)));
        } else if (value < 1.0) {
            csv.fail(row, csv.columns[value_index], fmt::format("n = {} is below 1", value));
        } else if (value > 2.0) {
            csv.fail(row, csv.columns[value_index], fmt::format("n = {} is above 2, which no snow, firn or ice reaches", value));
        }
        data.depth_m.push_back(depth);
        data.value.push_back(value);
    }
    if (data.depth_m.empty()) throw DataInputError("the file has a header but no data rows", {path, 0, ""});
    return data;
}

ExponentialFit fit_exponential(const FitData& data, const ExponentialFitOptions& options) {
    return data.density_rule ? fit_exponential_to_density(data.depth_m, data.value, *data.density_rule, options)
                             : fit_exponential(data.depth_m, data.value, options);
}

}  // namespace firnray
