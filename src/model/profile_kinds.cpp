#include "model/profile_kinds.hpp"

#include <algorithm>
#include <cmath>

#include <fmt/format.h>

#include "core/text.hpp"
#include "model/attenuation.hpp"
#include "model/density.hpp"
#include "model/layered_profile.hpp"
#include "model/model_limits.hpp"
#include "model/table_profile.hpp"
#include "model/table_warnings.hpp"

namespace firnray {

namespace {

// Re-raises an error from a profile constructor, whose key is relative to the table (e.g.
// "layer[1].n_deep"), at the line of that key in the file, or of the nearest enclosing table.
[[noreturn]] void relocate(const TomlTable& table, const ModelInputError& e) {
    if (!e.where().file.empty()) throw e;  // already located in a file (the model's or a table's CSV)
    throw ModelInputError(e.reason(), table.locate(e.where().key));
}

// ---- constant --------------------------------------------------------------------------------

std::shared_ptr<const IndexProfile> read_constant(const TomlTable& t, ModelFileContext&) {
    return std::make_shared<ConstantProfile>(t.number("n", "n, the index of the whole ice", model_limits::index));
}

void write_constant(const IndexProfile& profile, TomlWriter& out) {
    out.value("n", static_cast<const ConstantProfile&>(profile).value());
}

// ---- exponential -----------------------------------------------------------------------------

std::shared_ptr<const IndexProfile> read_exponential(const TomlTable& t, ModelFileContext&) {
    const double n_deep = t.number("n_deep", "n_deep, the index of deep ice", model_limits::index);
    const double n_surface = t.number("n_surface", "n_surface, the index at the surface", model_limits::index);
    const double scale = t.number("scale_depth_m", "scale_depth_m, the e-folding depth (m)", model_limits::scale_depth);
    return std::make_shared<ExponentialProfile>(n_deep, n_surface, scale);
}

void write_exponential(const IndexProfile& profile, TomlWriter& out) {
    const auto& p = static_cast<const ExponentialProfile&>(profile);
    out.value("n_deep", p.n_deep()).value("n_surface", p.n_surface()).value("scale_depth_m", p.scale_depth_m());
}

// ---- layered ---------------------------------------------------------------------------------

ExponentialLayer read_layer(const TomlTable& layer, ModelFileContext& context, bool deepest, double top_depth) {
    layer.allow_only({"bottom_depth_m", "bottom_z_m", "n_deep", "scale_depth_m"}, "in an [[index.layer]] table");
    ExponentialLayer entry;
    entry.n_deep = layer.number("n_deep", "n_deep, the asymptote of this layer", model_limits::index);
    entry.scale_depth_m =
        layer.number("scale_depth_m", "scale_depth_m, the e-folding depth of this layer (m)", model_limits::scale_depth);
    if (deepest) {
        for (std::string_view key : {"bottom_depth_m", "bottom_z_m"})
            if (layer.has(key))
                layer.fail(key, "the deepest layer extends to any depth: remove its bottom (or add a layer below)");
        return entry;
    }
    const std::string_view key = layer.one_of(
        "bottom_depth_m", "bottom_z_m",
        "the layer's bottom as bottom_depth_m (positive down) or bottom_z_m (up positive); only the deepest "
        "layer has none");
    const bool z_style = key == "bottom_z_m";
    context.note_vertical(layer, key, z_style ? "z" : "depth");
    const double value = layer.number(key, "the bottom");
    entry.bottom_depth_m = z_style ? -value : value;
    if (!(entry.bottom_depth_m > top_depth))
        layer.fail(key, fmt::format("the bottom at {} {} m is not below the layer's top ({} {} m): bottoms must "
                                    "go deeper from the surface down",
                                    z_style ? "z =" : "depth", value, z_style ? "z =" : "depth",
                                    z_style ? -top_depth : top_depth));
    TomlTable::check_range(value, layer.where(key), key, z_style ? model_limits::height : model_limits::depth);
    return entry;
}

std::shared_ptr<const IndexProfile> read_layered(const TomlTable& t, ModelFileContext& context) {
    const double n_surface = t.number("n_surface", "n_surface, the index at the surface", model_limits::index);
    const double transition =
        t.optional_number("transition_m", model_limits::transition).value_or(LayeredProfile::default_transition_m);
    if (!t.has("layer")) t.fail("layer", "missing: give the layers as [[index.layer]] tables, from the surface down");
    const auto tables = t.tables("layer", "one or more [[index.layer]] tables (each with n_deep, scale_depth_m and, "
                                          "but for the deepest, bottom_depth_m or bottom_z_m)");
    std::vector<ExponentialLayer> layers;
    double top_depth = 0.0;
    for (std::size_t i = 0; i < tables.size(); ++i) {
        layers.push_back(read_layer(tables[i], context, i + 1 == tables.size(), top_depth));
        top_depth = layers.back().bottom_depth_m;
    }
    return std::make_shared<LayeredProfile>(n_surface, std::move(layers), transition);
}

void write_layered(const IndexProfile& profile, TomlWriter& out) {
    const auto& p = static_cast<const LayeredProfile&>(profile);
    out.value("n_surface", p.n_surface()).value("transition_m", p.transition_m());
    for (const auto& layer : p.layers()) {
        out.array_table("index.layer");
        if (std::isfinite(layer.bottom_depth_m)) out.value("bottom_depth_m", layer.bottom_depth_m);
        out.value("n_deep", layer.n_deep).value("scale_depth_m", layer.scale_depth_m);
    }
}

// ---- table -----------------------------------------------------------------------------------

// A function-local static, so that a model read while another file's globals are being built
// (a static initialiser) never sees this list before it exists.
const std::vector<ValueAlternative>& index_values() {
    static const std::vector<ValueAlternative> values{
        {"n", "n_column", "the index n"}, {"density", "density_column", "density, with density_unit and density_rule"}};
    return values;
}

// n at each point: the values themselves, or the densities converted by the file's rule.
std::vector<double> index_values_of(const TomlTable& t, const PointTable& table) {
    std::vector<double> n;
    if (table.value_kind == 0) {
        for (const auto& p : table.points) {
            TomlTable::check_range(p.value, p.value_at, "n", model_limits::index);
            n.push_back(p.value);
        }
        return n;
    }
    const std::string unit_name = t.choice("density_unit", {"kg/m3", "g/cm3"}, "a density unit here",
                                           "density_unit = \"kg/m3\" or \"g/cm3\"");
    const DensityUnit unit = *density_unit_from_name(unit_name);
    const std::string rule_name =
        t.choice("density_rule", {"kovacs", "looyenga"}, "a density rule",
                 "density_rule = \"kovacs\" (Kovacs et al. 1995) or \"looyenga\" (Looyenga 1965)");
    const DensityRule rule = *density_rule_from_name(rule_name);
    const double scale = unit == DensityUnit::kg_m3 ? 1000.0 : 1.0;
    for (const auto& p : table.points) {
        const double g_cm3 = to_g_cm3(p.value, unit);
        // Outside this range a value is no snow, firn or ice: most often a unit mistake.
        if (!(g_cm3 >= lowest_plausible_density_g_cm3 && g_cm3 <= highest_plausible_density_g_cm3))
            throw ModelInputError(
                fmt::format("density {} {} is not a snow, firn or ice density (expected {} to {} {}); "
                            "is density_unit right?",
                            number_for_message(p.value), unit_name,
                            number_for_message(scale * lowest_plausible_density_g_cm3),
                            number_for_message(scale * highest_plausible_density_g_cm3), unit_name),
                p.value_at);
        n.push_back(index_from_density(g_cm3, rule));
    }
    return n;
}

std::shared_ptr<const IndexProfile> read_index_table(const TomlTable& t, ModelFileContext& context) {
    PointTable table = read_point_table(t, context, index_values());
    const bool density = table.value_kind == 1;
    for (std::string_view key : {"density_unit", "density_rule"})
        if (!density && t.has(key)) t.fail(key, fmt::format("'{}' only goes with density values", key));
    table.require_points(TableProfile::minimum_points, "an index table");
    std::vector<double> n = index_values_of(t, table);
    std::vector<double> depth;
    for (const auto& p : table.points) depth.push_back(p.depth);
    const auto interpolation =
        t.optional_choice("interpolation", {"monotone", "spline"}, "a table interpolation",
                          "\"monotone\" (Fritsch-Carlson, the default) or \"spline\" (C² cubic spline)");
    const std::optional<double> smoothing = t.optional_number("smoothing_m", model_limits::smoothing);
    std::shared_ptr<const TableProfile> profile;
    try {
        profile = std::make_shared<TableProfile>(std::move(depth), std::move(n),
                                                 interpolation == "spline" ? TableInterpolation::spline
                                                                           : TableInterpolation::monotone,
                                                 smoothing);
    } catch (const ModelInputError& e) {
        if (e.where().key == "smoothing_m") t.fail("smoothing_m", e.reason());
        table.fail(fmt::format("{}: {}", table.description, e.reason()));
    }
    std::optional<double> kg_m3_per_unit;
    if (density)
        kg_m3_per_unit = to_g_cm3(1.0, *density_unit_from_name(t.text("density_unit", "a density unit"))) * 1000.0;
    for (auto& warning : unusual_table_features(table, profile->n_values(), kg_m3_per_unit))
        context.warnings.push_back(std::move(warning));
    return profile;
}

void write_index_table(const IndexProfile& profile, TomlWriter& out) {
    const auto& p = static_cast<const TableProfile&>(profile);
    out.value("depth_m", p.depth_m()).value("n", p.tabulated_n());
    if (p.interpolation() == TableInterpolation::spline) out.value("interpolation", "spline");
    if (p.smoothing_m()) out.value("smoothing_m", *p.smoothing_m());
}

// ---- attenuation -----------------------------------------------------------------------------

std::shared_ptr<const AttenuationProfile> read_constant_attenuation(const TomlTable& t, ModelFileContext&) {
    return std::make_shared<ConstantAttenuation>(
        t.number("length_m", "length_m, the field attenuation length (m)", model_limits::attenuation_length));
}

void write_constant_attenuation(const AttenuationProfile& profile, TomlWriter& out) {
    out.value("length_m", static_cast<const ConstantAttenuation&>(profile).length());
}

std::shared_ptr<const AttenuationProfile> read_attenuation_table(const TomlTable& t, ModelFileContext& context) {
    PointTable table = read_point_table(t, context, {{"length_m", "length_column", "the attenuation length in m"}});
    table.require_points(TableAttenuation::minimum_points, "an attenuation table");
    std::vector<double> depth, length;
    for (const auto& p : table.points) {
        TomlTable::check_range(p.value, p.value_at, "length_m", model_limits::attenuation_length);
        depth.push_back(p.depth);
        length.push_back(p.value);
    }
    try {
        return std::make_shared<TableAttenuation>(std::move(depth), std::move(length));
    } catch (const ModelInputError& e) {
        table.fail(fmt::format("{}: {}", table.description, e.reason()));
    }
}

void write_attenuation_table(const AttenuationProfile& profile, TomlWriter& out) {
    const auto& a = static_cast<const TableAttenuation&>(profile);
    out.value("depth_m", a.depth_m()).value("length_m", a.lengths_m());
}

template <class Kind>
std::vector<std::string> names_of(const std::vector<Kind>& kinds) {
    std::vector<std::string> names;
    for (const auto& kind : kinds) names.push_back(kind.name);
    return names;
}

template <class Kind>
std::vector<std::string> every_key_of(const std::vector<Kind>& kinds) {
    std::vector<std::string> keys;
    for (const auto& kind : kinds)
        for (const auto& key : kind.keys)
            if (std::find(keys.begin(), keys.end(), key) == keys.end()) keys.push_back(key);
    return keys;
}

// The kind named by `kind` in a table, with the table checked for keys of other kinds.
template <class Kind>
const Kind& kind_of(const TomlTable& t, const std::vector<Kind>& kinds, std::string_view noun, std::string_view section) {
    const std::vector<std::string> names = names_of(kinds);
    const std::string name = t.choice("kind", names, noun, "kind = one of " + join_names(names),
                                      "one of " + join_names(names));
    const Kind& kind = *std::find_if(kinds.begin(), kinds.end(), [&](const Kind& k) { return k.name == name; });
    t.allow_only(kind.keys, fmt::format("in [{}] with kind = \"{}\"", section, name), every_key_of(kinds));
    return kind;
}

std::vector<std::string> with_kind(std::vector<std::string> keys) {
    keys.insert(keys.begin(), "kind");
    return keys;
}

}  // namespace

const std::vector<IndexKind>& index_kinds() {
    static const std::vector<IndexKind> kinds{
        {"constant", {"kind", "n"}, read_constant, write_constant},
        {"exponential", {"kind", "n_deep", "n_surface", "scale_depth_m"}, read_exponential, write_exponential},
        {"layered", {"kind", "n_surface", "transition_m", "layer"}, read_layered, write_layered},
        {"table",
         [] {
             auto keys = with_kind(point_table_keys(index_values()));
             keys.insert(keys.end(), {"density_unit", "density_rule", "interpolation", "smoothing_m"});
             return keys;
         }(),
         read_index_table, write_index_table},
    };
    return kinds;
}

const std::vector<AttenuationKind>& attenuation_kinds() {
    static const std::vector<AttenuationKind> kinds{
        {"constant", {"kind", "length_m"}, read_constant_attenuation, write_constant_attenuation},
        {"table", with_kind(point_table_keys({{"length_m", "length_column", ""}})), read_attenuation_table,
         write_attenuation_table},
    };
    return kinds;
}

std::shared_ptr<const IndexProfile> read_index_profile(const TomlTable& t, ModelFileContext& context) {
    const IndexKind& kind = kind_of(t, index_kinds(), "a profile kind", "index");
    try {
        return kind.read(t, context);
    } catch (const ModelInputError& e) {
        relocate(t, e);
    }
}

std::shared_ptr<const AttenuationProfile> read_attenuation_profile(const TomlTable& t, ModelFileContext& context) {
    const AttenuationKind& kind = kind_of(t, attenuation_kinds(), "an attenuation kind", "attenuation");
    try {
        return kind.read(t, context);
    } catch (const ModelInputError& e) {
        relocate(t, e);
    }
}

void write_index_profile(const IndexProfile& profile, TomlWriter& out) {
    const std::string kind = profile.kind();
    for (const auto& entry : index_kinds()) {
        if (entry.name != kind) continue;
        out.value("kind", kind);
        entry.write(profile, out);
        return;
    }
    throw OutputError(fmt::format("model files cannot express an index profile of kind '{}'", kind));
}

void write_attenuation_profile(const AttenuationProfile& profile, TomlWriter& out) {
    const std::string kind = profile.kind();
    for (const auto& entry : attenuation_kinds()) {
        if (entry.name != kind) continue;
        out.value("kind", kind);
        entry.write(profile, out);
        return;
    }
    throw OutputError(fmt::format("model files cannot express an attenuation profile ({})", profile.describe()));
}

}  // namespace firnray
