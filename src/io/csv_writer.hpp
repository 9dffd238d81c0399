// Writing CSV: the one field escaper every CSV output uses (RFC 4180 quoting), and the check that
// keeps NaN and infinity out of every output file. A number that is not finite is a numerical
// failure, reported with the name of the field; a value that is legitimately absent is written
// as an empty field (CSV) or null (JSON) by the writer that knows it is absent.
#pragma once

#include <string>
#include <string_view>

namespace firnray {

// True when a field must be quoted: it holds a comma, a double quote, a carriage return or a
// line feed.
inline bool csv_needs_quotes(std::string_view text) {
    return text.find_first_of(",\"\r\n") != std::string_view::npos;
}

// Appends one field to `out` (a std::string or an fmt::memory_buffer): as it is when it needs no
// quotes, else between double quotes with every double quote doubled. Every other byte (line
// breaks, non-ASCII, control characters) is kept as it is, as RFC 4180 allows inside quotes.
template <class Buffer>
void append_csv_field(Buffer& out, std::string_view text) {
    if (!csv_needs_quotes(text)) {
        out.append(text.data(), text.data() + text.size());
        return;
    }
    out.push_back('"');
    std::size_t start = 0;
    for (std::size_t quote = text.find('"'); quote != std::string_view::npos; quote = text.find('"', start)) {
        out.append(text.data() + start, text.data() + quote + 1);
        out.push_back('"');
        start = quote + 1;
    }
    out.append(text.data() + start, text.data() + text.size());
    out.push_back('"');
}

// The field as append_csv_field writes it.
std::string csv_field(std::string_view text);

// The value itself when it is finite; otherwise throws NumericalError naming the field
// ("time_ns is NaN", "amplitude_per_m is infinite"). Every number an output writes passes here.
double require_finite(double value, std::string_view field);

}  // namespace firnray
