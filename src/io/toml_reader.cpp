#include "io/toml_reader.hpp"

#include <algorithm>
#include <cmath>
#include <filesystem>
#include <fstream>

#include <fmt/format.h>
#include <toml++/toml.h>

#include "core/text.hpp"

namespace firnray {

struct TomlData {
    std::string origin;
    toml::table root;
};

namespace {

// The largest TOML file read: far beyond any model or station file, small enough for any machine.
constexpr std::size_t largest_file_bytes = std::size_t(64) << 20;

// The longest excerpt of file text (a value, a key, a parser message) that a message repeats.
constexpr std::size_t excerpt_chars = 60;

int line_of(const toml::node& node) { return std::max(1, static_cast<int>(node.source().begin.line)); }
int line_of(const toml::key& key) { return std::max(1, static_cast<int>(key.source().begin.line)); }

const toml::table& table_of(const void* table) { return *static_cast<const toml::table*>(table); }

std::string type_name(const toml::node& node) {
    switch (node.type()) {
        case toml::node_type::string: return "a string";
        case toml::node_type::integer: return "an integer";
        case toml::node_type::floating_point: return "a number";
        case toml::node_type::boolean: return "a boolean";
        case toml::node_type::table: return "a table";
        case toml::node_type::array: return node.as_array()->empty() ? "an empty array" : "an array";
        case toml::node_type::date:
        case toml::node_type::time:
        case toml::node_type::date_time: return "a date or time";
        default: return "an unknown value";
    }
}

std::string with_unit(double value, std::string_view unit) {
    return unit.empty() ? number_for_message(value) : number_for_message(value) + " " + std::string(unit);
}

std::vector<std::string> quoted(const std::vector<std::string>& names) {
    std::vector<std::string> out;
    for (const auto& name : names) out.push_back("\"" + name + "\"");
    return out;
}

[[noreturn]] void fail_at(InputLocation where, const std::string& reason) {
    throw ModelInputError(reason, std::move(where));
}

// A finite number from a node; `key` is the dotted path for the message.
double number_of(const toml::node& node, const std::string& origin, const std::string& key) {
    if (const auto* f = node.as_floating_point()) {
        const double v = f->get();
        if (!std::isfinite(v))
            fail_at({origin, line_of(node), key}, fmt::format("must be a finite number (got {})", v));
        return v;
    }
    if (const auto* i = node.as_integer()) return static_cast<double>(i->get());
    fail_at({origin, line_of(node), key}, "must be a number, but is " + type_name(node));
}

}  // namespace

std::string join_names(const std::vector<std::string>& names, std::string_view separator) {
    std::string out;
    for (std::size_t i = 0; i < names.size(); ++i) out += (i == 0 ? "" : std::string(separator)) + names[i];
    return out;
}

// ----------------------------------------------------------------------------------------------

TomlDocument TomlDocument::parse(std::string_view text, const std::string& origin) {
    auto data = std::make_shared<TomlData>();
    data->origin = origin;
    try {
        data->root = toml::parse(text, std::string_view(origin));
    } catch (const toml::parse_error& e) {
        // The parser's description may quote the offending bytes: show them printable.
        throw ModelInputError(fmt::format("TOML syntax error at column {}: {}", e.source().begin.column,
                                          printable_excerpt(e.description(), 200)),
                              {origin, std::max(1, static_cast<int>(e.source().begin.line)), ""});
    }
    TomlDocument document;
    document.data_ = std::move(data);
    return document;
}

TomlDocument TomlDocument::read(const std::string& path, std::string_view what) {
    std::error_code ec;
    if (std::filesystem::is_directory(path, ec)) throw ModelInputError(fmt::format("is a folder, not a {}", what), {path, 0, ""});
    std::ifstream in(path, std::ios::binary);
    if (!in) throw ModelInputError(fmt::format("cannot open the {} (is the path right?)", what), {path, 0, ""});
    // Read in blocks up to a limit, so that a device or an endless pipe named by mistake is
    // refused instead of filling the memory.
    std::string text;
    std::vector<char> block(1 << 16);
    while (in.read(block.data(), static_cast<std::streamsize>(block.size())) || in.gcount() > 0) {
        text.append(block.data(), static_cast<std::size_t>(in.gcount()));
        if (text.size() > largest_file_bytes)
            throw ModelInputError(fmt::format("is larger than {} MB; a {} is a few kilobytes of text (long tables "
                                              "belong in a CSV file beside it)",
                                              largest_file_bytes >> 20, what),
                                  {path, 0, ""});
    }
    if (in.bad()) throw ModelInputError(fmt::format("reading the {} failed", what), {path, 0, ""});
    return parse(text, path);
}

TomlTable TomlDocument::root() const { return TomlTable(data_, &data_->root, ""); }

const std::string& TomlDocument::origin() const { return data_->origin; }

// ----------------------------------------------------------------------------------------------

const std::string& TomlTable::origin() const { return data_->origin; }

std::string TomlTable::key_path(std::string_view key) const {
    return path_.empty() ? std::string(key) : path_ + "." + std::string(key);
}

int TomlTable::line() const { return line_of(table_of(table_)); }

bool TomlTable::has(std::string_view key) const { return table_of(table_).get(key) != nullptr; }

bool TomlTable::holds_array(std::string_view key) const {
    const toml::node* node = table_of(table_).get(key);
    return node != nullptr && node->is_array();
}

InputLocation TomlTable::where(std::string_view key) const {
    const toml::node* node = table_of(table_).get(key);
    return {origin(), node ? line_of(*node) : line(), key_path(key)};
}

InputLocation TomlTable::locate(std::string_view relative_path) const {
    std::string probe(relative_path);
    while (!probe.empty()) {
        if (const toml::node* node = toml::at_path(table_of(table_), probe).node())
            return {origin(), line_of(*node), key_path(relative_path)};
        const auto cut = probe.find_last_of(".[");
        probe = cut == std::string::npos ? "" : probe.substr(0, cut);
    }
    return {origin(), line(), relative_path.empty() ? path_ : key_path(relative_path)};
}

void TomlTable::fail(std::string_view key, const std::string& reason) const { fail_at(where(key), reason); }

void TomlTable::allow_only(const std::vector<std::string>& allowed, const std::string& context,
                           const std::vector<std::string>& elsewhere) const {
    const toml::key* first = nullptr;
    for (auto&& [key, value] : table_of(table_)) {
        if (std::find(allowed.begin(), allowed.end(), key.str()) != allowed.end()) continue;
        if (first == nullptr || line_of(key) < line_of(*first)) first = &key;
    }
    if (first == nullptr) return;
    const std::string_view name = first->str();
    // A quoted key may hold any bytes: the message shows a printable excerpt.
    const InputLocation at{origin(), line_of(*first), key_path(printable_excerpt(name, excerpt_chars))};
    if (std::find(elsewhere.begin(), elsewhere.end(), name) != elsewhere.end())
        fail_at(at, fmt::format("not used {}; the keys there are: {}", context, join_names(allowed)));
    fail_at(at, fmt::format("unknown key{} {}; the keys there are: {}", did_you_mean(name, allowed), context,
                            join_names(allowed)));
}

double TomlTable::number(std::string_view key, const std::string& what) const {
    const toml::node* node = table_of(table_).get(key);
    if (node == nullptr) fail(key, fmt::format("missing: give {}", what));
    return number_of(*node, origin(), key_path(key));
}

double TomlTable::number(std::string_view key, const std::string& what, const NumberRange& range) const {
    const double value = number(key, what);
    check_range(value, where(key), key, range);
    return value;
}

std::optional<double> TomlTable::optional_number(std::string_view key) const {
    const toml::node* node = table_of(table_).get(key);
    if (node == nullptr) return std::nullopt;
    return number_of(*node, origin(), key_path(key));
}

std::optional<double> TomlTable::optional_number(std::string_view key, const NumberRange& range) const {
    const auto value = optional_number(key);
    if (value) check_range(*value, where(key), key, range);
    return value;
}

std::vector<LocatedNumber> TomlTable::numbers(std::string_view key) const {
    const toml::node* node = table_of(table_).get(key);
    if (node == nullptr) fail(key, "missing: give an array of numbers");
    const auto* array = node->as_array();
    if (array == nullptr) fail(key, "must be an array of numbers, but is " + type_name(*node));
    std::vector<LocatedNumber> out;
    out.reserve(array->size());
    for (std::size_t i = 0; i < array->size(); ++i) {
        const toml::node& element = *array->get(i);
        const std::string element_key = fmt::format("{}[{}]", key_path(key), i);
        InputLocation at{origin(), line_of(element), element_key};
        at.column = std::max(0, static_cast<int>(element.source().begin.column));
        out.push_back({number_of(element, origin(), element_key), std::move(at)});
    }
    return out;
}

std::vector<std::vector<LocatedNumber>> TomlTable::number_rows(std::string_view key) const {
    const toml::node* node = table_of(table_).get(key);
    if (node == nullptr) fail(key, "missing: give an array of rows, each an array of numbers");
    const auto* array = node->as_array();
    if (array == nullptr) fail(key, "must be an array of rows (arrays of numbers), but is " + type_name(*node));
    std::vector<std::vector<LocatedNumber>> rows;
    rows.reserve(array->size());
    for (std::size_t r = 0; r < array->size(); ++r) {
        const toml::node& row_node = *array->get(r);
        const std::string row_key = fmt::format("{}[{}]", key_path(key), r);
        const auto* row = row_node.as_array();
        if (row == nullptr)
            throw ModelInputError(fmt::format("must be an array of numbers (one row), but is {}", type_name(row_node)),
                                  InputLocation{origin(), line_of(row_node), row_key});
        std::vector<LocatedNumber> out;
        out.reserve(row->size());
        for (std::size_t i = 0; i < row->size(); ++i) {
            const toml::node& element = *row->get(i);
            const std::string element_key = fmt::format("{}[{}]", row_key, i);
            InputLocation at{origin(), line_of(element), element_key};
            at.column = std::max(0, static_cast<int>(element.source().begin.column));
            out.push_back({number_of(element, origin(), element_key), std::move(at)});
        }
        rows.push_back(std::move(out));
    }
    return rows;
}

std::vector<LocatedText> TomlTable::texts(std::string_view key) const {
    const toml::node* node = table_of(table_).get(key);
    if (node == nullptr) fail(key, "missing: give an array of strings");
    const auto* array = node->as_array();
    if (array == nullptr) fail(key, "must be an array of strings, but is " + type_name(*node));
    std::vector<LocatedText> out;
    for (std::size_t i = 0; i < array->size(); ++i) {
        const toml::node& element = *array->get(i);
        const std::string element_key = fmt::format("{}[{}]", key_path(key), i);
        InputLocation at{origin(), line_of(element), element_key};
        at.column = std::max(0, static_cast<int>(element.source().begin.column));
        const auto* s = element.as_string();
        if (s == nullptr) throw ModelInputError("must be a string in quotes, but is " + type_name(element), at);
        out.push_back({s->get(), std::move(at)});
    }
    return out;
}

std::optional<std::string> TomlTable::optional_text(std::string_view key) const {
    const toml::node* node = table_of(table_).get(key);
    if (node == nullptr) return std::nullopt;
    if (const auto* s = node->as_string()) return s->get();
    fail(key, "must be a string in quotes, but is " + type_name(*node));
}

std::string TomlTable::text(std::string_view key, const std::string& what) const {
    if (auto value = optional_text(key)) return *value;
    fail(key, fmt::format("missing: give {}", what));
}

std::optional<std::string> TomlTable::optional_choice(std::string_view key, const std::vector<std::string>& names,
                                                      std::string_view noun, const std::string& hint) const {
    const auto value = optional_text(key);
    if (!value || std::find(names.begin(), names.end(), *value) != names.end()) return value;
    fail(key, fmt::format("\"{}\" is not {}{}: use {}", printable_excerpt(*value, excerpt_chars), noun,
                          did_you_mean(*value, names), hint.empty() ? join_names(quoted(names), " or ") : hint));
}

std::string TomlTable::choice(std::string_view key, const std::vector<std::string>& names, std::string_view noun,
                              const std::string& what, const std::string& hint) const {
    if (auto value = optional_choice(key, names, noun, hint)) return *value;
    fail(key, fmt::format("missing: give {}", what));
}

std::optional<bool> TomlTable::optional_flag(std::string_view key) const {
    const toml::node* node = table_of(table_).get(key);
    if (node == nullptr) return std::nullopt;
    if (const auto* b = node->as_boolean()) return b->get();
    fail(key, "must be true or false, but is " + type_name(*node));
}

std::optional<TomlTable> TomlTable::optional_table(std::string_view key) const {
    const toml::node* node = table_of(table_).get(key);
    if (node == nullptr) return std::nullopt;
    if (const auto* t = node->as_table()) return TomlTable(data_, t, key_path(key));
    fail(key, fmt::format("must be a table (a [{}] section), but is {}", key_path(key), type_name(*node)));
}

std::vector<TomlTable> TomlTable::tables(std::string_view key, const std::string& what) const {
    const toml::node* node = table_of(table_).get(key);
    if (node == nullptr) return {};
    const auto* array = node->as_array();
    if (array == nullptr || array->empty() || !array->is_array_of_tables())
        fail(key, fmt::format("must be {}, but is {}", what, type_name(*node)));
    std::vector<TomlTable> out;
    for (std::size_t i = 0; i < array->size(); ++i)
        out.push_back(TomlTable(data_, array->get(i)->as_table(), fmt::format("{}[{}]", key_path(key), i)));
    return out;
}

std::string_view TomlTable::one_of(std::string_view first, std::string_view second, const std::string& what) const {
    if (has(first) && has(second))
        fail(second, fmt::format("give {} or {}, not both", key_path(first), key_path(second)));
    if (has(first)) return first;
    if (has(second)) return second;
    fail(first, fmt::format("missing: give {}", what));
}

void TomlTable::check_range(double value, const InputLocation& where, std::string_view name, const NumberRange& range) {
    if (value >= range.low && value <= range.high) return;
    const bool too_low = value < range.low;
    std::string bounds;
    if (std::isinf(range.low)) bounds = "at most " + with_unit(range.high, range.unit);
    else if (std::isinf(range.high)) bounds = "at least " + with_unit(range.low, range.unit);
    else bounds = fmt::format("between {} and {}", number_for_message(range.low), with_unit(range.high, range.unit));
    fail_at(where, fmt::format("{} = {} is {} {}: {} must be {}{}", name, with_unit(value, range.unit),
                               too_low ? "below" : "above", with_unit(too_low ? range.low : range.high, range.unit),
                               range.what, bounds, range.why.empty() ? "" : fmt::format(" ({})", range.why)));
}

}  // namespace firnray
