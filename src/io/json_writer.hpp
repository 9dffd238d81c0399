// A small streaming JSON writer for firnray's outputs (we only write JSON, never read it), and
// the one JSON string escaper. JSON has no NaN or infinity: a non-finite number is refused with a
// NumericalError that names the field ("paths[2].time_ns"); a value that is legitimately absent
// is written as null on purpose (null(), or an empty std::optional).
#pragma once

#include <complex>
#include <cstddef>
#include <optional>
#include <ostream>
#include <string>
#include <string_view>
#include <vector>

namespace firnray {

class JsonWriter {
public:
    // Writes into a string, read with str().
    explicit JsonWriter(bool pretty = true) : pretty_(pretty) {}
    // Writes to `sink` in pieces as the text grows (so a large document need not be held whole);
    // flush() sends what is left. str() then holds only the part not yet sent.
    explicit JsonWriter(std::ostream& sink, bool pretty = true) : sink_(&sink), pretty_(pretty) {}

    JsonWriter& begin_object();
    JsonWriter& end_object();
    JsonWriter& begin_array();
    JsonWriter& end_array();
    JsonWriter& key(std::string_view name);

    JsonWriter& value(double v);  // NumericalError when not finite
    JsonWriter& value(int v);
    JsonWriter& value(long v);
    JsonWriter& value(unsigned long v);
    JsonWriter& value(bool v);
    JsonWriter& value(std::string_view v);
    JsonWriter& value(const char* v) { return value(std::string_view(v)); }
    JsonWriter& value(std::optional<double> v);  // null when empty
    JsonWriter& value(std::complex<double> v);   // as [re, im]
    JsonWriter& value(std::optional<std::complex<double>> v);  // [null, null] when empty
    JsonWriter& null();

    template <class T>
    JsonWriter& field(std::string_view name, const T& v) {
        key(name);
        return value(v);
    }

    const std::string& str() const { return out_; }
    // Sends the text written so far to the sink (no-op without one).
    void flush();

    // Where the next value goes, as a path from the document's root: "rays[0].launch.x_m".
    std::string current_field() const;

private:
    struct Level {
        bool array = false;
        bool empty = true;       // no element written yet
        std::size_t count = 0;   // elements written (arrays: the index of the next one)
        std::string key;         // objects: the last key
    };
    void before_value();
    void newline();
    void maybe_flush();
    std::string out_;
    std::vector<Level> levels_;
    bool after_key_ = false;
    std::ostream* sink_ = nullptr;
    bool pretty_;
};

// The text as a quoted JSON string: " and \ escaped, control characters as \n, \t, \r or
// \u00XX; every other byte (UTF-8 included) kept as it is.
std::string json_escape(std::string_view text);
// The same, appended to out.
void append_json_string(std::string& out, std::string_view text);

}  // namespace firnray
