// What a model file's tables share: the file's context (its folder, for table files beside it,
// and its vertical convention) and the reading of (depth, value) point tables, given inline or in
// a CSV file, checked and located so that every problem names the file that holds it.
#pragma once

#include <cstddef>
#include <filesystem>
#include <string>
#include <string_view>
#include <vector>

#include "core/errors.hpp"
#include "io/toml_reader.hpp"
#include "model/firn_model.hpp"

namespace firnray {

// State shared by every table of one model file.
class ModelFileContext {
public:
    explicit ModelFileContext(std::string origin);

    const std::string& origin() const { return origin_; }
    const std::filesystem::path& folder() const { return folder_; }

    // Records that `key` of `table` gives a vertical position as "depth" or as "z".
    void note_vertical(const TomlTable& table, std::string_view key, std::string_view style);
    // "depth" or "z", as the key noted last chose.
    const std::string& last_vertical_style() const { return vertical_keys_.back().style; }
    // A file gives positions as depth or as z, never both. Checked once the whole file is read so
    // that the message blames the later key in the file, whatever order the tables are read in.
    void check_vertical_convention() const;

    // Warnings found while reading the file's tables (model/firn_model.hpp), in file order.
    std::vector<ModelWarning> warnings;

private:
    struct VerticalKey {
        std::string style, key;
        int line = 0;
    };
    std::string origin_;
    std::filesystem::path folder_;
    std::vector<VerticalKey> vertical_keys_;
};

struct TablePoint {
    double depth = 0.0;
    double value = 0.0;
    InputLocation depth_at, value_at;
};

// Points from the surface down, depths strictly increasing, in range and apart by at least
// model_limits::smallest_point_spacing_m.
struct PointTable {
    std::vector<TablePoint> points;
    std::size_t value_kind = 0;  // which of the value alternatives was given
    InputLocation where;         // for whole-table problems: the inline depth array, or the CSV file
    std::string description;     // "the table in 'x.csv'" or "the inline table"
    bool from_csv = false;
    int last_line = 0;           // the CSV's last data row (its header line when it has none)
    std::string named_at;        // for a CSV: "key 'index.file' of 'site.toml'", the model's reference

    // Refuses a table with fewer than `minimum` points, blaming the file that holds it.
    void require_points(std::size_t minimum, std::string_view what_table) const;
    [[noreturn]] void fail(const std::string& reason) const;
};

// One way of giving the values of a table.
struct ValueAlternative {
    std::string_view inline_key;  // array in the model file
    std::string_view column_key;  // names a CSV column
    std::string_view meaning;     // for messages, e.g. "the index n"
};

// Reads the table of `table` (file = "..." with column names, or inline arrays).
PointTable read_point_table(const TomlTable& table, ModelFileContext& context,
                            const std::vector<ValueAlternative>& values);

// The keys a point table may use with these value alternatives (for allow_only).
std::vector<std::string> point_table_keys(const std::vector<ValueAlternative>& values);

}  // namespace firnray
