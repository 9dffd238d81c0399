#include "model/point_table.hpp"

#include <algorithm>
#include <cmath>
#include <optional>

#include <fmt/format.h>

#include "core/text.hpp"
#include "io/csv_reader.hpp"
#include "model/model_limits.hpp"

namespace firnray {

namespace fs = std::filesystem;

ModelFileContext::ModelFileContext(std::string origin)
    : origin_(std::move(origin)), folder_(fs::path(origin_).parent_path()) {}

void ModelFileContext::note_vertical(const TomlTable& table, std::string_view key, std::string_view style) {
    const InputLocation at = table.where(key);
    vertical_keys_.push_back({std::string(style), at.key, at.line});
}

void ModelFileContext::check_vertical_convention() const {
    auto keys = vertical_keys_;
    std::stable_sort(keys.begin(), keys.end(), [](const auto& a, const auto& b) { return a.line < b.line; });
    for (const auto& k : keys)
        if (k.style != keys.front().style)
            throw ModelInputError(
                fmt::format("this file already gives vertical positions as {} ('{}', line {}); a file uses "
                            "either depth (m, positive down) or z (m, up positive), never both",
                            keys.front().style, keys.front().key, keys.front().line),
                {origin_, k.line, k.key});
}

void PointTable::fail(const std::string& reason) const { throw ModelInputError(reason, where); }

void PointTable::require_points(std::size_t minimum, std::string_view what_table) const {
    if (points.size() >= minimum) return;
    if (from_csv) {
        // The CSV file is what is short: name it, at its last line with data.
        const std::string rows = points.empty() ? "has a header but no data rows"
                                                : fmt::format("has {} data row{}", points.size(),
                                                              points.size() == 1 ? "" : "s");
        throw ModelInputError(fmt::format("the table {}; {} needs at least {} points (it is named by {})", rows,
                                          what_table, minimum, named_at),
                              {where.file, last_line, where.key});
    }
    fail(fmt::format("{} has {} point{}; {} needs at least {}", description, points.size(),
                     points.size() == 1 ? "" : "s", what_table, minimum));
}

std::vector<std::string> point_table_keys(const std::vector<ValueAlternative>& values) {
    std::vector<std::string> keys{"file", "depth_m", "z_m", "depth_column", "z_column"};
    for (const auto& v : values) {
        keys.emplace_back(v.inline_key);
        keys.emplace_back(v.column_key);
    }
    return keys;
}

namespace {

// Which of the value alternatives the table gives (by inline key or by column key); exactly one.
std::size_t chosen_value(const TomlTable& t, const std::vector<ValueAlternative>& values, bool columns) {
    std::string names;
    for (const auto& v : values) {
        const std::string name = columns ? std::string(v.column_key)
                                         : fmt::format("{} ({})", v.inline_key, v.meaning);
        names += (names.empty() ? "" : " or ") + name;
    }
    std::optional<std::size_t> chosen;
    for (std::size_t k = 0; k < values.size(); ++k) {
        const std::string_view key = columns ? values[k].column_key : values[k].inline_key;
        if (!t.has(key)) continue;
        if (chosen) t.fail(key, fmt::format("give one of {}, not several", names));
        chosen = k;
    }
    if (!chosen) t.fail(columns ? values.front().column_key : values.front().inline_key, fmt::format("missing: give {}", names));
    return *chosen;
}

// Where a cell of a table file is: file, line, column name and the character column of the field,
// so that an editor can jump to the very number.
InputLocation cell_location(const CsvTable& csv, const CsvRow& row, std::size_t column_index) {
    InputLocation at{csv.path, row.line, csv.columns[column_index]};
    if (column_index < row.field_columns.size()) at.column = row.field_columns[column_index];
    return at;
}

// The cell's number; a cell that is not one is refused at its file, line and column.
double cell_number(const CsvTable& csv, const CsvRow& row, std::size_t column_index, const InputLocation& at) {
    try {
        return csv.number(row, column_index);
    } catch (const ModelInputError& e) {
        if (e.where().line != row.line || e.where().key != at.key) throw;  // a row-wide problem (field count)
        throw ModelInputError(e.reason(), at);
    }
}

void read_csv_points(const TomlTable& t, ModelFileContext& context, const std::vector<ValueAlternative>& values,
                     PointTable& table) {
    for (const std::string_view key : {"depth_m", "z_m"})
        if (t.has(key)) t.fail(key, "give the table either in a file (file = \"...\") or as inline arrays, not both");
    for (const auto& v : values)
        if (t.has(v.inline_key))
            t.fail(v.inline_key, "give the table either in a file (file = \"...\") or as inline arrays, not both");
    const std::string name = t.text("file", "the table file");
    const std::string_view depth_key =
        t.one_of("depth_column", "z_column",
                 "depth_column = \"...\" (depth in m, positive down) or z_column = \"...\" (z in m, up positive)");
    context.note_vertical(t, depth_key, depth_key == "depth_column" ? "depth" : "z");
    table.value_kind = chosen_value(t, values, true);
    const std::string depth_column = t.text(depth_key, "a column name");
    const std::string value_column = t.text(values[table.value_kind].column_key, "a column name");

    fs::path path(name);
    if (path.is_relative()) path = context.folder() / path;
    const std::string shown = path.lexically_normal().string();
    std::error_code ec;
    if (!fs::is_regular_file(path, ec))
        t.fail("file", fmt::format("the table file '{}' does not exist (looked for '{}', relative to the model file)",
                                   printable_excerpt(name, 200), printable_excerpt(shown, 200)));
    const CsvTable csv = read_csv(shown, CsvErrorKind::model);
    const std::size_t depth_index = csv.column(depth_column), value_index = csv.column(value_column);
    const bool is_z = depth_key == "z_column";
    table.from_csv = true;
    table.where = {csv.path, csv.header_line, value_column};
    table.description = fmt::format("the table in '{}'", shown);
    table.last_line = csv.header_line;
    const InputLocation file_key = t.where("file");
    table.named_at = fmt::format("key '{}' of '{}'", file_key.key, file_key.file);
    for (const CsvRow& row : csv.rows) {
        TablePoint point;
        point.depth_at = cell_location(csv, row, depth_index);
        point.value_at = cell_location(csv, row, value_index);
        point.depth = cell_number(csv, row, depth_index, point.depth_at);
        if (is_z) point.depth = -point.depth;
        point.value = cell_number(csv, row, value_index, point.value_at);
        table.points.push_back(point);
        table.last_line = row.line;
    }
}

void read_inline_points(const TomlTable& t, ModelFileContext& context, const std::vector<ValueAlternative>& values,
                        PointTable& table) {
    for (const std::string_view key : {"depth_column", "z_column"})
        if (t.has(key)) t.fail(key, fmt::format("'{}' names a CSV column and only goes with file = \"...\"", key));
    for (const auto& v : values)
        if (t.has(v.column_key))
            t.fail(v.column_key, fmt::format("'{}' names a CSV column and only goes with file = \"...\"", v.column_key));
    bool any_inline = t.has("depth_m") || t.has("z_m");
    std::string inline_names, column_names;
    for (const auto& v : values) {
        any_inline = any_inline || t.has(v.inline_key);
        inline_names += (inline_names.empty() ? "" : " or ") + fmt::format("{} ({})", v.inline_key, v.meaning);
        column_names += (column_names.empty() ? "" : " or ") + std::string(v.column_key);
    }
    if (!any_inline)
        t.fail("file", fmt::format("missing: give the table as file = \"....csv\" (with depth_column or z_column "
                                   "and {}), or inline as depth_m = [...] (or z_m) and {}",
                                   column_names, inline_names));
    const std::string_view depth_key = t.one_of("depth_m", "z_m", "depth_m = [...] or z_m = [...]");
    context.note_vertical(t, depth_key, depth_key == "depth_m" ? "depth" : "z");
    table.value_kind = chosen_value(t, values, false);
    const std::string_view value_key = values[table.value_kind].inline_key;
    const auto depths = t.numbers(depth_key);
    const auto entries = t.numbers(value_key);
    if (depths.size() != entries.size())
        t.fail(value_key, fmt::format("has {} values but {} has {}", entries.size(), t.key_path(depth_key), depths.size()));
    table.where = t.where(depth_key);
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

// In the ice and within reach, strictly monotone (either way round) with resolvable spacing;
// stored from the surface down.
void check_depths(PointTable& table, bool z_style) {
    auto shown = [&](double depth) {
        return z_style ? fmt::format("z = {} m", number_for_message(-depth))
                       : fmt::format("depth {} m", number_for_message(depth));
    };
    for (const auto& p : table.points) {
        if (p.depth < 0.0)
            throw ModelInputError(z_style ? fmt::format("z = {} m is above the surface (the ice is z <= 0)", -p.depth)
                                          : fmt::format("depth {} m is negative (depths are positive down)", p.depth),
                                  p.depth_at);
        if (z_style) TomlTable::check_range(-p.depth, p.depth_at, "z", model_limits::height);
        else TomlTable::check_range(p.depth, p.depth_at, "depth", model_limits::depth);
    }
    auto& pts = table.points;
    if (pts.size() < 2) return;
    const bool downward = pts[1].depth > pts[0].depth;
    for (std::size_t i = 1; i < pts.size(); ++i) {
        const bool ok = downward ? pts[i].depth > pts[i - 1].depth : pts[i].depth < pts[i - 1].depth;
        if (!ok)
            throw ModelInputError(
                fmt::format("{} after {} (line {}): the points must run strictly monotone ({} throughout)",
                            shown(pts[i].depth), shown(pts[i - 1].depth), pts[i - 1].depth_at.line,
                            downward ? "deeper" : "shallower"),
                pts[i].depth_at);
        const double gap = std::abs(pts[i].depth - pts[i - 1].depth);
        // The slack lets points written exactly 1 mm apart (5.001, 5.002) pass despite rounding.
        if (gap < model_limits::smallest_point_spacing_m * (1.0 - 1e-6))
            throw ModelInputError(
                fmt::format("{} is only {} m from {} (line {}): points closer than {} m are not resolved by any "
                            "log; merge them",
                            shown(pts[i].depth), number_for_message(gap), shown(pts[i - 1].depth),
                            pts[i - 1].depth_at.line, model_limits::smallest_point_spacing_m),
                pts[i].depth_at);
    }
    if (!downward) std::reverse(pts.begin(), pts.end());
}

}  // namespace

PointTable read_point_table(const TomlTable& t, ModelFileContext& context, const std::vector<ValueAlternative>& values) {
    PointTable table;
    if (t.has("file")) read_csv_points(t, context, values, table);
    else read_inline_points(t, context, values, table);
    check_depths(table, context.last_vertical_style() == "z");
    return table;
}

}  // namespace firnray
