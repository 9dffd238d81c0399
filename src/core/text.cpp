#include "core/text.hpp"

#include <algorithm>
#include <cmath>

#include <fmt/format.h>

namespace firnray {

std::size_t edit_distance(std::string_view a, std::string_view b) {
    std::vector<std::size_t> row(b.size() + 1);
    for (std::size_t j = 0; j <= b.size(); ++j) row[j] = j;
    for (std::size_t i = 1; i <= a.size(); ++i) {
        std::size_t diagonal = row[0];
        row[0] = i;
        for (std::size_t j = 1; j <= b.size(); ++j) {
            const std::size_t above = row[j];
            row[j] = std::min({row[j] + 1, row[j - 1] + 1, diagonal + (a[i - 1] == b[j - 1] ? 0 : 1)});
            diagonal = above;
        }
    }
    return row[b.size()];
}

std::string closest_name(std::string_view name, const std::vector<std::string>& candidates) {
    std::string closest;
    std::size_t best = 3;  // suggest only close misspellings
    for (const auto& candidate : candidates) {
        const std::size_t d = edit_distance(name, candidate);
        if (d < best && d < std::max<std::size_t>(name.size(), 1)) best = d, closest = candidate;
    }
    return closest;
}

std::string did_you_mean(std::string_view name, const std::vector<std::string>& candidates) {
    const std::string closest = closest_name(name, candidates);
    return closest.empty() ? std::string() : fmt::format(" (did you mean '{}'?)", closest);
}

std::string printable_excerpt(std::string_view text, std::size_t max_chars) {
    std::string out;
    for (std::size_t i = 0; i < text.size(); ++i) {
        if (out.size() >= max_chars) {
            out += "...";
            break;
        }
        const auto byte = static_cast<unsigned char>(text[i]);
        if (byte >= 0x20 && byte < 0x7f)
            out += static_cast<char>(byte);
        else
            out += fmt::format("\\x{:02x}", byte);
    }
    return out;
}

std::string number_for_message(double value) {
    if (std::isnan(value)) return "nan";
    if (std::isinf(value)) return value > 0 ? "inf" : "-inf";
    return fmt::format("{:.6g}", value);
}

}  // namespace firnray
