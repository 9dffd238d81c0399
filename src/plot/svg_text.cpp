// Text and numbers as they go into SVG: XML escaping (with invalid UTF-8 repaired, since one
// bad byte makes the whole document unreadable), short decimal numbers, and width estimates.
#include <algorithm>
#include <array>
#include <charconv>
#include <cmath>
#include <cstdint>
#include <string>
#include <string_view>

#include "plot/figure.hpp"
#include "plot/plot_detail.hpp"

namespace firnray::plot {

namespace {

// Length of the valid UTF-8 sequence starting at text[i], or 0 if it is not valid (overlong
// forms, surrogates and code points above U+10FFFF are invalid, as are U+FFFE and U+FFFF in XML).
std::size_t utf8_sequence_length(std::string_view text, std::size_t i, std::uint32_t& code_point) {
    const auto byte = [&](std::size_t k) { return static_cast<unsigned char>(text[k]); };
    const unsigned char lead = byte(i);
    std::size_t length;
    if (lead < 0x80) {
        code_point = lead;
        return 1;
    } else if ((lead & 0xE0) == 0xC0) {
        length = 2;
        code_point = lead & 0x1F;
    } else if ((lead & 0xF0) == 0xE0) {
        length = 3;
        code_point = lead & 0x0F;
    } else if ((lead & 0xF8) == 0xF0) {
        length = 4;
        code_point = lead & 0x07;
    } else {
        return 0;
    }
    if (i + length > text.size()) return 0;
    for (std::size_t k = 1; k < length; ++k) {
        if ((byte(i + k) & 0xC0) != 0x80) return 0;
        code_point = (code_point << 6) | (byte(i + k) & 0x3F);
    }
    static const std::array<std::uint32_t, 5> smallest = {0, 0, 0x80, 0x800, 0x10000};
    if (code_point < smallest[length] || code_point > 0x10FFFF) return 0;
    if (code_point >= 0xD800 && code_point <= 0xDFFF) return 0;
    if (code_point == 0xFFFE || code_point == 0xFFFF) return 0;
    return length;
}

// Advance widths of DejaVu Sans for printable ASCII, in em (from its metrics, rounded).
constexpr std::array<double, 95> ascii_widths = {
    0.318, 0.401, 0.460, 0.838, 0.636, 0.950, 0.780, 0.275, 0.390, 0.390,  //  !"#$%&'()
    0.500, 0.838, 0.318, 0.361, 0.318, 0.337, 0.636, 0.636, 0.636, 0.636,  // *+,-./0123
    0.636, 0.636, 0.636, 0.636, 0.636, 0.636, 0.337, 0.337, 0.838, 0.838,  // 456789:;<=
    0.838, 0.531, 1.000, 0.684, 0.686, 0.698, 0.770, 0.632, 0.575, 0.775,  // >?@ABCDEFG
    0.752, 0.295, 0.295, 0.656, 0.557, 0.863, 0.748, 0.787, 0.603, 0.787,  // HIJKLMNOPQ
    0.695, 0.635, 0.611, 0.732, 0.684, 0.989, 0.685, 0.611, 0.685, 0.390,  // RSTUVWXYZ[
    0.337, 0.390, 0.838, 0.500, 0.500, 0.613, 0.635, 0.550, 0.635, 0.615,  // \]^_`abcde
    0.352, 0.635, 0.634, 0.278, 0.278, 0.579, 0.278, 0.974, 0.634, 0.612,  // fghijklmno
    0.635, 0.635, 0.411, 0.521, 0.392, 0.634, 0.592, 0.818, 0.592, 0.592,  // pqrstuvwxy
    0.525, 0.636, 0.337, 0.636, 0.838};                                    // z{|}~

double code_point_width_em(std::uint32_t c) {
    if (c >= 0x20 && c < 0x7F) return ascii_widths[c - 0x20];
    if (c == 0xB9 || c == 0xB2 || c == 0xB3 || (c >= 0x2070 && c <= 0x207F)) return 0.40;  // superscripts
    if (c == 0x2212 || c == 0xD7) return 0.838;  // minus, times
    if (c == 0xB0) return 0.50;                  // degree
    if (c >= 0x2000 && c <= 0x200A) return 0.30; // spaces
    return 0.66;                                 // Greek, accented letters and the like
}

}  // namespace

std::string xml_escape(std::string_view text) {
    std::string out;
    out.reserve(text.size() + 8);
    for (std::size_t i = 0; i < text.size();) {
        std::uint32_t c = 0;
        const std::size_t length = utf8_sequence_length(text, i, c);
        if (length == 0) {
            out += "\uFFFD";
            ++i;
            continue;
        }
        switch (c) {
            case '&': out += "&amp;"; break;
            case '<': out += "&lt;"; break;
            case '>': out += "&gt;"; break;
            case '"': out += "&quot;"; break;
            case '\'': out += "&apos;"; break;
            case '\t':
            case '\n':
            case '\r': out += ' '; break;
            default:
                if (c >= 0x20) out.append(text.substr(i, length));  // other controls are not allowed in XML
        }
        i += length;
    }
    return out;
}

namespace detail {

void append_number(std::string& out, double v, int decimals) {
    if (!std::isfinite(v)) v = 0.0;
    // Pixel coordinates far outside the drawing carry no information; keep them printable.
    v = std::clamp(v, -1e9, 1e9);
    char buffer[64];
    const auto result = std::to_chars(buffer, buffer + sizeof buffer, v, std::chars_format::fixed, decimals);
    char* end = result.ptr;
    if (decimals > 0) {
        while (end[-1] == '0') --end;
        if (end[-1] == '.') --end;
    }
    std::string_view text(buffer, static_cast<std::size_t>(end - buffer));
    if (text == "-0") text = "0";
    out.append(text);
}

std::string number(double v, int decimals) {
    std::string out;
    append_number(out, v, decimals);
    return out;
}

double text_width_px(std::string_view text, double font_px, bool bold) {
    double em = 0.0;
    for (std::size_t i = 0; i < text.size();) {
        std::uint32_t c = 0;
        const std::size_t length = utf8_sequence_length(text, i, c);
        em += length == 0 ? 0.66 : code_point_width_em(c);
        i += length == 0 ? 1 : length;
    }
    return em * font_px * (bold ? 1.11 : 1.0);
}

}  // namespace detail

}  // namespace firnray::plot
