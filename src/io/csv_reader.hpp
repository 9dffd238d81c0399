// Reading CSV inputs (measured profiles, batches of source/receiver pairs) with named columns.
// Reading never fails on a bad data row: rows are kept raw with their file line numbers, and the
// accessors throw for the one row they are asked about, so a batch can report it and go on.
#pragma once

#include <cstddef>
#include <fstream>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

namespace firnray {

// Which error type a table raises: DataInputError (exit 4) for data files, ModelInputError (exit 3)
// for tables that a model file refers to.
enum class CsvErrorKind { data, model };

struct CsvRow {
    int line = 0;                     // 1-based line in the file
    std::vector<std::string> fields;  // trimmed, quotes removed
    std::vector<int> field_columns;   // 1-based character column where each field starts (for messages)
    std::string problem;              // non-empty when the line could not be split (e.g. an open quote)
};

// The format: comma-separated; the first line that is neither blank nor a comment (first
// non-blank character '#') names the columns; blank and comment lines are skipped everywhere;
// spaces around fields are ignored; a field may be double-quoted ("a, b" and "" for a quote inside).
class CsvTable {
public:
    std::string path;                   // as given, for messages
    int header_line = 0;
    std::vector<std::string> columns;   // names from the header
    std::vector<CsvRow> rows;
    CsvErrorKind error_kind = CsvErrorKind::data;

    std::optional<std::size_t> find_column(std::string_view name) const;
    // Index of a column; throws (naming the file, the header line and the columns there are) if absent.
    std::size_t column(std::string_view name) const;

    // Throws unless the row has as many fields as the header and could be split.
    void check_row(const CsvRow& row) const;
    // A finite number; throws naming the file, the row's line and the column otherwise.
    double number(const CsvRow& row, std::size_t column) const;
    double number(const CsvRow& row, std::string_view column_name) const { return number(row, column(column_name)); }
    // The raw text of a field (checked as by check_row).
    const std::string& text(const CsvRow& row, std::size_t column) const;

    // Throws the table's error type located at the row's line and the named column (may be empty).
    [[noreturn]] void fail(const CsvRow& row, std::string_view column_name, const std::string& reason) const;
    [[noreturn]] void fail(int line, std::string_view column_name, const std::string& reason) const;
};

// Reads a whole file. Throws (the error type chosen by `kind`) only when the file cannot be read,
// has no header line, or its header has empty or repeated names.
CsvTable read_csv(const std::string& path, CsvErrorKind kind = CsvErrorKind::data);

// The same from text already in memory; `origin` names it in messages.
CsvTable parse_csv(std::string_view text, const std::string& origin, CsvErrorKind kind = CsvErrorKind::data);

// Reads a CSV file a block of rows at a time, so that memory stays bounded whatever the file
// size: the header is read on construction (same checks and errors as read_csv), then
// read_rows() hands out the data rows in order. A line longer than most_line_bytes becomes a row
// with a problem (its text is not kept).
class CsvStreamReader {
public:
    static constexpr std::size_t most_line_bytes = 1 << 20;

    explicit CsvStreamReader(const std::string& path, CsvErrorKind kind = CsvErrorKind::data);

    // The header (path, header line, columns, error kind) with no rows: use it to read the rows'
    // fields (CsvTable::number, text, fail).
    const CsvTable& table() const { return header_; }
    // Replaces `rows` with up to max_rows next data rows; returns false when none were left.
    bool read_rows(std::vector<CsvRow>& rows, std::size_t max_rows);
    // Bytes read so far and the file size (for progress).
    std::size_t bytes_read() const { return bytes_read_; }
    std::size_t file_bytes() const { return file_bytes_; }

private:
    // The next line that is not blank or a comment; false at the end of the file.
    bool next_line(std::string& line, int& line_number, bool& too_long);

    CsvTable header_;
    std::ifstream in_;
    int line_number_ = 0;
    std::size_t bytes_read_ = 0, file_bytes_ = 0;
};

// Parses a whole field as a finite number (surrounding spaces allowed); empty when it is not one.
std::optional<double> parse_number(std::string_view text);

}  // namespace firnray
