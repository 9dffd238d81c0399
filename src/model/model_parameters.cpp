#include "model/model_parameters.hpp"

#include <algorithm>
#include <cmath>

#include <fmt/format.h>
#include <fmt/ranges.h>

#include "core/errors.hpp"
#include "core/text.hpp"
#include "model/layered_profile.hpp"
#include "model/table_profile.hpp"

namespace firnray {

namespace {

void require_count(const IndexProfile& profile, std::size_t expected, std::size_t given) {
    if (expected != given)
        throw ModelInputError(fmt::format("{} values given for the {} parameters of the {} profile", given, expected,
                                          profile.kind()));
}

}  // namespace

std::vector<std::string> profile_parameter_names(const IndexProfile& profile) {
    if (dynamic_cast<const ConstantProfile*>(&profile) != nullptr) return {"n"};
    if (dynamic_cast<const ExponentialProfile*>(&profile) != nullptr) return {"n_surface", "n_deep", "scale_depth_m"};
    if (const auto* layered = dynamic_cast<const LayeredProfile*>(&profile)) {
        std::vector<std::string> names{"n_surface"};
        const auto& layers = layered->layers();
        for (std::size_t i = 0; i < layers.size(); ++i) {
            names.push_back(fmt::format("layer[{}].n_deep", i));
            names.push_back(fmt::format("layer[{}].scale_depth_m", i));
            if (i + 1 < layers.size()) names.push_back(fmt::format("layer[{}].bottom_depth_m", i));
        }
        return names;
    }
    return {};  // a table (a 1σ per point instead), or a profile made in code
}

std::vector<double> profile_parameter_values(const IndexProfile& profile) {
    if (const auto* c = dynamic_cast<const ConstantProfile*>(&profile)) return {c->value()};
    if (const auto* e = dynamic_cast<const ExponentialProfile*>(&profile))
        return {e->n_surface(), e->n_deep(), e->scale_depth_m()};
    if (const auto* layered = dynamic_cast<const LayeredProfile*>(&profile)) {
        std::vector<double> values{layered->n_surface()};
        const auto& layers = layered->layers();
        for (std::size_t i = 0; i < layers.size(); ++i) {
            values.push_back(layers[i].n_deep);
            values.push_back(layers[i].scale_depth_m);
            if (i + 1 < layers.size()) values.push_back(layers[i].bottom_depth_m);
        }
        return values;
    }
    return {};
}

std::shared_ptr<const IndexProfile> profile_with_parameters(const IndexProfile& profile,
                                                            std::span<const double> values) {
    require_count(profile, profile_parameter_names(profile).size(), values.size());
    if (dynamic_cast<const ConstantProfile*>(&profile) != nullptr) return std::make_shared<ConstantProfile>(values[0]);
    if (dynamic_cast<const ExponentialProfile*>(&profile) != nullptr)
        return std::make_shared<ExponentialProfile>(values[1], values[0], values[2]);
    if (const auto* layered = dynamic_cast<const LayeredProfile*>(&profile)) {
        std::vector<ExponentialLayer> layers = layered->layers();
        std::size_t k = 1;
        for (std::size_t i = 0; i < layers.size(); ++i) {
            layers[i].n_deep = values[k++];
            layers[i].scale_depth_m = values[k++];
            if (i + 1 < layers.size()) layers[i].bottom_depth_m = values[k++];
        }
        return std::make_shared<LayeredProfile>(values[0], std::move(layers), layered->transition_m());
    }
    if (values.empty()) return nullptr;  // unreachable: require_count refused it
    throw ModelInputError(fmt::format("a {} profile has no parameters to set", profile.kind()));
}

FirnModel model_with_parameters(const FirnModel& model, std::span<const double> values) {
    if (profile_parameter_names(*model.index).empty())
        throw ModelInputError(fmt::format("the {} profile of model '{}' has no parameters to set (a table is "
                                          "adjusted point by point)",
                                          model.index->kind(), model.name));
    FirnModel out = model;
    out.index = profile_with_parameters(*model.index, values);
    out.uncertainty.reset();
    out.warnings.clear();
    return out;
}

std::shared_ptr<const IndexProfile> table_with_index(const IndexProfile& profile, std::span<const double> n) {
    const auto* table = dynamic_cast<const TableProfile*>(&profile);
    if (table == nullptr) throw ModelInputError(fmt::format("a {} profile is not a table", profile.kind()));
    require_count(profile, table->depth_m().size(), n.size());
    return std::make_shared<TableProfile>(table->depth_m(), std::vector<double>(n.begin(), n.end()),
                                          table->interpolation(), table->smoothing_m());
}

std::size_t parameter_position(const std::vector<std::string>& names, const std::string& name,
                               const InputLocation& where, const std::string& what_profile) {
    const auto it = std::find(names.begin(), names.end(), name);
    if (it != names.end()) return static_cast<std::size_t>(it - names.begin());
    throw ModelInputError(fmt::format("'{}' is not a parameter of {}{}; its parameters are {}", name, what_profile,
                                      did_you_mean(name, names),
                                      names.empty() ? std::string("none") : fmt::format("{}", fmt::join(names, ", "))),
                          where);
}

}  // namespace firnray
