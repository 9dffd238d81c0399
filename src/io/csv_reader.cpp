#include "io/csv_reader.hpp"

#include <charconv>
#include <cmath>
#include <fstream>
#include <set>
#include <sstream>

#include <fmt/format.h>

#include "core/errors.hpp"
#include "core/text.hpp"

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
bool split_line(std::string_view line, std::vector<std::string>& fields, std::vector<int>& columns,
                std::string& problem) {
    fields.clear();
    columns.clear();
    std::size_t i = 0;
    while (true) {
        while (i < line.size() && (line[i] == ' ' || line[i] == '\t')) ++i;
        columns.push_back(static_cast<int>(i) + 1);
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

// Takes the first row that is not blank or a comment as the header of `table`; throws for an
// unreadable header or empty or repeated names.
void take_header(CsvTable& table, CsvRow& row, bool split_ok) {
    const CsvErrorKind kind = table.error_kind;
    if (!split_ok) raise(kind, "the header line cannot be read: " + row.problem, {table.path, row.line, ""});
    table.header_line = row.line;
    std::set<std::string> seen;
    for (std::size_t c = 0; c < row.fields.size(); ++c) {
        const std::string& name = row.fields[c];
        if (name.empty()) raise(kind, fmt::format("column {} of the header has no name", c + 1), {table.path, row.line, ""});
        if (!seen.insert(name).second)
            raise(kind, fmt::format("the header names column '{}' twice", printable_excerpt(name)),
                  {table.path, row.line, name});
    }
    table.columns = std::move(row.fields);
}

[[noreturn]] void raise_no_header(const CsvTable& table) {
    raise(table.error_kind, "no header line (the first line that is not blank or a # comment must name the columns)",
          {table.path, 0, ""});
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
        const bool split_ok = split_line(line, row.fields, row.field_columns, row.problem);
        if (table.header_line == 0) {
            take_header(table, row, split_ok);
            continue;
        }
        table.rows.push_back(std::move(row));
    }
    if (table.header_line == 0) raise_no_header(table);
    return table;
}

CsvStreamReader::CsvStreamReader(const std::string& path, CsvErrorKind kind) {
    header_.path = path;
    header_.error_kind = kind;
    in_.open(path, std::ios::binary);
    if (!in_) raise(kind, "cannot open the file (is the path right?)", {path, 0, ""});
    in_.seekg(0, std::ios::end);
    const auto size = in_.tellg();
    file_bytes_ = size > 0 ? static_cast<std::size_t>(size) : 0;
    in_.seekg(0, std::ios::beg);
    if (!in_) in_.clear();  // a pipe or a device: no size, read from where it stands
    std::string line;
    bool too_long = false;
    CsvRow row;
    if (!next_line(line, row.line, too_long)) raise_no_header(header_);
    if (too_long) raise(kind, "the header line is longer than 1 MiB", {path, row.line, ""});
    const bool split_ok = split_line(line, row.fields, row.field_columns, row.problem);
    take_header(header_, row, split_ok);
}

bool CsvStreamReader::next_line(std::string& line, int& line_number, bool& too_long) {
    std::streambuf& source = *in_.rdbuf();
    while (true) {
        line.clear();
        too_long = false;
        int c = source.sbumpc();
        if (c == std::char_traits<char>::eof()) return false;
        for (; c != std::char_traits<char>::eof() && c != '\n'; c = source.sbumpc()) {
            ++bytes_read_;
            if (line.size() < most_line_bytes) line.push_back(static_cast<char>(c));
            else too_long = true;
        }
        if (c == '\n') ++bytes_read_;
        ++line_number_;
        line_number = line_number_;
        if (line_number_ == 1 && line.compare(0, 3, "\xEF\xBB\xBF") == 0) line.erase(0, 3);  // UTF-8 byte-order mark
        if (!line.empty() && line.back() == '\r') line.pop_back();
        if (!too_long && is_skipped(line)) continue;
        return true;
    }
}

bool CsvStreamReader::read_rows(std::vector<CsvRow>& rows, std::size_t max_rows) {
    rows.clear();
    std::string line;
    bool too_long = false;
    while (rows.size() < max_rows) {
        CsvRow row;
        if (!next_line(line, row.line, too_long)) break;
        if (too_long) row.problem = fmt::format("the line is longer than {} bytes", most_line_bytes);
        else split_line(line, row.fields, row.field_columns, row.problem);
        rows.push_back(std::move(row));
    }
    if (in_.bad()) raise(header_.error_kind, "reading the file failed", {header_.path, line_number_, ""});
    return !rows.empty();
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
    for (const auto& c : columns) available += (available.empty() ? "'" : ", '") + printable_excerpt(c) + "'";
    fail(header_line, name, fmt::format("no column named '{}' in the header (columns: {}){}", name, available,
                                        did_you_mean(name, columns)));
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
    fail(row, columns[c], fmt::format("'{}' is not a finite number", printable_excerpt(field)));
}

void CsvTable::fail(const CsvRow& row, std::string_view column_name, const std::string& reason) const {
    fail(row.line, column_name, reason);
}

void CsvTable::fail(int line, std::string_view column_name, const std::string& reason) const {
    raise(error_kind, reason, {path, line, std::string(column_name)});
}

}  // namespace firnray
