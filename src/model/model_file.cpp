#include "model/model_file.hpp"

#include <algorithm>
#include <cmath>
#include <filesystem>
#include <fstream>
#include <initializer_list>
#include <optional>
#include <sstream>
#include <stdexcept>
#include <vector>

#include <fmt/format.h>
#include <toml++/toml.h>

#include "core/errors.hpp"
#include "io/csv_reader.hpp"
#include "model/attenuation.hpp"
#include "model/density.hpp"
#include "model/layered_profile.hpp"
#include "model/table_profile.hpp"

namespace firnray {

namespace {

namespace fs = std::filesystem;

// The built-in model; models/default.toml is a byte-for-byte copy (a test checks it).
constexpr std::string_view built_in_model_text =
    R"toml(# The firnray built-in model: generic polar firn, not a real site.
# Its values lie inside the published ranges for polar firn (from memory): n_deep 1.77-1.78,
# n_surface 1.30-1.40, scale depth 30-80 m. Radio attenuation lengths of order 1 km in cold polar
# ice are common practice. There is no bottom: the ice goes on below any depth asked about.
name = "generic polar firn (built-in; not a real site)"

[index]
kind = "exponential"
n_deep = 1.78
n_surface = 1.35
scale_depth_m = 37.0

[air]
n = 1.0

[attenuation]
kind = "constant"
length_m = 1000.0
)toml";

int line_of(const toml::node& node) { return std::max(1, static_cast<int>(node.source().begin.line)); }
int line_of(const toml::key& key) { return std::max(1, static_cast<int>(key.source().begin.line)); }

std::string type_name(const toml::node& node) {
    switch (node.type()) {
        case toml::node_type::string: return "a string";
        case toml::node_type::integer: return "an integer";
        case toml::node_type::floating_point: return "a number";
        case toml::node_type::boolean: return "a boolean";
        case toml::node_type::table: return "a table";
        case toml::node_type::array: return "an array";
        case toml::node_type::date:
        case toml::node_type::time:
        case toml::node_type::date_time: return "a date or time";
        default: return "an unknown value";
    }
}

std::size_t edit_distance(std::string_view a, std::string_view b) {
    std::vector<std::size_t> row(b.size() + 1);
    for (std::size_t j = 0; j <= b.size(); ++j) row[j] = j;
    for (std::size_t i = 1; i <= a.size(); ++i) {
        std::size_t diagonal = row[0];
        row[0] = i;
        for (std::size_t j = 1; j <= b.size(); ++j) {
            const std::size_t above = row[j];
            row[j] = std::min({row[j] + 1, row[j - 1] + 1, diagonal + (a[i - 1] == b[j - 1] ? 0 : 1)});
            diagonal = above;
        }
    }
    return row[b.size()];
}

std::string join(const std::vector<std::string_view>& names) {
    std::string out;
    for (const auto& name : names) out += (out.empty() ? "" : ", ") + std::string(name);
    return out;
}

// State shared by every table of one file: where it is, and which vertical convention it uses.
struct FileContext {
    std::string origin;
    fs::path folder;
    // Every key that chose depth or z, checked for mixing once the whole file is read, so that
    // the message blames the later key in the file whatever order the tables are parsed in.
    struct VerticalKey {
        std::string style, key;
        int line = 0;
    };
    std::vector<VerticalKey> vertical_keys;
};

[[noreturn]] void fail_at(const InputLocation& where, const std::string& reason) { throw ModelInputError(reason, where); }

// One TOML table of the model file together with its dotted path ("index", "index.layer[1]").
class Section {
public:
    Section(const toml::table& table, std::string path, FileContext& context)
        : table_(&table), path_(std::move(path)), context_(&context) {}

    const toml::table& table() const { return *table_; }
    const std::string& path() const { return path_; }
    FileContext& context() const { return *context_; }
    std::string key_path(std::string_view key) const {
        return path_.empty() ? std::string(key) : path_ + "." + std::string(key);
    }
    int line() const { return line_of(*table_); }
    const toml::node* get(std::string_view key) const { return table_->get(key); }
    bool has(std::string_view key) const { return get(key) != nullptr; }

    InputLocation where(std::string_view key) const {
        const toml::node* node = get(key);
        return {context_->origin, node ? line_of(*node) : line(), key_path(key)};
    }
    [[noreturn]] void fail(std::string_view key, const std::string& reason) const { fail_at(where(key), reason); }
    [[noreturn]] void fail_node(const toml::node& node, const std::string& key, const std::string& reason) const {
        fail_at({context_->origin, line_of(node), key}, reason);
    }

    // Rejects any key not in `allowed`. `context` reads like "in [index] with kind = \"table\"";
    // `elsewhere` lists keys that belong to other variants of this table, for a sharper message.
    void allow_only(const std::vector<std::string_view>& allowed, const std::string& context,
                    const std::vector<std::string_view>& elsewhere = {}) const {
        const toml::key* worst = nullptr;
        for (auto&& [key, value] : *table_) {
            if (std::find(allowed.begin(), allowed.end(), key.str()) != allowed.end()) continue;
            if (worst == nullptr || line_of(key) < line_of(*worst)) worst = &key;
        }
        if (worst == nullptr) return;
        const std::string_view name = worst->str();
        const InputLocation at{context_->origin, line_of(*worst), key_path(name)};
        if (std::find(elsewhere.begin(), elsewhere.end(), name) != elsewhere.end())
            fail_at(at, fmt::format("not used {}; the keys there are: {}", context, join(allowed)));
        std::string_view closest;
        std::size_t best = 3;  // suggest only close misspellings
        for (const auto& candidate : allowed) {
            const std::size_t d = edit_distance(name, candidate);
            if (d < best) best = d, closest = candidate;
        }
        const std::string hint = closest.empty() ? "" : fmt::format(" (did you mean '{}'?)", closest);
        fail_at(at, fmt::format("unknown key{} {}; the keys there are: {}", hint, context, join(allowed)));
    }

    double number_of(const toml::node& node, const std::string& key) const {
        if (const auto* f = node.as_floating_point()) {
            const double v = f->get();
            if (!std::isfinite(v)) fail_node(node, key, fmt::format("must be a finite number (got {})", v));
            return v;
        }
        if (const auto* i = node.as_integer()) return static_cast<double>(i->get());
        fail_node(node, key, "must be a number, but is " + type_name(node));
    }

    double number(std::string_view key, const std::string& what) const {
        const toml::node* node = get(key);
        if (node == nullptr) fail(key, fmt::format("missing: give {}", what));
        return number_of(*node, key_path(key));
    }
    std::optional<double> optional_number(std::string_view key) const {
        const toml::node* node = get(key);
        if (node == nullptr) return std::nullopt;
        return number_of(*node, key_path(key));
    }
    std::optional<std::string> optional_text(std::string_view key) const {
        const toml::node* node = get(key);
        if (node == nullptr) return std::nullopt;
        if (const auto* s = node->as_string()) return s->get();
        fail_node(*node, key_path(key), "must be a string in quotes, but is " + type_name(*node));
    }
    std::string text(std::string_view key, const std::string& what) const {
        if (auto value = optional_text(key)) return *value;
        fail(key, fmt::format("missing: give {}", what));
    }
    std::optional<Section> optional_table(std::string_view key) const {
        const toml::node* node = get(key);
        if (node == nullptr) return std::nullopt;
        if (const auto* t = node->as_table()) return Section(*t, key_path(key), *context_);
        fail_node(*node, key_path(key),
                  fmt::format("must be a table (a [{}] section), but is {}", key_path(key), type_name(*node)));
    }

    struct Located {
        double value;
        InputLocation where;
    };
    std::vector<Located> numbers(std::string_view key) const {
        const toml::node* node = get(key);
        if (node == nullptr) fail(key, "missing: give an array of numbers");
        const auto* array = node->as_array();
        if (array == nullptr) fail_node(*node, key_path(key), "must be an array of numbers, but is " + type_name(*node));
        std::vector<Located> out;
        for (std::size_t i = 0; i < array->size(); ++i) {
            const toml::node& element = *array->get(i);
            const std::string element_key = fmt::format("{}[{}]", key_path(key), i);
            out.push_back({number_of(element, element_key), {context_->origin, line_of(element), element_key}});
        }
        return out;
    }

    // Exactly one of two alternative keys (e.g. depth_m or z_m); returns the one given.
    std::string_view one_of(std::string_view first, std::string_view second, const std::string& what) const {
        if (has(first) && has(second))
            fail(second, fmt::format("give {} or {}, not both", key_path(first), key_path(second)));
        if (has(first)) return first;
        if (has(second)) return second;
        fail(first, fmt::format("missing: give {}", what));
    }

    // Records that `key` uses the depth or the z convention (see check_vertical_convention).
    void note_vertical(std::string_view key, std::string_view style) const {
        const InputLocation at = where(key);
        context_->vertical_keys.push_back({std::string(style), at.key, at.line});
    }

    // Re-raises an error from a profile constructor (whose key is relative to this section, e.g.
    // "layer[1].n_deep") at the line of that key in the file, or of the nearest enclosing table.
    [[noreturn]] void relocate(const ModelInputError& e, std::string fallback_key = "") const {
        std::string key = e.where().key.empty() ? fallback_key : e.where().key;
        std::string probe = key;
        while (!probe.empty()) {
            if (const toml::node* node = toml::at_path(*table_, probe).node())
                fail_at({context_->origin, line_of(*node), key_path(key)}, e.reason());
            const auto cut = probe.find_last_of(".[");
            probe = cut == std::string::npos ? "" : probe.substr(0, cut);
        }
        fail_at({context_->origin, line(), key.empty() ? path_ : key_path(key)}, e.reason());
    }

private:
    const toml::table* table_;
    std::string path_;
    FileContext* context_;
};

// ----------------------------------------------------------------------------------------------
// Tables of (depth, value) points, inline in the file or in a CSV file beside it.

struct TablePoint {
    double depth = 0.0;
    double value = 0.0;
    InputLocation depth_at, value_at;
};

struct PointTable {
    std::vector<TablePoint> points;
    std::size_t value_kind = 0;  // which of the value alternatives was given
    InputLocation where;         // the `file` key or the depth array, for whole-table problems
    std::string description;     // "the table in 'x.csv'" or "the inline table"
};

struct ValueAlternative {
    std::string_view inline_key;  // array in the model file
    std::string_view column_key;  // names a CSV column
    std::string_view meaning;     // for messages, e.g. "the index n"
};

PointTable read_point_table(const Section& s, const std::vector<ValueAlternative>& values) {
    PointTable table;
    const toml::node* file = s.get("file");
    std::vector<std::string_view> inline_keys{"depth_m", "z_m"}, column_keys{"depth_column", "z_column"};
    for (const auto& v : values) {
        inline_keys.push_back(v.inline_key);
        column_keys.push_back(v.column_key);
    }
    std::string value_inline_names, value_column_names;
    for (const auto& v : values) {
        value_inline_names += (value_inline_names.empty() ? "" : " or ") + std::string(v.inline_key) + " (" +
                              std::string(v.meaning) + ")";
        value_column_names += (value_column_names.empty() ? "" : " or ") + std::string(v.column_key);
    }

    if (file != nullptr) {
        for (const auto& key : inline_keys)
            if (s.has(key))
                s.fail(key, "give the table either in a file (file = \"...\") or as inline arrays, not both");
        const std::string name = s.text("file", "the table file");
        const std::string_view depth_key =
            s.one_of("depth_column", "z_column",
                     "depth_column = \"...\" (depth in m, positive down) or z_column = \"...\" (z in m, up positive)");
        s.note_vertical(depth_key, depth_key == "depth_column" ? "depth" : "z");
        std::optional<std::size_t> chosen;
        for (std::size_t k = 0; k < values.size(); ++k) {
            if (!s.has(values[k].column_key)) continue;
            if (chosen) s.fail(values[k].column_key, fmt::format("give one of {}, not several", value_column_names));
            chosen = k;
        }
        if (!chosen) s.fail(values.front().column_key, fmt::format("missing: give {}", value_column_names));
        table.value_kind = *chosen;
        const std::string depth_column = s.text(depth_key, "a column name");
        const std::string value_column = s.text(values[*chosen].column_key, "a column name");

        fs::path path(name);
        if (path.is_relative()) path = s.context().folder / path;
        table.where = s.where("file");
        const std::string shown = path.lexically_normal().string();
        table.description = fmt::format("the table in '{}'", shown);
        std::error_code ec;
        if (!fs::is_regular_file(path, ec))
            fail_at(table.where, fmt::format("the table file '{}' does not exist (looked for '{}', relative to the "
                                             "model file)",
                                             name, shown));
        const CsvTable csv = read_csv(shown, CsvErrorKind::model);
        const std::size_t depth_index = csv.column(depth_column), value_index = csv.column(value_column);
        const bool is_z = depth_key == "z_column";
        for (const CsvRow& row : csv.rows) {
            TablePoint point;
            point.depth = csv.number(row, depth_index);
            if (is_z) point.depth = -point.depth;
            point.value = csv.number(row, value_index);
            point.depth_at = {csv.path, row.line, depth_column};
            point.value_at = {csv.path, row.line, value_column};
            table.points.push_back(point);
        }
    } else {
        for (const auto& key : column_keys)
            if (s.has(key)) s.fail(key, fmt::format("'{}' names a CSV column and only goes with file = \"...\"", key));
        bool any_inline = false;
        for (const auto& key : inline_keys) any_inline = any_inline || s.has(key);
        if (!any_inline)
            s.fail("file", fmt::format("missing: give the table as file = \"....csv\" (with depth_column or z_column "
                                       "and {}), or inline as depth_m = [...] (or z_m) and {}",
                                       value_column_names, value_inline_names));
        const std::string_view depth_key = s.one_of("depth_m", "z_m", "depth_m = [...] or z_m = [...]");
        s.note_vertical(depth_key, depth_key == "depth_m" ? "depth" : "z");
        std::optional<std::size_t> chosen;
        for (std::size_t k = 0; k < values.size(); ++k) {
            if (!s.has(values[k].inline_key)) continue;
            if (chosen) s.fail(values[k].inline_key, fmt::format("give one of {}, not several", value_inline_names));
            chosen = k;
        }
        if (!chosen) s.fail(values.front().inline_key, fmt::format("missing: give {}", value_inline_names));
        table.value_kind = *chosen;
        const auto depths = s.numbers(depth_key);
        const auto entries = s.numbers(values[*chosen].inline_key);
        if (depths.size() != entries.size())
            s.fail(values[*chosen].inline_key, fmt::format("has {} values but {} has {}", entries.size(),
                                                           s.key_path(depth_key), depths.size()));
        table.where = s.where(depth_key);
        table.description = "the inline table";
        for (std::size_t i = 0; i < depths.size(); ++i) {
            TablePoint point;
            point.depth = depth_key == "z_m" ? -depths[i].value : depths[i].value;
            point.value = entries[i].value;
            point.depth_at = depths[i].where;
            point.value_at = entries[i].where;
            table.points.push_back(point);
        }
    }

    // In the ice, and strictly monotone (either way round; stored from the surface down).
    const bool z_style = s.context().vertical_keys.back().style == "z";
    for (const auto& p : table.points)
        if (p.depth < 0.0)
            fail_at(p.depth_at, z_style ? fmt::format("z = {} m is above the surface (the ice is z <= 0)", -p.depth)
                                        : fmt::format("depth {} m is negative (depths are positive down)", p.depth));
    auto& pts = table.points;
    if (pts.size() >= 2) {
        const bool downward = pts[1].depth > pts[0].depth;
        for (std::size_t i = 1; i < pts.size(); ++i) {
            const bool ok = downward ? pts[i].depth > pts[i - 1].depth : pts[i].depth < pts[i - 1].depth;
            if (!ok) {
                auto shown = [&](double depth) { return z_style ? fmt::format("z = {} m", -depth) : fmt::format("depth {} m", depth); };
                fail_at(pts[i].depth_at,
                        fmt::format("{} after {} (line {}): the points must run strictly monotone ({} throughout)",
                                    shown(pts[i].depth), shown(pts[i - 1].depth), pts[i - 1].depth_at.line,
                                    downward ? "deeper" : "shallower"));
            }
        }
        if (!downward) std::reverse(pts.begin(), pts.end());
    }
    return table;
}

// ----------------------------------------------------------------------------------------------

const std::vector<std::string_view> index_kinds{"constant", "exponential", "layered", "table"};
const std::vector<std::string_view> every_index_key{
    "kind",         "n",        "n_deep",         "n_surface", "scale_depth_m", "transition_m", "layer",
    "file",         "depth_m",  "z_m",            "density",   "depth_column",  "z_column",     "n_column",
    "density_column", "density_unit", "density_rule", "interpolation"};

std::shared_ptr<const IndexProfile> read_layered(const Section& s) {
    const double n_surface = s.number("n_surface", "n_surface, the index at the surface");
    const double transition = s.optional_number("transition_m").value_or(LayeredProfile::default_transition_m);
    const toml::node* node = s.get("layer");
    if (node == nullptr)
        s.fail("layer", "missing: give the layers as [[index.layer]] tables, from the surface down");
    const auto* array = node->as_array();
    if (array == nullptr || array->empty() || !array->is_array_of_tables())
        s.fail_node(*node, s.key_path("layer"),
                    "must be one or more [[index.layer]] tables (each with n_deep, scale_depth_m and, but for the "
                    "deepest, bottom_depth_m or bottom_z_m)");
    std::vector<ExponentialLayer> layers;
    double previous_depth = 0.0;
    for (std::size_t i = 0; i < array->size(); ++i) {
        const Section layer(*array->get(i)->as_table(), fmt::format("{}[{}]", s.key_path("layer"), i), s.context());
        layer.allow_only({"bottom_depth_m", "bottom_z_m", "n_deep", "scale_depth_m"}, "in an [[index.layer]] table");
        ExponentialLayer entry;
        entry.n_deep = layer.number("n_deep", "n_deep, the asymptote of this layer");
        entry.scale_depth_m = layer.number("scale_depth_m", "scale_depth_m, the e-folding depth of this layer (m)");
        const bool deepest = i + 1 == array->size();
        if (deepest) {
            for (std::string_view key : {"bottom_depth_m", "bottom_z_m"})
                if (layer.has(key))
                    layer.fail(key, "the deepest layer extends to any depth: remove its bottom (or add a layer below)");
        } else {
            const std::string_view key = layer.one_of(
                "bottom_depth_m", "bottom_z_m",
                "the layer's bottom as bottom_depth_m (positive down) or bottom_z_m (up positive); only the deepest "
                "layer has none");
            layer.note_vertical(key, key == "bottom_depth_m" ? "depth" : "z");
            const double value = layer.number(key, "the bottom");
            entry.bottom_depth_m = key == "bottom_z_m" ? -value : value;
            if (!(entry.bottom_depth_m > previous_depth))
                layer.fail(key, fmt::format("the bottom at {} {} m is not below the layer's top ({} {} m): bottoms must "
                                            "go deeper from the surface down",
                                            key == "bottom_z_m" ? "z =" : "depth", value,
                                            key == "bottom_z_m" ? "z =" : "depth",
                                            key == "bottom_z_m" ? -previous_depth : previous_depth));
            previous_depth = entry.bottom_depth_m;
        }
        layers.push_back(entry);
    }
    try {
        return std::make_shared<LayeredProfile>(n_surface, std::move(layers), transition);
    } catch (const ModelInputError& e) {
        s.relocate(e);
    }
}

std::shared_ptr<const IndexProfile> read_index_table(const Section& s) {
    PointTable table = read_point_table(
        s, {{"n", "n_column", "the index n"}, {"density", "density_column", "density, with density_unit and density_rule"}});
    const bool density = table.value_kind == 1;
    for (std::string_view key : {"density_unit", "density_rule"})
        if (!density && s.has(key)) s.fail(key, fmt::format("'{}' only goes with density values", key));
    if (table.points.size() < TableProfile::minimum_points)
        fail_at(table.where, fmt::format("{} has {} point{}; an index table needs at least {} for a smooth spline",
                                         table.description, table.points.size(), table.points.size() == 1 ? "" : "s",
                                         TableProfile::minimum_points));
    std::vector<double> depth, n;
    if (density) {
        const std::string unit_name = s.text("density_unit", "density_unit = \"kg/m3\" or \"g/cm3\"");
        const auto unit = density_unit_from_name(unit_name);
        if (!unit) s.fail("density_unit", fmt::format("\"{}\" is not a density unit here: use \"kg/m3\" or \"g/cm3\"", unit_name));
        const std::string rule_name =
            s.text("density_rule", "density_rule = \"kovacs\" (Kovacs et al. 1995) or \"looyenga\" (Looyenga 1965)");
        const auto rule = density_rule_from_name(rule_name);
        if (!rule) s.fail("density_rule", fmt::format("\"{}\" is not a density rule: use \"kovacs\" or \"looyenga\"", rule_name));
        for (const auto& p : table.points) {
            const double g_cm3 = to_g_cm3(p.value, *unit);
            if (g_cm3 < lowest_plausible_density_g_cm3 || g_cm3 > highest_plausible_density_g_cm3)
                fail_at(p.value_at, fmt::format("density {} {} is not a snow, firn or ice density (expected {} to {} {}); "
                                                "is density_unit right?",
                                                p.value, unit_name,
                                                *unit == DensityUnit::kg_m3 ? 1000 * lowest_plausible_density_g_cm3
                                                                            : lowest_plausible_density_g_cm3,
                                                *unit == DensityUnit::kg_m3 ? 1000 * highest_plausible_density_g_cm3
                                                                            : highest_plausible_density_g_cm3,
                                                unit_name));
            depth.push_back(p.depth);
            n.push_back(index_from_density(g_cm3, *rule));
        }
    } else {
        for (const auto& p : table.points) {
            if (p.value < 1.0)
                fail_at(p.value_at, fmt::format("n = {} is below 1 (no medium is faster than vacuum)", p.value));
            depth.push_back(p.depth);
            n.push_back(p.value);
        }
    }
    TableInterpolation interpolation = TableInterpolation::monotone;
    if (s.has("interpolation")) {
        const std::string name = s.text("interpolation", "interpolation = \"monotone\" or \"spline\"");
        if (name == "spline") interpolation = TableInterpolation::spline;
        else if (name != "monotone")
            s.fail("interpolation", fmt::format("\"{}\" is not a table interpolation: use \"monotone\" (Fritsch-Carlson, "
                                                "the default) or \"spline\" (C² cubic spline)", name));
    }
    try {
        return std::make_shared<TableProfile>(std::move(depth), std::move(n), interpolation);
    } catch (const ModelInputError& e) {
        fail_at(table.where, fmt::format("{}: {}", table.description, e.reason()));
    }
}

std::shared_ptr<const IndexProfile> read_index(const Section& s) {
    const toml::node* kind_node = s.get("kind");
    if (kind_node == nullptr)
        s.fail("kind", fmt::format("missing: give kind = one of {}", join(index_kinds)));
    const std::string kind = s.text("kind", "the kind");
    const std::string context = fmt::format("in [index] with kind = \"{}\"", kind);
    try {
        if (kind == "constant") {
            s.allow_only({"kind", "n"}, context, every_index_key);
            return std::make_shared<ConstantProfile>(s.number("n", "n, the index of the whole ice"));
        }
        if (kind == "exponential") {
            s.allow_only({"kind", "n_deep", "n_surface", "scale_depth_m"}, context, every_index_key);
            const double n_deep = s.number("n_deep", "n_deep, the index of deep ice");
            const double n_surface = s.number("n_surface", "n_surface, the index at the surface");
            const double scale = s.number("scale_depth_m", "scale_depth_m, the e-folding depth (m)");
            return std::make_shared<ExponentialProfile>(n_deep, n_surface, scale);
        }
        if (kind == "layered") {
            s.allow_only({"kind", "n_surface", "transition_m", "layer"}, context, every_index_key);
            return read_layered(s);
        }
        if (kind == "table") {
            s.allow_only({"kind", "file", "depth_column", "z_column", "n_column", "density_column", "depth_m", "z_m",
                          "n", "density", "density_unit", "density_rule", "interpolation"},
                         context, every_index_key);
            return read_index_table(s);
        }
    } catch (const ModelInputError& e) {
        if (e.where().line > 0) throw;  // already located in the file
        s.relocate(e);
    }
    s.fail("kind", fmt::format("kind = \"{}\" is not a profile kind: use one of {}", kind, join(index_kinds)));
}

std::shared_ptr<const AttenuationProfile> read_attenuation(const Section& s) {
    if (!s.has("kind")) s.fail("kind", "missing: give kind = \"constant\" (with length_m) or \"table\"");
    const std::string kind = s.text("kind", "the kind");
    const std::string context = fmt::format("in [attenuation] with kind = \"{}\"", kind);
    const std::vector<std::string_view> every{"kind", "length_m", "file", "depth_m", "z_m", "depth_column", "z_column", "length_column"};
    if (kind == "constant") {
        s.allow_only({"kind", "length_m"}, context, every);
        const double length = s.number("length_m", "length_m, the field attenuation length (m)");
        if (length <= 0.0) s.fail("length_m", fmt::format("must be a positive length in metres (got {})", length));
        return std::make_shared<ConstantAttenuation>(length);
    }
    if (kind == "table") {
        s.allow_only({"kind", "file", "depth_m", "z_m", "length_m", "depth_column", "z_column", "length_column"}, context,
                     every);
        PointTable table = read_point_table(s, {{"length_m", "length_column", "the attenuation length in m"}});
        if (table.points.size() < TableAttenuation::minimum_points)
            fail_at(table.where, fmt::format("{} has {} point; an attenuation table needs at least {}",
                                             table.description, table.points.size(), TableAttenuation::minimum_points));
        std::vector<double> depth, length;
        for (const auto& p : table.points) {
            if (p.value <= 0.0)
                fail_at(p.value_at, fmt::format("attenuation length {} m must be positive", p.value));
            depth.push_back(p.depth);
            length.push_back(p.value);
        }
        try {
            return std::make_shared<TableAttenuation>(std::move(depth), std::move(length));
        } catch (const ModelInputError& e) {
            fail_at(table.where, fmt::format("{}: {}", table.description, e.reason()));
        }
    }
    s.fail("kind", fmt::format("kind = \"{}\" is not an attenuation kind: use \"constant\" or \"table\"", kind));
}

Bottom read_bottom(const Section& s) {
    s.allow_only({"depth_m", "z_m", "power_reflectivity"}, "in [bottom]");
    const std::string_view key = s.one_of("depth_m", "z_m", "depth_m (positive down) or z_m (up positive) of the bottom");
    s.note_vertical(key, key == "depth_m" ? "depth" : "z");
    const double value = s.number(key, "the bottom's position");
    Bottom bottom;
    bottom.z_m = key == "z_m" ? value : -value;
    if (!(bottom.z_m < 0.0))
        s.fail(key, key == "z_m" ? fmt::format("z_m = {} is not below the surface (the ice is z < 0)", value)
                                 : fmt::format("depth_m = {} is not below the surface (depths are positive)", value));
    bottom.power_reflectivity =
        s.number("power_reflectivity", "power_reflectivity, the fraction of power reflected (0 to 1)");
    if (bottom.power_reflectivity < 0.0 || bottom.power_reflectivity > 1.0)
        s.fail("power_reflectivity",
               fmt::format("must lie between 0 and 1 (got {}); it is |r|^2, a fraction of power", bottom.power_reflectivity));
    return bottom;
}

// A model file gives vertical positions as depth (positive down) or as z (up positive), never both.
void check_vertical_convention(const FileContext& context) {
    auto keys = context.vertical_keys;
    std::stable_sort(keys.begin(), keys.end(), [](const auto& a, const auto& b) { return a.line < b.line; });
    for (const auto& k : keys)
        if (k.style != keys.front().style)
            fail_at({context.origin, k.line, k.key},
                    fmt::format("this file already gives vertical positions as {} ('{}', line {}); a file uses "
                                "either depth (m, positive down) or z (m, up positive), never both",
                                keys.front().style, keys.front().key, keys.front().line));
}

// ----------------------------------------------------------------------------------------------

std::string toml_string(std::string_view text) {
    std::string out = "\"";
    for (const char ch : text) {
        switch (ch) {
            case '"': out += "\\\""; break;
            case '\\': out += "\\\\"; break;
            case '\n': out += "\\n"; break;
            case '\t': out += "\\t"; break;
            case '\r': out += "\\r"; break;
            default:
                if (static_cast<unsigned char>(ch) < 0x20 || ch == 0x7f)
                    out += fmt::format("\\u{:04x}", static_cast<int>(static_cast<unsigned char>(ch)));
                else
                    out += ch;
        }
    }
    return out + "\"";
}

// Shortest text that reads back to the same double, written as a TOML float.
std::string toml_number(double value) {
    if (!std::isfinite(value)) throw std::invalid_argument("model files hold finite numbers only");
    std::string text = fmt::format("{}", value);
    if (text.find_first_of(".eE") == std::string::npos) text += ".0";
    return text;
}

std::string toml_array(const std::vector<double>& values) {
    std::string out = "[";
    for (std::size_t i = 0; i < values.size(); ++i) {
        if (i % 8 == 0) out += "\n    ";
        out += toml_number(values[i]);
        if (i + 1 < values.size()) out += ", ";
    }
    return out + ",\n]";
}

}  // namespace

FirnModel parse_model(const std::string& toml_text, const std::string& origin) {
    toml::table root;
    try {
        root = toml::parse(std::string_view(toml_text), std::string_view(origin));
    } catch (const toml::parse_error& e) {
        throw ModelInputError(fmt::format("TOML syntax error at column {}: {}", e.source().begin.column, e.description()),
                              {origin, std::max(1, static_cast<int>(e.source().begin.line)), ""});
    }
    FileContext context;
    context.origin = origin;
    context.folder = fs::path(origin).parent_path();
    const Section top(root, "", context);
    top.allow_only({"name", "index", "air", "attenuation", "bottom"}, "at the top level");

    FirnModel model;
    model.origin = origin;
    model.name = top.optional_text("name").value_or(fs::path(origin).stem().string());
    if (model.name.empty()) top.fail("name", "must not be empty");

    const auto index = top.optional_table("index");
    if (!index) top.fail("index", "missing: the file needs an [index] table with the index profile");
    model.index = read_index(*index);

    if (const auto air = top.optional_table("air")) {
        air->allow_only({"n"}, "in [air]");
        model.n_air = air->number("n", "n, the index of the air (usually 1.0)");
        if (model.n_air < 1.0) air->fail("n", fmt::format("n = {} is below 1 (no medium is faster than vacuum)", model.n_air));
    }
    if (const auto attenuation = top.optional_table("attenuation")) model.attenuation = read_attenuation(*attenuation);
    if (const auto bottom = top.optional_table("bottom")) model.bottom = read_bottom(*bottom);
    check_vertical_convention(context);
    return model;
}

FirnModel load_model_file(const std::string& path) {
    std::error_code ec;
    if (fs::is_directory(path, ec)) throw ModelInputError("is a folder, not a model file", {path, 0, ""});
    std::ifstream in(path, std::ios::binary);
    if (!in) throw ModelInputError("cannot open the model file (is the path right?)", {path, 0, ""});
    std::ostringstream text;
    text << in.rdbuf();
    return parse_model(text.str(), path);
}

std::string_view default_model_toml() { return built_in_model_text; }

FirnModel default_model() {
    FirnModel model = parse_model(std::string(built_in_model_text), "built-in");
    model.origin = "built-in";
    return model;
}

std::string model_to_toml(const FirnModel& model, const std::string& comment) {
    std::string out;
    if (!comment.empty()) {
        std::istringstream lines(comment);
        for (std::string line; std::getline(lines, line);) out += line.empty() ? "#\n" : "# " + line + "\n";
    }
    out += "name = " + toml_string(model.name) + "\n\n[index]\n";
    const IndexProfile& profile = *model.index;
    if (const auto* p = dynamic_cast<const ConstantProfile*>(&profile)) {
        out += "kind = \"constant\"\nn = " + toml_number(p->value()) + "\n";
    } else if (const auto* p = dynamic_cast<const ExponentialProfile*>(&profile)) {
        out += "kind = \"exponential\"\n";
        out += "n_deep = " + toml_number(p->n_deep()) + "\n";
        out += "n_surface = " + toml_number(p->n_surface()) + "\n";
        out += "scale_depth_m = " + toml_number(p->scale_depth_m()) + "\n";
    } else if (const auto* p = dynamic_cast<const LayeredProfile*>(&profile)) {
        out += "kind = \"layered\"\n";
        out += "n_surface = " + toml_number(p->n_surface()) + "\n";
        out += "transition_m = " + toml_number(p->transition_m()) + "\n";
        for (const auto& layer : p->layers()) {
            out += "\n[[index.layer]]\n";
            if (std::isfinite(layer.bottom_depth_m)) out += "bottom_depth_m = " + toml_number(layer.bottom_depth_m) + "\n";
            out += "n_deep = " + toml_number(layer.n_deep) + "\n";
            out += "scale_depth_m = " + toml_number(layer.scale_depth_m) + "\n";
        }
    } else if (const auto* p = dynamic_cast<const TableProfile*>(&profile)) {
        out += "kind = \"table\"\n";
        out += "depth_m = " + toml_array(p->depth_m()) + "\n";
        out += "n = " + toml_array(p->n_values()) + "\n";
    } else {
        throw std::invalid_argument("model files cannot express a profile of kind '" + profile.kind() + "'");
    }
    out += "\n[air]\nn = " + toml_number(model.n_air) + "\n";
    if (model.attenuation) {
        out += "\n[attenuation]\n";
        if (const auto* a = dynamic_cast<const ConstantAttenuation*>(model.attenuation.get())) {
            out += "kind = \"constant\"\nlength_m = " + toml_number(a->length()) + "\n";
        } else if (const auto* a = dynamic_cast<const TableAttenuation*>(model.attenuation.get())) {
            out += "kind = \"table\"\n";
            out += "depth_m = " + toml_array(a->depth_m()) + "\n";
            out += "length_m = " + toml_array(a->lengths_m()) + "\n";
        } else {
            throw std::invalid_argument("model files cannot express this attenuation profile");
        }
    }
    if (model.bottom) {
        out += "\n[bottom]\n";
        out += "depth_m = " + toml_number(-model.bottom->z_m) + "\n";
        out += "power_reflectivity = " + toml_number(model.bottom->power_reflectivity) + "\n";
    }
    return out;
}

}  // namespace firnray
