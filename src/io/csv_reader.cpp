#include "io/csv_reader.hpp"

#include <charconv>
#include <cmath>
#include <fstream>
#include <set>
#include <sstream>

#include <fmt/format.h>

#include "core/errors.hpp"

namespace firnray {

namespace {

std::string_view trim(std::string_view text) {
    const auto first = text.find_first_not_of(" \t");
    if (first == std::string_view::npos) return {};
    const auto last = text.find_last_not_of(" \t");
    return text.substr(first, last - first + 1);
}

[[noreturn]] void raise(CsvErrorKind kind, const std::string& reason, InputLocation where) {
    if (kind == CsvErrorKind::model) throw ModelInputError(reason, std::move(where));
    throw DataInputError(reason, std::move(where));
}

// Splits one line into fields. Returns false (with a reason) for an unterminated quote or text
// after a closing quote.
bool split_line(std::string_view line, std::vector<std::string>& fields, std::string& problem) {
    fields.clear();
    std::size_t i = 0;
    while (true) {
        while (i < line.size() && (line[i] == ' ' || line[i] == '\t')) ++i;
        std::string field;
        if (i < line.size() && line[i] == '"') {
            ++i;
            bool closed = false;
            while (i < line.size()) {
                if (line[i] == '"') {
                    if (i + 1 < line.size() && line[i + 1] == '"') {
                        field += '"';
                        i += 2;
                        continue;
                    }
                    ++i;
                    closed = true;
                    break;
                }
                field += line[i++];
            }
            if (!closed) {
                problem = fmt::format("field {} opens a quote that is not closed on this line", fields.size() + 1);
                return false;
            }
            while (i < line.size() && (line[i] == ' ' || line[i] == '\t')) ++i;
            if (i < line.size() && line[i] != ',') {
                problem = fmt::format("field {} has text after its closing quote", fields.size() + 1);
                return false;
            }
        } else {
            const std::size_t end = std::min(line.find(',', i), line.size());
            field = std::string(trim(line.substr(i, end - i)));
            i = end;
        }
        fields.push_back(std::move(field));
        if (i >= line.size()) return true;
        ++i;  // the comma
    }
}

bool is_skipped(std::string_view line) {
    const std::string_view content = trim(line);
    return content.empty() || content.front() == '#';
}

}  // namespace

std::optional<double> parse_number(std::string_view text) {
    text = trim(text);
    if (!text.empty() && text.front() == '+') text.remove_prefix(1);
    if (text.empty()) return std::nullopt;
    double value = 0.0;
    const auto [end, ec] = std::from_chars(text.data(), text.data() + text.size(), value);
    if (ec != std::errc() || end != text.data() + text.size() || !std::isfinite(value)) return std::nullopt;
    return value;
}

CsvTable parse_csv(std::string_view text, const std::string& origin, CsvErrorKind kind) {
    CsvTable table;
    table.path = origin;
    table.error_kind = kind;
    if (text.size() >= 3 && text.substr(0, 3) == "\xEF\xBB\xBF") text.remove_prefix(3);  // UTF-8 byte-order mark

    int line_number = 0;
    std::size_t start = 0;
    while (start < text.size()) {
        std::size_t end = text.find('\n', start);
        if (end == std::string_view::npos) end = text.size();
        std::string_view line = text.substr(start, end - start);
        start = end + 1;
        ++line_number;
        if (!line.empty() && line.back() == '\r') line.remove_suffix(1);
        if (is_skipped(line)) continue;

        CsvRow row;
        row.line = line_number;
        if (!split_line(line, row.fields, row.problem) && table.header_line == 0)
            raise(kind, "the header line cannot be read: " + row.problem, {origin, line_number, ""});
        if (table.header_line == 0) {
            table.header_line = line_number;
            std::set<std::string> seen;
            for (std::size_t c = 0; c < row.fields.size(); ++c) {
                const std::string& name = row.fields[c];
                if (name.empty())
                    raise(kind, fmt::format("column {} of the header has no name", c + 1), {origin, line_number, ""});
                if (!seen.insert(name).second)
                    raise(kind, fmt::format("the header names column '{}' twice", name), {origin, line_number, name});
            }
            table.columns = std::move(row.fields);
            continue;
        }
        table.rows.push_back(std::move(row));
    }
    if (table.header_line == 0)
        raise(kind, "no header line (the first line that is not blank or a # comment must name the columns)",
              {origin, 0, ""});
    return table;
}

CsvTable read_csv(const std::string& path, CsvErrorKind kind) {
    std::ifstream in(path, std::ios::binary);
    if (!in) raise(kind, "cannot open the file (is the path right?)", {path, 0, ""});
    std::ostringstream content;
    content << in.rdbuf();
    if (in.bad()) raise(kind, "reading the file failed", {path, 0, ""});
    return parse_csv(content.str(), path, kind);
}

std::optional<std::size_t> CsvTable::find_column(std::string_view name) const {
    for (std::size_t c = 0; c < columns.size(); ++c)
        if (columns[c] == name) return c;
    return std::nullopt;
}

std::size_t CsvTable::column(std::string_view name) const {
    if (const auto c = find_column(name)) return *c;
    std::string available;
    for (const auto& c : columns) available += (available.empty() ? "'" : ", '") + c + "'";
    fail(header_line, name, fmt::format("no column named '{}' in the header (columns: {})", name, available));
}

void CsvTable::check_row(const CsvRow& row) const {
    if (!row.problem.empty()) fail(row, "", row.problem);
    if (row.fields.size() != columns.size())
        fail(row, "", fmt::format("the row has {} field{} but the header names {} column{}", row.fields.size(),
                                  row.fields.size() == 1 ? "" : "s", columns.size(), columns.size() == 1 ? "" : "s"));
}

const std::string& CsvTable::text(const CsvRow& row, std::size_t c) const {
    check_row(row);
    return row.fields.at(c);
}

double CsvTable::number(const CsvRow& row, std::size_t c) const {
    const std::string& field = text(row, c);
    if (const auto value = parse_number(field)) return *value;
    if (field.empty()) fail(row, columns[c], "the field is empty; a number is needed");
    fail(row, columns[c], fmt::format("'{}' is not a finite number", field));
}

void CsvTable::fail(const CsvRow& row, std::string_view column_name, const std::string& reason) const {
    fail(row.line, column_name, reason);
}

void CsvTable::fail(int line, std::string_view column_name, const std::string& reason) const {
    raise(error_kind, reason, {path, line, std::string(column_name)});
}

}  // namespace firnray
