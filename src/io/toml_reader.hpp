// Strict reading of TOML input files (model files, station files): one place for the checks every
// such file gets (unknown, missing and mistyped keys, finite numbers in range, "did you mean" for
// misspelt keys and values) and for locating each problem at file:line:key.
#pragma once

#include <memory>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "core/errors.hpp"

namespace firnray {

// The interval a number must lie in, with what it means, for the message. A bound of
// ±infinity means "no bound on that side".
struct NumberRange {
    double low;
    double high;
    std::string_view unit;  // shown after the numbers ("m"; empty for none)
    std::string_view what;  // e.g. "an index", "a scale depth"
    std::string_view why;   // why these bounds (may be empty)
};

// A number read from a file together with where it was.
struct LocatedNumber {
    double value = 0.0;
    InputLocation where;
};

// A string read from a file together with where it was.
struct LocatedText {
    std::string value;
    InputLocation where;
};

class TomlTable;
struct TomlData;  // the parsed tree, defined where it is read (toml++ stays out of this header)

// A whole parsed file. Throws ModelInputError (at the file and line) for a TOML syntax error; the
// parser's description is shown as a printable excerpt, whatever bytes the file holds.
class TomlDocument {
public:
    // `origin` names the file in every message.
    static TomlDocument parse(std::string_view text, const std::string& origin);
    // Reads and parses a file; `what` names it in messages ("model file", "station file"). Files
    // over 64 MB (a device, an endless pipe) are refused.
    static TomlDocument read(const std::string& path, std::string_view what);

    TomlTable root() const;
    const std::string& origin() const;

private:
    std::shared_ptr<const TomlData> data_;
};

// One table of a document with its dotted path ("index", "index.layer[1]", "" for the top level).
// Every reader throws ModelInputError located at the file, the line of the key (or of the table
// when the key is missing) and the key's dotted path.
class TomlTable {
public:
    const std::string& path() const { return path_; }
    const std::string& origin() const;
    // The dotted path of a key of this table ("index.n_deep").
    std::string key_path(std::string_view key) const;
    int line() const;  // line of the table's header (1 for the top level)
    bool has(std::string_view key) const;
    bool holds_array(std::string_view key) const;  // the key is present and holds an array
    // Where a key is (its line when given, the table's line when not).
    InputLocation where(std::string_view key) const;
    // The location of a path relative to this table ("layer[1].n_deep"), at the line of the
    // deepest part of it that the file holds.
    InputLocation locate(std::string_view relative_path) const;
    [[noreturn]] void fail(std::string_view key, const std::string& reason) const;

    // Rejects the first key (in file order) not in `allowed`, suggesting the closest allowed key.
    // `context` reads like "in [index] with kind = \"table\""; a key listed in `elsewhere` (it
    // belongs to another variant of this table) gets "not used <context>" instead.
    void allow_only(const std::vector<std::string>& allowed, const std::string& context,
                    const std::vector<std::string>& elsewhere = {}) const;

    // A finite number (integers accepted). `what` completes "missing: give ..." when absent.
    double number(std::string_view key, const std::string& what) const;
    double number(std::string_view key, const std::string& what, const NumberRange& range) const;
    std::optional<double> optional_number(std::string_view key) const;
    std::optional<double> optional_number(std::string_view key, const NumberRange& range) const;
    // An array of finite numbers, each with its location ("index.depth_m[3]").
    std::vector<LocatedNumber> numbers(std::string_view key) const;

    // An array of arrays of finite numbers (a matrix written row by row), each number with its
    // location ("uncertainty.covariance[1][2]"). Rows may differ in length: the caller checks.
    std::vector<std::vector<LocatedNumber>> number_rows(std::string_view key) const;
    // An array of strings, each with its location ("uncertainty.parameters[0]").
    std::vector<LocatedText> texts(std::string_view key) const;

    std::string text(std::string_view key, const std::string& what) const;
    std::optional<std::string> optional_text(std::string_view key) const;
    // A string that must be one of `names`; a misspelling gets "did you mean". `noun` reads like
    // "a profile kind"; `hint` follows "use" in the message (default: the names, quoted).
    std::string choice(std::string_view key, const std::vector<std::string>& names, std::string_view noun,
                       const std::string& what, const std::string& hint = "") const;
    std::optional<std::string> optional_choice(std::string_view key, const std::vector<std::string>& names,
                                               std::string_view noun, const std::string& hint = "") const;
    std::optional<bool> optional_flag(std::string_view key) const;

    std::optional<TomlTable> optional_table(std::string_view key) const;
    // An array of tables ([[key]]); empty when the key is absent. `what` describes the tables
    // for the message when the key holds something else.
    std::vector<TomlTable> tables(std::string_view key, const std::string& what) const;

    // Exactly one of two alternative keys (e.g. depth_m or z_m); returns the one given.
    std::string_view one_of(std::string_view first, std::string_view second, const std::string& what) const;

    // Checks a number read elsewhere (a CSV cell, an array element) against a range.
    static void check_range(double value, const InputLocation& where, std::string_view name, const NumberRange& range);

private:
    friend class TomlDocument;
    TomlTable(std::shared_ptr<const TomlData> data, const void* table, std::string path)
        : data_(std::move(data)), table_(table), path_(std::move(path)) {}

    std::shared_ptr<const TomlData> data_;  // keeps the tree alive
    const void* table_ = nullptr;           // the toml::table inside it (opaque here on purpose)
    std::string path_;
};

// "a, b, c" (for lists of keys in messages).
std::string join_names(const std::vector<std::string>& names, std::string_view separator = ", ");

}  // namespace firnray
