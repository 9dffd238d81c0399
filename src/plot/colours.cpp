// Colours for plots: a categorical palette for lines and categories, and a sequential ramp for
// value maps.
#include <algorithm>
#include <array>
#include <cmath>
#include <cstdio>
#include <string>

#include "plot/figure.hpp"

namespace firnray::plot {

std::string palette_colour(std::size_t index) {
    // Okabe & Ito (2008), "Color Universal Design": distinguishable with the common forms of
    // colour blindness (common practice). Yellow goes last: it is hard to see on white.
    static const std::array<const char*, 8> colours = {"#0072b2", "#d55e00", "#009e73", "#cc79a7",
                                                       "#e69f00", "#56b4e9", "#000000", "#f0e442"};
    return colours[index % colours.size()];
}

std::string sequential_colour(double t) {
    // Nine evenly spaced samples of matplotlib's viridis map (from memory), joined linearly in
    // sRGB: lightness rises monotonically from dark blue-violet to yellow, so the ramp reads in
    // order in grey scale too.
    struct Rgb {
        double r, g, b;
    };
    static const std::array<Rgb, 9> anchors = {{{0x44, 0x01, 0x54},
                                                {0x47, 0x2d, 0x7b},
                                                {0x3b, 0x52, 0x8b},
                                                {0x2c, 0x72, 0x8e},
                                                {0x21, 0x91, 0x8c},
                                                {0x28, 0xae, 0x80},
                                                {0x5e, 0xc9, 0x62},
                                                {0xad, 0xdc, 0x30},
                                                {0xfd, 0xe7, 0x25}}};
    if (!std::isfinite(t)) t = 0.0;
    t = std::clamp(t, 0.0, 1.0);
    const double position = t * (anchors.size() - 1);
    const std::size_t i = std::min(static_cast<std::size_t>(position), anchors.size() - 2);
    const double f = position - static_cast<double>(i);
    const auto mix = [f](double a, double b) { return static_cast<int>(std::lround(a + (b - a) * f)); };
    char buffer[8];
    std::snprintf(buffer, sizeof buffer, "#%02x%02x%02x", mix(anchors[i].r, anchors[i + 1].r),
                  mix(anchors[i].g, anchors[i + 1].g), mix(anchors[i].b, anchors[i + 1].b));
    return buffer;
}

}  // namespace firnray::plot
