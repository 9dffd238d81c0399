// A strict JSON reader for the tests (the library only writes JSON). Follows the grammar of
// RFC 8259: no trailing commas, no NaN, no comments, numbers as -?(0|[1-9]d*)(.d+)?([eE][+-]?d+)?,
// strings without raw control characters; anything else is a parse error, so reading an output
// with it also checks that the output is valid JSON.
#pragma once

#include <charconv>
#include <cstddef>
#include <stdexcept>
#include <string>
#include <string_view>
#include <utility>
#include <vector>

namespace firnray::test {

struct JsonValue {
    enum class Type { null, boolean, number, string, array, object };
    Type type = Type::null;
    bool boolean = false;
    double number = 0.0;
    std::string string;
    std::vector<JsonValue> array;
    std::vector<std::pair<std::string, JsonValue>> object;  // in document order

    bool is_null() const { return type == Type::null; }
    bool has(std::string_view key) const {
        for (const auto& [k, v] : object)
            if (k == key) return true;
        return false;
    }
    const JsonValue& operator[](std::string_view key) const {
        if (type != Type::object) throw std::runtime_error("not an object (looking for '" + std::string(key) + "')");
        for (const auto& [k, v] : object)
            if (k == key) return v;
        throw std::runtime_error("no member '" + std::string(key) + "'");
    }
    const JsonValue& operator[](std::size_t index) const {
        if (type != Type::array) throw std::runtime_error("not an array");
        return array.at(index);
    }
    std::size_t size() const { return type == Type::array ? array.size() : object.size(); }
    double num() const {
        if (type != Type::number) throw std::runtime_error("not a number");
        return number;
    }
    const std::string& str() const {
        if (type != Type::string) throw std::runtime_error("not a string");
        return string;
    }
    bool flag() const {
        if (type != Type::boolean) throw std::runtime_error("not a boolean");
        return boolean;
    }
};

namespace detail {

class JsonParser {
public:
    explicit JsonParser(std::string_view text) : text_(text) {}

    JsonValue document() {
        JsonValue v = value();
        skip_space();
        if (at_ != text_.size()) fail("text after the JSON value");
        return v;
    }

private:
    [[noreturn]] void fail(const std::string& what) const {
        throw std::runtime_error("JSON parse error at byte " + std::to_string(at_) + ": " + what);
    }
    void skip_space() {
        while (at_ < text_.size() && (text_[at_] == ' ' || text_[at_] == '\t' || text_[at_] == '\n' || text_[at_] == '\r'))
            ++at_;
    }
    char peek() {
        skip_space();
        if (at_ >= text_.size()) fail("unexpected end");
        return text_[at_];
    }
    void expect(char c) {
        if (peek() != c) fail(std::string("expected '") + c + "'");
        ++at_;
    }
    void literal(std::string_view word) {
        if (text_.substr(at_, word.size()) != word) fail("bad literal");
        at_ += word.size();
    }
    static bool digit(char c) { return c >= '0' && c <= '9'; }

    JsonValue value() {
        JsonValue v;
        const char c = peek();
        if (c == '{') {
            v.type = JsonValue::Type::object;
            ++at_;
            if (peek() == '}') {
                ++at_;
                return v;
            }
            for (;;) {
                if (peek() != '"') fail("an object key must be a string");
                std::string key = string();
                expect(':');
                v.object.emplace_back(std::move(key), value());
                if (peek() == ',') {
                    ++at_;
                    continue;
                }
                expect('}');
                return v;
            }
        }
        if (c == '[') {
            v.type = JsonValue::Type::array;
            ++at_;
            if (peek() == ']') {
                ++at_;
                return v;
            }
            for (;;) {
                v.array.push_back(value());
                if (peek() == ',') {
                    ++at_;
                    continue;
                }
                expect(']');
                return v;
            }
        }
        if (c == '"') {
            v.type = JsonValue::Type::string;
            v.string = string();
            return v;
        }
        if (c == 't' || c == 'f') {
            v.type = JsonValue::Type::boolean;
            v.boolean = c == 't';
            literal(c == 't' ? "true" : "false");
            return v;
        }
        if (c == 'n') {
            literal("null");
            return v;
        }
        v.type = JsonValue::Type::number;
        v.number = number();
        return v;
    }

    double number() {
        const std::size_t start = at_;
        if (at_ < text_.size() && text_[at_] == '-') ++at_;
        if (at_ >= text_.size() || !digit(text_[at_])) fail("bad number");
        if (text_[at_] == '0') ++at_;
        else
            while (at_ < text_.size() && digit(text_[at_])) ++at_;
        if (at_ < text_.size() && text_[at_] == '.') {
            ++at_;
            if (at_ >= text_.size() || !digit(text_[at_])) fail("bad fraction");
            while (at_ < text_.size() && digit(text_[at_])) ++at_;
        }
        if (at_ < text_.size() && (text_[at_] == 'e' || text_[at_] == 'E')) {
            ++at_;
            if (at_ < text_.size() && (text_[at_] == '+' || text_[at_] == '-')) ++at_;
            if (at_ >= text_.size() || !digit(text_[at_])) fail("bad exponent");
            while (at_ < text_.size() && digit(text_[at_])) ++at_;
        }
        double value = 0.0;
        const auto [end, ec] = std::from_chars(text_.data() + start, text_.data() + at_, value);
        if (ec != std::errc() || end != text_.data() + at_) fail("number out of range");
        return value;
    }

    std::string string() {
        expect('"');
        std::string out;
        for (;;) {
            if (at_ >= text_.size()) fail("unterminated string");
            const char c = text_[at_++];
            if (c == '"') return out;
            if (static_cast<unsigned char>(c) < 0x20) fail("raw control character in a string");
            if (c != '\\') {
                out += c;
                continue;
            }
            if (at_ >= text_.size()) fail("unterminated escape");
            const char e = text_[at_++];
            switch (e) {
                case '"': out += '"'; break;
                case '\\': out += '\\'; break;
                case '/': out += '/'; break;
                case 'b': out += '\b'; break;
                case 'f': out += '\f'; break;
                case 'n': out += '\n'; break;
                case 'r': out += '\r'; break;
                case 't': out += '\t'; break;
                case 'u': {
                    if (at_ + 4 > text_.size()) fail("short \\u escape");
                    unsigned code = 0;
                    const auto [end, ec] = std::from_chars(text_.data() + at_, text_.data() + at_ + 4, code, 16);
                    if (ec != std::errc() || end != text_.data() + at_ + 4) fail("bad \\u escape");
                    at_ += 4;
                    if (code < 0x80) {
                        out += static_cast<char>(code);
                    } else if (code < 0x800) {
                        out += static_cast<char>(0xC0 | (code >> 6));
                        out += static_cast<char>(0x80 | (code & 0x3F));
                    } else {  // surrogate pairs are not needed for these tests; kept as BMP code units
                        out += static_cast<char>(0xE0 | (code >> 12));
                        out += static_cast<char>(0x80 | ((code >> 6) & 0x3F));
                        out += static_cast<char>(0x80 | (code & 0x3F));
                    }
                    break;
                }
                default: fail("bad escape");
            }
        }
    }

    std::string_view text_;
    std::size_t at_ = 0;
};

}  // namespace detail

// Throws std::runtime_error (with the byte offset) when the text is not one valid JSON value.
inline JsonValue parse_json(std::string_view text) { return detail::JsonParser(text).document(); }

}  // namespace firnray::test
