#include "io/toml_writer.hpp"

#include <cmath>

#include <fmt/format.h>

#include "core/errors.hpp"

namespace firnray {

std::string toml_string(std::string_view text) {
    std::string out = "\"";
    for (const char ch : text) {
        switch (ch) {
            case '"': out += "\\\""; break;
            case '\\': out += "\\\\"; break;
            case '\n': out += "\\n"; break;
            case '\t': out += "\\t"; break;
            case '\r': out += "\\r"; break;
            default:
                if (static_cast<unsigned char>(ch) < 0x20 || ch == 0x7f)
                    out += fmt::format("\\u{:04x}", static_cast<int>(static_cast<unsigned char>(ch)));
                else
                    out += ch;
        }
    }
    return out + "\"";
}

std::string toml_number(double value) {
    if (!std::isfinite(value))
        throw OutputError(fmt::format("cannot write {} to a TOML file: it holds finite numbers only", value));
    std::string text = fmt::format("{}", value);  // shortest round-trip form
    if (text.find_first_of(".eE") == std::string::npos) text += ".0";
    return text;
}

TomlWriter& TomlWriter::comment(std::string_view text) {
    std::size_t start = 0;
    while (start < text.size()) {
        std::size_t end = text.find('\n', start);
        if (end == std::string_view::npos) end = text.size();
        const std::string_view line = text.substr(start, end - start);
        text_ += line.empty() ? "#\n" : "# " + std::string(line) + "\n";
        start = end + 1;
    }
    return *this;
}

TomlWriter& TomlWriter::table(std::string_view name) {
    text_ += fmt::format("\n[{}]\n", name);
    return *this;
}

TomlWriter& TomlWriter::array_table(std::string_view name) {
    text_ += fmt::format("\n[[{}]]\n", name);
    return *this;
}

TomlWriter& TomlWriter::value(std::string_view key, double number) {
    text_ += fmt::format("{} = {}\n", key, toml_number(number));
    return *this;
}

TomlWriter& TomlWriter::value(std::string_view key, std::string_view text) {
    text_ += fmt::format("{} = {}\n", key, toml_string(text));
    return *this;
}

TomlWriter& TomlWriter::value(std::string_view key, const std::vector<double>& numbers) {
    std::string out = "[";
    for (std::size_t i = 0; i < numbers.size(); ++i) {
        if (i % 8 == 0) out += "\n    ";
        out += toml_number(numbers[i]);
        if (i + 1 < numbers.size()) out += ", ";
    }
    text_ += fmt::format("{} = {},\n]\n", key, out);
    return *this;
}

TomlWriter& TomlWriter::value(std::string_view key, const std::vector<std::string>& texts) {
    std::string out;
    for (std::size_t i = 0; i < texts.size(); ++i) out += (i == 0 ? "" : ", ") + toml_string(texts[i]);
    text_ += fmt::format("{} = [{}]\n", key, out);
    return *this;
}

TomlWriter& TomlWriter::value(std::string_view key, const std::vector<std::vector<double>>& rows) {
    std::string out = "[";
    for (const auto& row : rows) {
        out += "\n    [";
        for (std::size_t i = 0; i < row.size(); ++i) out += (i == 0 ? "" : ", ") + toml_number(row[i]);
        out += "],";
    }
    text_ += fmt::format("{} = {}\n]\n", key, out);
    return *this;
}

}  // namespace firnray
