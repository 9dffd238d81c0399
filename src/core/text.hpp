// Small text helpers shared by every reader and by the front end: suggestions for misspelt names,
// printable excerpts of bad input, and numbers in messages written the way a person reads them.
#pragma once

#include <string>
#include <string_view>
#include <vector>

namespace firnray {

// Levenshtein distance (insertions, deletions and substitutions each cost 1).
std::size_t edit_distance(std::string_view a, std::string_view b);

// The candidate closest to `name` when it is a plausible misspelling (distance ≤ 2, and less than
// the name's length), else an empty string.
std::string closest_name(std::string_view name, const std::vector<std::string>& candidates);

// " (did you mean 'x'?)" when closest_name finds one, else "".
std::string did_you_mean(std::string_view name, const std::vector<std::string>& candidates);

// At most `max_chars` characters of `text` fit for a one-line message: printable ASCII is kept,
// every other byte is shown as \xNN, and "..." marks a cut.
std::string printable_excerpt(std::string_view text, std::size_t max_chars = 40);

// A number as a person reads it in a message: up to 6 significant digits, no trailing zeros
// ("1500", "-5", "0.25", "1e+308", "nan", "inf").
std::string number_for_message(double value);

}  // namespace firnray
