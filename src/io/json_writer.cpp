#include "io/json_writer.hpp"

#include <algorithm>
#include <cmath>

#include <fmt/compile.h>
#include <fmt/format.h>

namespace firnray {

namespace {

// Appends the quoted, escaped text (no temporary string: batches write many keys).
void append_escaped(std::string& out, std::string_view text) {
    out += '"';
    const bool plain = std::none_of(text.begin(), text.end(), [](char ch) {
        return ch == '"' || ch == '\\' || static_cast<unsigned char>(ch) < 0x20;
    });
    if (plain) {
        out += text;
        out += '"';
        return;
    }
    for (const char ch : text) {
        switch (ch) {
            case '"': out += "\\\""; break;
            case '\\': out += "\\\\"; break;
            case '\n': out += "\\n"; break;
            case '\t': out += "\\t"; break;
            case '\r': out += "\\r"; break;
            default:
                if (static_cast<unsigned char>(ch) < 0x20)
                    out += fmt::format("\\u{:04x}", static_cast<int>(ch));
                else
                    out += ch;
        }
    }
    out += '"';
}

}  // namespace

std::string json_escape(std::string_view text) {
    std::string out;
    out.reserve(text.size() + 2);
    append_escaped(out, text);
    return out;
}

void JsonWriter::newline() {
    if (!pretty_) return;
    out_ += '\n';
    out_.append(2 * first_.size(), ' ');
}

void JsonWriter::before_value() {
    if (after_key_) {
        after_key_ = false;
        return;
    }
    if (!first_.empty()) {
        if (!first_.back()) out_ += ',';
        first_.back() = false;
        newline();
    }
}

JsonWriter& JsonWriter::begin_object() {
    before_value();
    out_ += '{';
    first_.push_back(true);
    return *this;
}
JsonWriter& JsonWriter::end_object() {
    const bool empty = first_.back();
    first_.pop_back();
    if (!empty) newline();
    out_ += '}';
    return *this;
}
JsonWriter& JsonWriter::begin_array() {
    before_value();
    out_ += '[';
    first_.push_back(true);
    return *this;
}
JsonWriter& JsonWriter::end_array() {
    const bool empty = first_.back();
    first_.pop_back();
    if (!empty) newline();
    out_ += ']';
    return *this;
}
JsonWriter& JsonWriter::key(std::string_view name) {
    before_value();
    append_escaped(out_, name);
    out_ += pretty_ ? ": " : ":";
    after_key_ = true;
    return *this;
}
JsonWriter& JsonWriter::value(double v) {
    before_value();
    if (std::isfinite(v)) {
        char text[32];  // the shortest round-trip form of a double needs at most 24 characters
        const char* end = fmt::format_to(text, FMT_COMPILE("{}"), v);
        out_.append(text, static_cast<std::size_t>(end - text));
    } else {
        out_ += "null";
    }
    return *this;
}
JsonWriter& JsonWriter::value(int v) { before_value(); out_ += std::to_string(v); return *this; }
JsonWriter& JsonWriter::value(long v) { before_value(); out_ += std::to_string(v); return *this; }
JsonWriter& JsonWriter::value(unsigned long v) { before_value(); out_ += std::to_string(v); return *this; }
JsonWriter& JsonWriter::value(bool v) { before_value(); out_ += v ? "true" : "false"; return *this; }
JsonWriter& JsonWriter::value(std::string_view v) { before_value(); append_escaped(out_, v); return *this; }
JsonWriter& JsonWriter::value(std::optional<double> v) { return v ? value(*v) : null(); }
JsonWriter& JsonWriter::value(std::complex<double> v) {
    begin_array();
    const bool was_pretty = pretty_;
    pretty_ = false;
    value(v.real());
    value(v.imag());
    end_array();
    pretty_ = was_pretty;
    return *this;
}
JsonWriter& JsonWriter::null() { before_value(); out_ += "null"; return *this; }

}  // namespace firnray
