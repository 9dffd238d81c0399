#include "io/json_writer.hpp"

#include <algorithm>
#include <cmath>

#include <fmt/compile.h>
#include <fmt/format.h>

#include "core/errors.hpp"
#include "io/csv_writer.hpp"

namespace firnray {

void append_json_string(std::string& out, std::string_view text) {
    out += '"';
    const bool plain = std::none_of(text.begin(), text.end(), [](char ch) {
        return ch == '"' || ch == '\\' || static_cast<unsigned char>(ch) < 0x20;
    });
    if (plain) {  // the common case, without a pass per character
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

std::string json_escape(std::string_view text) {
    std::string out;
    out.reserve(text.size() + 2);
    append_json_string(out, text);
    return out;
}

std::string JsonWriter::current_field() const {
    std::string path;
    for (const Level& level : levels_) {
        if (level.array) {
            path += '[';
            path += std::to_string(level.count == 0 ? 0 : level.count - 1);
            path += ']';
        } else {
            if (!path.empty()) path += '.';
            path += level.key;
        }
    }
    return path.empty() ? std::string("(top level)") : path;
}

void JsonWriter::flush() {
    if (!sink_ || out_.empty()) return;
    sink_->write(out_.data(), static_cast<std::streamsize>(out_.size()));
    out_.clear();
}

void JsonWriter::maybe_flush() {
    if (sink_ && out_.size() >= (std::size_t{1} << 16)) flush();
}

void JsonWriter::newline() {
    if (!pretty_) return;
    out_ += '\n';
    out_.append(2 * levels_.size(), ' ');
}

void JsonWriter::before_value() {
    if (after_key_) {
        after_key_ = false;
        return;
    }
    if (!levels_.empty()) {
        Level& level = levels_.back();
        if (!level.empty) out_ += ',';
        level.empty = false;
        ++level.count;
        newline();
    }
}

JsonWriter& JsonWriter::begin_object() {
    before_value();
    out_ += '{';
    levels_.push_back({false, true, 0, {}});
    return *this;
}
JsonWriter& JsonWriter::end_object() {
    const bool empty = levels_.back().empty;
    levels_.pop_back();
    if (!empty) newline();
    out_ += '}';
    maybe_flush();
    return *this;
}
JsonWriter& JsonWriter::begin_array() {
    before_value();
    out_ += '[';
    levels_.push_back({true, true, 0, {}});
    return *this;
}
JsonWriter& JsonWriter::end_array() {
    const bool empty = levels_.back().empty;
    levels_.pop_back();
    if (!empty) newline();
    out_ += ']';
    maybe_flush();
    return *this;
}
JsonWriter& JsonWriter::key(std::string_view name) {
    before_value();
    if (!levels_.empty()) levels_.back().key.assign(name);
    append_json_string(out_, name);
    out_ += pretty_ ? ": " : ":";
    after_key_ = true;
    return *this;
}
JsonWriter& JsonWriter::value(double v) {
    before_value();
    if (!std::isfinite(v)) require_finite(v, current_field());
    char text[32];  // the shortest round-trip form of a double needs at most 24 characters
    const char* end = fmt::format_to(text, FMT_COMPILE("{}"), v);
    out_.append(text, static_cast<std::size_t>(end - text));
    return *this;
}
JsonWriter& JsonWriter::value(int v) { before_value(); out_ += std::to_string(v); return *this; }
JsonWriter& JsonWriter::value(long v) { before_value(); out_ += std::to_string(v); return *this; }
JsonWriter& JsonWriter::value(unsigned long v) { before_value(); out_ += std::to_string(v); return *this; }
JsonWriter& JsonWriter::value(bool v) { before_value(); out_ += v ? "true" : "false"; return *this; }
JsonWriter& JsonWriter::value(std::string_view v) { before_value(); append_json_string(out_, v); return *this; }
JsonWriter& JsonWriter::value(std::optional<double> v) { return v ? value(*v) : null(); }
JsonWriter& JsonWriter::value(std::complex<double> v) { return value(std::optional(v)); }
JsonWriter& JsonWriter::value(std::optional<std::complex<double>> v) {
    begin_array();  // on one line, even in pretty output
    const bool was_pretty = pretty_;
    pretty_ = false;
    if (v) value(v->real()).value(v->imag());
    else null().null();
    end_array();
    pretty_ = was_pretty;
    return *this;
}
JsonWriter& JsonWriter::null() { before_value(); out_ += "null"; return *this; }

}  // namespace firnray
