// Private helpers of the SVG plotting code (not part of the plot interface): compact number
// output, text width estimates for laying out margins, and tick choices for explicit ranges
// and logarithmic colour bars.
#pragma once

#include <string>
#include <string_view>
#include <vector>

namespace firnray::plot::detail {

// Appends v with at most `decimals` decimals and no trailing zeros ("12.5", "3", "-0.25").
void append_number(std::string& out, double v, int decimals = 2);
std::string number(double v, int decimals = 2);

// Estimated advance width of UTF-8 text in a sans-serif font of the given size. The estimate
// uses the widths of DejaVu Sans (the usual fallback, wider than Helvetica or Arial), so that
// margins computed from it are generous in every common renderer. Bold text is about 10% wider.
double text_width_px(std::string_view text, double font_px, bool bold = false);

// Nice ticks (1, 2, 5 x 10^k) lying inside [low, high], about `target` of them, used when the
// range is fixed (explicit ranges, maps, colour bars) rather than widened to the ticks.
std::vector<double> inner_ticks(double low, double high, int target = 6);

// Ticks for a logarithmic scale over [low, high] (both > 0): the decades, with 2 and 5 between
// them when the range spans fewer than two decades; linear ticks when even those are too few.
std::vector<double> log_ticks(double low, double high);
// One label of a logarithmic scale: "0.01", "100", "10⁷", "2×10⁻⁵".
std::string log_tick_label(double value);

}  // namespace firnray::plot::detail
