// Writing TOML text (model files) that the strict reader of io/toml_reader.hpp reads back to the
// same values: strings escaped once, here, and numbers written as the shortest text that reads
// back to the same double.
#pragma once

#include <string>
#include <string_view>
#include <vector>

namespace firnray {

// A TOML basic string, quoted, with quotes, backslashes and control characters escaped.
std::string toml_string(std::string_view text);

// The shortest text that reads back to the same double, always a TOML float ("37.0", "1e-05").
// Throws OutputError for NaN or infinity, which TOML files of firnray never hold.
std::string toml_number(double value);

// Builds a file key by key and table by table, in the order of the calls.
class TomlWriter {
public:
    // Each line of `text` as a "# " comment line ("#" alone for an empty line).
    TomlWriter& comment(std::string_view text);
    // A blank line, then "[name]".
    TomlWriter& table(std::string_view name);
    // A blank line, then "[[name]]" (one more table of an array of tables).
    TomlWriter& array_table(std::string_view name);
    TomlWriter& value(std::string_view key, double number);
    TomlWriter& value(std::string_view key, std::string_view text);
    TomlWriter& value(std::string_view key, const char* text) { return value(key, std::string_view(text)); }
    // An array of numbers over several lines, eight to a line, with a trailing comma.
    TomlWriter& value(std::string_view key, const std::vector<double>& numbers);
    // An array of strings on one line.
    TomlWriter& value(std::string_view key, const std::vector<std::string>& texts);
    // A matrix as an array of rows, one row per line.
    TomlWriter& value(std::string_view key, const std::vector<std::vector<double>>& rows);

    const std::string& text() const { return text_; }

private:
    std::string text_;
};

}  // namespace firnray
