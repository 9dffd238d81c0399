// Laying out and drawing a Figure: data ranges and ticks, margins measured from the labels that
// go into them, a legend placed where it hides no data, then the layers, clipped to the axes.
// Grid maps are drawn as merged rectangles (equal cells joined along rows, then equal runs joined
// down columns), which keeps large maps to a few thousand elements.
#include "plot/figure.hpp"

#include <algorithm>
#include <cmath>
#include <limits>
#include <optional>
#include <stdexcept>
#include <string>
#include <tuple>
#include <utility>
#include <variant>
#include <vector>

#include "core/errors.hpp"
#include "io/atomic_file.hpp"
#include "plot/plot_detail.hpp"

namespace firnray::plot {

namespace detail {

// One type per kind of layer, held in a variant: each has only the fields its kind uses.
struct LineLayer {
    std::vector<double> x, y;  // a NaN in either breaks the line
    LineStyle style;
    std::string legend;
};
struct MarkerLayer {
    std::vector<double> x, y;
    MarkerStyle style;
    std::string legend;
};
struct BandLayer {  // a horizontal band across the axes, drawn under everything else
    double y_low = 0.0, y_high = 0.0;  // y_low <= y_high; either may be infinite
    std::string fill, legend;
};
struct HorizontalLineLayer {
    double y = 0.0;
    LineStyle style;
    std::string legend;
};
struct VerticalLineLayer {
    double x = 0.0;
    LineStyle style;
    std::string legend;
};
struct TextLayer {
    double x = 0.0, y = 0.0;  // data coordinates
    std::string text;
    TextStyle style;
};
struct CategoryMapLayer {
    CellGrid grid;
    std::vector<int> categories;  // per cell; -1 blank
    std::vector<Category> legend;
};
struct ValueMapLayer {
    CellGrid grid;
    std::vector<double> values;  // per cell; NaN blank
    ColourScale scale;
};

struct Layer {
    std::variant<LineLayer, MarkerLayer, BandLayer, HorizontalLineLayer, VerticalLineLayer, TextLayer, CategoryMapLayer,
                 ValueMapLayer>
        content;
};

}  // namespace detail

namespace {

using detail::append_number;
using detail::BandLayer;
using detail::CategoryMapLayer;
using detail::HorizontalLineLayer;
using detail::Layer;
using detail::LineLayer;
using detail::MarkerLayer;
using detail::number;
using detail::TextLayer;
using detail::text_width_px;
using detail::ValueMapLayer;
using detail::VerticalLineLayer;

// std::visit with one lambda per layer type.
template <class... Lambdas>
struct Overloaded : Lambdas... {
    using Lambdas::operator()...;
};
template <class... Lambdas>
Overloaded(Lambdas...) -> Overloaded<Lambdas...>;

// The layer's content when it is of type T, else null.
template <class T>
const T* layer_as(const Layer& layer) {
    return std::get_if<T>(&layer.content);
}

constexpr double outer_margin = 12.0;
constexpr double title_font = 18.0, label_font = 15.0, tick_font = 13.0, legend_font = 13.0;
constexpr double tick_length = 5.0, tick_gap = 3.0;
constexpr double ascent = 0.76, descent = 0.24;  // of the font size, for placing baselines
constexpr int colour_levels = 64;
constexpr const char* axis_colour = "#444444";
constexpr const char* grid_colour = "#e3e3e3";
constexpr const char* label_colour = "#222222";
constexpr const char* tick_label_colour = "#333333";
constexpr double inf = std::numeric_limits<double>::infinity();

struct Extent {
    double low = inf, high = -inf;
    void add(double v) {
        if (!std::isfinite(v)) return;
        low = std::min(low, v);
        high = std::max(high, v);
    }
    bool empty() const { return low > high; }
};

struct Axis {
    double low = 0.0, high = 1.0;
    std::vector<double> ticks;
    std::vector<std::string> labels;
    double widest_label_px = 0.0;
};

struct Rect {
    double left, top, right, bottom;
    double width() const { return right - left; }
    double height() const { return bottom - top; }
    bool contains(double x, double y, double slack = 0.0) const {
        return x >= left - slack && x <= right + slack && y >= top - slack && y <= bottom + slack;
    }
};

// Data to pixel coordinates within the plot area.
struct Frame {
    Rect area{};
    double x0 = 0, x1 = 1, y0 = 0, y1 = 1;
    bool y_inverted = false;
    double px(double x) const { return area.left + (x - x0) / (x1 - x0) * area.width(); }
    double py(double y) const {
        const double f = (y - y0) / (y1 - y0);
        return y_inverted ? area.top + f * area.height() : area.bottom - f * area.height();
    }
};

struct Point {
    double x, y;
};
using Polyline = std::vector<Point>;

struct LegendEntry {
    enum class Swatch { line, marker, patch };
    Swatch swatch = Swatch::line;
    LineStyle line;
    MarkerStyle marker;
    std::string fill;
    std::string label;
};

constexpr double legend_padding = 8.0, legend_row = 20.0, legend_swatch = 28.0, legend_gap = 8.0;

// Where each legend entry goes within the legend box: (x of its swatch, y of its centre line).
struct LegendLayout {
    double width = 0.0, height = 0.0;
    std::vector<Point> entries;
};

double entry_width(const LegendEntry& e) { return legend_swatch + legend_gap + text_width_px(e.label, legend_font); }

// One entry per row.
LegendLayout stacked_legend(const std::vector<LegendEntry>& entries) {
    LegendLayout layout;
    if (entries.empty()) return layout;
    double widest = 0.0;
    for (std::size_t i = 0; i < entries.size(); ++i) {
        widest = std::max(widest, entry_width(entries[i]));
        layout.entries.push_back({legend_padding, legend_padding + legend_row * static_cast<double>(i) + legend_row / 2 - 2.0});
    }
    layout.width = 2 * legend_padding + widest;
    layout.height = 2 * legend_padding + legend_row * static_cast<double>(entries.size()) - 4.0;
    return layout;
}

// Entries side by side in aligned columns, as many rows as max_width needs (a legend under the axes).
LegendLayout flowing_legend(const std::vector<LegendEntry>& entries, double max_width) {
    LegendLayout layout;
    if (entries.empty()) return layout;
    constexpr double spacing = 22.0;
    double widest = 0.0;
    for (const auto& e : entries) widest = std::max(widest, entry_width(e));
    const double column = widest + spacing;
    const std::size_t columns = std::clamp<std::size_t>(
        static_cast<std::size_t>((max_width - 2 * legend_padding + spacing) / column), 1, entries.size());
    const std::size_t rows = (entries.size() + columns - 1) / columns;
    for (std::size_t i = 0; i < entries.size(); ++i) {
        const double row = static_cast<double>(i / columns), col = static_cast<double>(i % columns);
        layout.entries.push_back({legend_padding + col * column, legend_padding + legend_row * row + legend_row / 2 - 2.0});
    }
    layout.width = 2 * legend_padding + static_cast<double>(columns) * column - spacing;
    layout.height = 2 * legend_padding + legend_row * static_cast<double>(rows) - 4.0;
    return layout;
}

// Resolved colour scale of a value map.
struct ColourRange {
    double low = 0.0, high = 1.0;
    bool logarithmic = false;
    std::string label;

    // Position on the scale, 0..1 (clamped), or NaN for a value that has no colour.
    double fraction(double v) const {
        if (!std::isfinite(v)) return std::numeric_limits<double>::quiet_NaN();
        if (logarithmic) {
            if (!(v > 0)) return std::numeric_limits<double>::quiet_NaN();
            if (high <= low) return 0.5;
            return std::clamp((std::log10(v) - std::log10(low)) / (std::log10(high) - std::log10(low)), 0.0, 1.0);
        }
        if (high <= low) return 0.5;
        return std::clamp((v - low) / (high - low), 0.0, 1.0);
    }
    int level(double v) const {
        const double f = fraction(v);
        if (std::isnan(f)) return -1;
        return std::min(colour_levels - 1, static_cast<int>(f * colour_levels));
    }
};

std::string level_colour(int level) {
    return sequential_colour(static_cast<double>(level) / (colour_levels - 1));
}

ColourRange resolve_colour_range(const ValueMapLayer& map) {
    const ColourScale& s = map.scale;
    ColourRange range;
    range.logarithmic = s.logarithmic;
    range.label = s.label;
    if (s.logarithmic && std::isfinite(s.low) && !(s.low > 0))
        throw DataInputError("a logarithmic colour scale needs a positive low end, not " + number(s.low, 6));
    if (s.logarithmic && std::isfinite(s.high) && !(s.high > 0))
        throw DataInputError("a logarithmic colour scale needs a positive high end, not " + number(s.high, 6));
    if (std::isfinite(s.low) && std::isfinite(s.high) && !(s.low < s.high))
        throw DataInputError("colour scale: the low end (" + number(s.low, 6) + ") must be below the high end (" +
                             number(s.high, 6) + ")");
    Extent data;
    for (double v : map.values) {
        if (!std::isfinite(v) || (s.logarithmic && !(v > 0))) continue;
        data.add(v);
    }
    const bool low_given = std::isfinite(s.low), high_given = std::isfinite(s.high);
    if (data.empty()) {
        data.low = s.logarithmic ? 1.0 : 0.0;
        data.high = s.logarithmic ? 10.0 : 1.0;
    }
    range.low = low_given ? s.low : data.low;
    range.high = high_given ? s.high : data.high;
    if (range.low >= range.high) {
        // A constant field, or data entirely beyond the one end that was given.
        if (s.logarithmic) {
            if (high_given) range.low = range.high / 10.0;
            else if (low_given) range.high = range.low * 10.0;
            else range.low /= 2.0, range.high *= 2.0;
        } else {
            const double half = range.low == 0.0 ? 1.0 : std::abs(range.low) * 0.1;
            if (high_given) range.low = range.high - 2 * half;
            else if (low_given) range.high = range.low + 2 * half;
            else range.low -= half, range.high += half;
        }
    }
    return range;
}

// ---------------------------------------------------------------------------------------------
// SVG output helpers

class Svg {
public:
    explicit Svg(std::string& out) : out_(out) {}
    Svg& raw(std::string_view s) {
        out_.append(s);
        return *this;
    }
    Svg& raw(char c) {
        out_ += c;
        return *this;
    }
    Svg& num(double v, int decimals = 2) {
        append_number(out_, v, decimals);
        return *this;
    }
    Svg& attr(std::string_view name, double v, int decimals = 2) {
        out_ += ' ';
        out_.append(name);
        out_ += "=\"";
        append_number(out_, v, decimals);
        out_ += '"';
        return *this;
    }
    Svg& attr(std::string_view name, std::string_view text) {
        out_ += ' ';
        out_.append(name);
        out_ += "=\"";
        out_ += xml_escape(text);
        out_ += '"';
        return *this;
    }
    Svg& text(std::string_view s) {
        out_ += xml_escape(s);
        return *this;
    }
    Svg& text_element(double x, double y, std::string_view content, double size, const char* anchor,
                      const std::string& colour, bool bold = false, std::string_view transform = {}) {
        raw("<text");
        if (transform.empty()) attr("x", x).attr("y", y);
        else attr("transform", transform);
        attr("font-size", size, 1);
        if (std::string_view(anchor) != "start") attr("text-anchor", anchor);
        attr("fill", colour);
        if (bold) raw(" font-weight=\"bold\"");
        raw(">").text(content).raw("</text>\n");
        return *this;
    }
    std::string& str() { return out_; }

private:
    std::string& out_;
};

void stroke_attributes(Svg& svg, const LineStyle& style) {
    // Negative widths are errors in SVG; NaN would be too.
    svg.attr("stroke", style.colour).attr("stroke-width", std::isfinite(style.width_px) ? std::max(0.0, style.width_px) : 1.0);
    if (!style.dash.empty()) svg.attr("stroke-dasharray", style.dash);
    if (style.opacity < 1.0) svg.attr("stroke-opacity", std::max(0.0, style.opacity), 3);
}

// Liang-Barsky: clips the segment to the box; false if nothing of it is inside.
bool clip_segment(Point& a, Point& b, const Rect& box) {
    const double dx = b.x - a.x, dy = b.y - a.y;
    const double p[4] = {-dx, dx, -dy, dy};
    const double q[4] = {a.x - box.left, box.right - a.x, a.y - box.top, box.bottom - a.y};
    double t0 = 0.0, t1 = 1.0;
    for (int i = 0; i < 4; ++i) {
        if (p[i] == 0.0) {
            if (q[i] < 0.0) return false;
            continue;
        }
        const double r = q[i] / p[i];
        if (p[i] < 0.0) {
            if (r > t1) return false;
            t0 = std::max(t0, r);
        } else {
            if (r < t0) return false;
            t1 = std::min(t1, r);
        }
    }
    const Point start{a.x + t0 * dx, a.y + t0 * dy}, end{a.x + t1 * dx, a.y + t1 * dy};
    a = start;
    b = end;
    return true;
}

// Ramer-Douglas-Peucker simplification: keeps the points that lie more than `tolerance` pixels
// from the chord of the stretch they sit in. Smooth curves of thousands of points shrink to a
// few dozen without a visible change.
Polyline simplified(const Polyline& line, double tolerance) {
    const std::size_t n = line.size();
    if (n <= 2) return line;
    std::vector<char> keep(n, 0);
    keep[0] = keep[n - 1] = 1;
    std::vector<std::pair<std::size_t, std::size_t>> stretches{{0, n - 1}};
    while (!stretches.empty()) {
        const auto [first, last] = stretches.back();
        stretches.pop_back();
        if (last <= first + 1) continue;
        const Point a = line[first], b = line[last];
        const double dx = b.x - a.x, dy = b.y - a.y, length = std::hypot(dx, dy);
        double farthest = -1.0;
        std::size_t at = first;
        for (std::size_t i = first + 1; i < last; ++i) {
            // Distance to the chord as a segment, not a line: a curve that doubles back must
            // keep the point where it turns.
            const double ex = line[i].x - a.x, ey = line[i].y - a.y;
            const double t = length > 0 ? (ex * dx + ey * dy) / (length * length) : 0.0;
            const double d = t <= 0.0   ? std::hypot(ex, ey)
                             : t >= 1.0 ? std::hypot(line[i].x - b.x, line[i].y - b.y)
                                        : std::abs(ex * dy - ey * dx) / length;
            if (d > farthest) {
                farthest = d;
                at = i;
            }
        }
        if (farthest > tolerance) {
            keep[at] = 1;
            stretches.push_back({first, at});
            stretches.push_back({at, last});
        }
    }
    Polyline out;
    for (std::size_t i = 0; i < n; ++i)
        if (keep[i]) out.push_back(line[i]);
    return out;
}

// Pixel polylines of a data line: broken at NaN, clipped to (a little beyond) the plot area,
// and simplified to within a tenth of a pixel.
std::vector<Polyline> pixel_polylines(const LineLayer& layer, const Frame& frame) {
    const Rect box{frame.area.left - 4, frame.area.top - 4, frame.area.right + 4, frame.area.bottom + 4};
    std::vector<Polyline> lines;
    Polyline current;
    const auto finish = [&] {
        if (current.size() >= 2) lines.push_back(simplified(current, 0.1));
        current.clear();
    };
    // Pixel position of point i; false for a gap (NaN) in the data.
    const auto to_pixel = [&](std::size_t i, Point& p) {
        const double x = layer.x[i], y = layer.y[i];
        if (!std::isfinite(x) || !std::isfinite(y)) return false;
        p = {frame.px(x), frame.py(y)};
        if (!std::isfinite(p.x) || !std::isfinite(p.y)) return false;
        p.x = std::clamp(p.x, -1e12, 1e12);
        p.y = std::clamp(p.y, -1e12, 1e12);
        return true;
    };
    Point previous{0.0, 0.0}, point{0.0, 0.0};
    bool has_previous = false;
    for (std::size_t i = 0; i < layer.x.size(); ++i) {
        if (!to_pixel(i, point)) {
            finish();
            has_previous = false;
            continue;
        }
        if (has_previous) {
            Point a = previous, b = point;
            if (clip_segment(a, b, box)) {
                if (current.empty() || std::abs(current.back().x - a.x) > 1e-6 || std::abs(current.back().y - a.y) > 1e-6) {
                    finish();
                    current.push_back(a);
                }
                current.push_back(b);
            } else {
                finish();
            }
        }
        previous = point;
        has_previous = true;
    }
    finish();
    return lines;
}

void draw_marker(Svg& svg, const MarkerStyle& style, double x, double y) {
    const double r = std::isfinite(style.radius_px) ? std::clamp(style.radius_px, 0.5, 100.0) : 3.0;
    const std::string& shape = style.shape;
    if (shape == "square") {
        svg.raw("<rect").attr("x", x - r).attr("y", y - r).attr("width", 2 * r).attr("height", 2 * r).raw("/>");
    } else if (shape == "diamond") {
        const double d = r * 1.3;
        svg.raw("<path d=\"M").num(x).raw(' ').num(y - d).raw('l').num(d).raw(' ').num(d).raw('l').num(-d).raw(' ')
            .num(d).raw('l').num(-d).raw(' ').num(-d).raw("z\"/>");
    } else if (shape == "triangle") {
        const double h = r * 1.35;  // centroid at (x, y)
        svg.raw("<path d=\"M").num(x).raw(' ').num(y - h).raw('L').num(x + h * 0.866).raw(' ').num(y + h * 0.5)
            .raw('L').num(x - h * 0.866).raw(' ').num(y + h * 0.5).raw("z\"/>");
    } else if (shape == "cross") {
        const double d = r * 0.85;
        svg.raw("<path d=\"M").num(x - d).raw(' ').num(y - d).raw('L').num(x + d).raw(' ').num(y + d).raw('M')
            .num(x - d).raw(' ').num(y + d).raw('L').num(x + d).raw(' ').num(y - d).raw("\"/>");
    } else if (shape == "plus") {
        svg.raw("<path d=\"M").num(x - r).raw(' ').num(y).raw('H').num(x + r).raw('M').num(x).raw(' ').num(y - r)
            .raw('V').num(y + r).raw("\"/>");
    } else {
        svg.raw("<circle").attr("cx", x).attr("cy", y).attr("r", r).raw("/>");
    }
}

// True for colours that would vanish on the white legend box ("#fff", "#f4f4f4", "white").
bool is_light_colour(const std::string& colour) {
    if (colour == "white") return true;
    if (colour.size() != 4 && colour.size() != 7) return false;
    if (colour[0] != '#' || colour.find_first_not_of("0123456789abcdefABCDEF", 1) != std::string::npos) return false;
    const auto channel = [&](int i) {
        if (colour.size() == 4) return std::stoi(std::string(2, colour[1 + i]), nullptr, 16) / 255.0;
        return std::stoi(colour.substr(1 + 2 * i, 2), nullptr, 16) / 255.0;
    };
    return 0.2126 * channel(0) + 0.7152 * channel(1) + 0.0722 * channel(2) > 0.85;
}

bool stroked_marker(const MarkerStyle& style) { return style.shape == "cross" || style.shape == "plus"; }

void open_marker_group(Svg& svg, const MarkerStyle& style) {
    if (stroked_marker(style)) {
        svg.raw("<g fill=\"none\"").attr("stroke", style.colour).attr("stroke-width", std::max(1.5, style.radius_px / 2.5));
        svg.raw(" stroke-linecap=\"round\">");
    } else if (style.radius_px >= 3.5) {
        // A thin white edge keeps overlapping markers apart and visible on top of lines (small
        // markers would look washed out with it).
        svg.raw("<g").attr("fill", style.colour).raw(" stroke=\"#ffffff\" stroke-width=\"0.75\">");
    } else {
        svg.raw("<g").attr("fill", style.colour).raw(">");
    }
}

// ---------------------------------------------------------------------------------------------
// Grid maps

struct CellRect {
    std::size_t ix0, ix1, iy0, iy1;  // [ix0, ix1) x [iy0, iy1)
    int key;
};

// Rectangles covering the cells with key >= 0: equal cells merged along each row, and runs
// identical to the run just above merged into one taller rectangle.
template <class KeyOf>
std::vector<CellRect> merge_cells(std::size_t nx, std::size_t ny, KeyOf key_of) {
    std::vector<CellRect> done, open, next, row;
    for (std::size_t iy = 0; iy < ny; ++iy) {
        row.clear();
        for (std::size_t ix = 0; ix < nx;) {
            const int key = key_of(ix, iy);
            std::size_t end = ix + 1;
            while (end < nx && key_of(end, iy) == key) ++end;
            if (key >= 0) row.push_back({ix, end, iy, iy + 1, key});
            ix = end;
        }
        next.clear();
        std::size_t i = 0, j = 0;
        while (i < open.size() || j < row.size()) {
            if (j == row.size() || (i < open.size() && open[i].ix0 < row[j].ix0)) {
                done.push_back(open[i++]);
            } else if (i == open.size() || row[j].ix0 < open[i].ix0) {
                next.push_back(row[j++]);
            } else if (open[i].ix1 == row[j].ix1 && open[i].key == row[j].key) {
                CellRect grown = open[i++];
                grown.iy1 = iy + 1;
                next.push_back(grown);
                ++j;
            } else {
                done.push_back(open[i++]);
                next.push_back(row[j++]);
            }
        }
        std::swap(open, next);
    }
    done.insert(done.end(), open.begin(), open.end());
    return done;
}

template <class KeyOf, class ColourOf>
void draw_cells(Svg& svg, const CellGrid& grid, const Frame& frame, KeyOf key_of, ColourOf colour_of) {
    auto rects = merge_cells(grid.nx(), grid.ny(), key_of);
    std::stable_sort(rects.begin(), rects.end(), [](const CellRect& a, const CellRect& b) { return a.key < b.key; });
    // crispEdges: neighbouring rectangles meet without the faint seams anti-aliasing leaves.
    svg.raw("<g shape-rendering=\"crispEdges\">\n");
    int current_key = std::numeric_limits<int>::min();
    for (const auto& r : rects) {
        // Edges on whole pixels: neighbours then share exact edges and tile without gaps at any
        // zoom (a pixel-wide boundary shift is invisible at plot sizes).
        double x0 = std::round(frame.px(grid.x_edges[r.ix0])), x1 = std::round(frame.px(grid.x_edges[r.ix1]));
        double y0 = std::round(frame.py(grid.y_edges[r.iy0])), y1 = std::round(frame.py(grid.y_edges[r.iy1]));
        if (x0 > x1) std::swap(x0, x1);
        if (y0 > y1) std::swap(y0, y1);
        x0 = std::max(x0, frame.area.left);
        x1 = std::min(x1, frame.area.right);
        y0 = std::max(y0, frame.area.top);
        y1 = std::min(y1, frame.area.bottom);
        if (!(x1 - x0 >= 1.0) || !(y1 - y0 >= 1.0)) continue;
        if (r.key != current_key) {
            if (current_key != std::numeric_limits<int>::min()) svg.raw("</g>\n");
            svg.raw("<g").attr("fill", colour_of(r.key)).raw(">\n");
            current_key = r.key;
        }
        svg.raw("<rect").attr("x", x0).attr("y", y0).attr("width", x1 - x0).attr("height", y1 - y0).raw("/>\n");
    }
    if (current_key != std::numeric_limits<int>::min()) svg.raw("</g>\n");
    svg.raw("</g>\n");
}

void check_grid(const CellGrid& grid, std::size_t cell_count, const char* what) {
    const auto monotonic = [](const std::vector<double>& edges) {
        if (edges.size() < 2) return false;
        const bool rising = edges[1] > edges[0];
        for (std::size_t i = 0; i < edges.size(); ++i) {
            if (!std::isfinite(edges[i])) return false;
            if (i > 0 && (rising ? !(edges[i] > edges[i - 1]) : !(edges[i] < edges[i - 1]))) return false;
        }
        return true;
    };
    if (!monotonic(grid.x_edges) || !monotonic(grid.y_edges))
        throw std::invalid_argument(std::string(what) +
                                    ": cell edges must be finite, strictly monotonic, at least two per axis");
    if (cell_count != grid.nx() * grid.ny())
        throw std::invalid_argument(std::string(what) + ": " + std::to_string(cell_count) + " cells given for a " +
                                    std::to_string(grid.nx()) + " x " + std::to_string(grid.ny()) + " grid");
}

// ---------------------------------------------------------------------------------------------
// Layout

// Splits a (bold) title into lines no wider than max_width (at most three; the rest joins the last).
std::vector<std::string> wrap_text(const std::string& text, double font, double max_width) {
    std::vector<std::string> words, lines;
    std::string word;
    for (char c : text) {
        if (c == ' ') {
            if (!word.empty()) words.push_back(std::move(word));
            word.clear();
        } else {
            word += c;
        }
    }
    if (!word.empty()) words.push_back(std::move(word));
    std::string line;
    for (const auto& w : words) {
        const std::string candidate = line.empty() ? w : line + " " + w;
        if (!line.empty() && text_width_px(candidate, font, true) > max_width && lines.size() < 2) {
            lines.push_back(line);
            line = w;
        } else {
            line = candidate;
        }
    }
    if (!line.empty()) lines.push_back(line);
    return lines;
}

Axis make_axis(double explicit_low, double explicit_high, const Extent& data, bool tight, int target) {
    Axis axis;
    if (std::isfinite(explicit_low) && std::isfinite(explicit_high)) {
        axis.low = explicit_low;
        axis.high = explicit_high;
        axis.ticks = detail::inner_ticks(axis.low, axis.high, target);
    } else if (data.empty()) {
        axis.ticks = detail::inner_ticks(0.0, 1.0, target);
    } else if (tight && data.high > data.low) {
        axis.low = data.low;
        axis.high = data.high;
        axis.ticks = detail::inner_ticks(axis.low, axis.high, target);
    } else {
        axis.ticks = nice_ticks(data.low, data.high, target);
        axis.low = axis.ticks.front();
        axis.high = axis.ticks.back();
    }
    axis.labels = tick_labels(axis.ticks);
    for (const auto& l : axis.labels) axis.widest_label_px = std::max(axis.widest_label_px, text_width_px(l, tick_font));
    return axis;
}

// The axis with the most ticks (up to `target`) for which `fits` holds (labels not crowded).
template <class Fits>
Axis fitted_axis(double explicit_low, double explicit_high, const Extent& data, bool tight, int target, Fits fits) {
    Axis axis = make_axis(explicit_low, explicit_high, data, tight, target);
    while (target > 2 && !fits(axis)) axis = make_axis(explicit_low, explicit_high, data, tight, --target);
    return axis;
}

}  // namespace

// ---------------------------------------------------------------------------------------------
// Figure

Figure::Figure(double width_px, double height_px) : width_px_(width_px), height_px_(height_px) {
    if (!(width_px >= 100.0 && width_px <= 20000.0) || !(height_px >= 80.0 && height_px <= 20000.0))
        throw std::invalid_argument("figure size must be between 100 x 80 and 20000 x 20000 pixels");
}
Figure::~Figure() = default;
Figure::Figure(const Figure&) = default;
Figure::Figure(Figure&&) noexcept = default;
Figure& Figure::operator=(const Figure&) = default;
Figure& Figure::operator=(Figure&&) noexcept = default;

Figure& Figure::title(std::string text) {
    title_ = std::move(text);
    return *this;
}
Figure& Figure::x_label(std::string text) {
    x_label_ = std::move(text);
    return *this;
}
Figure& Figure::y_label(std::string text) {
    y_label_ = std::move(text);
    return *this;
}

static void check_range(const char* axis, double low, double high) {
    if (!std::isfinite(low) || !std::isfinite(high))
        throw DataInputError(std::string("plot ") + axis + " range must be finite numbers");
    if (!(low < high))
        throw DataInputError(std::string("plot ") + axis + " range: the low end (" + detail::number(low, 6) +
                             ") must be below the high end (" + detail::number(high, 6) + ")");
}

Figure& Figure::x_range(double low, double high) {
    check_range("x", low, high);
    x_low_ = low;
    x_high_ = high;
    return *this;
}
Figure& Figure::y_range(double low, double high) {
    check_range("y", low, high);
    y_low_ = low;
    y_high_ = high;
    return *this;
}
Figure& Figure::invert_y(bool inverted) {
    y_inverted_ = inverted;
    return *this;
}
Figure& Figure::legend_position(LegendPosition where) {
    legend_position_ = where;
    return *this;
}
Figure& Figure::grid(bool shown) {
    grid_ = shown;
    return *this;
}

Figure& Figure::add_line(std::span<const double> x, std::span<const double> y, const LineStyle& style,
                         std::string legend) {
    if (x.size() != y.size())
        throw std::invalid_argument("add_line: " + std::to_string(x.size()) + " x values but " +
                                    std::to_string(y.size()) + " y values");
    layers_.push_back({LineLayer{{x.begin(), x.end()}, {y.begin(), y.end()}, style, std::move(legend)}});
    return *this;
}

Figure& Figure::add_markers(std::span<const double> x, std::span<const double> y, const MarkerStyle& style,
                            std::string legend) {
    if (x.size() != y.size())
        throw std::invalid_argument("add_markers: " + std::to_string(x.size()) + " x values but " +
                                    std::to_string(y.size()) + " y values");
    static const char* shapes[] = {"circle", "square", "diamond", "triangle", "cross", "plus"};
    if (std::find(std::begin(shapes), std::end(shapes), style.shape) == std::end(shapes))
        throw std::invalid_argument("add_markers: unknown marker shape '" + style.shape + "'");
    layers_.push_back({MarkerLayer{{x.begin(), x.end()}, {y.begin(), y.end()}, style, std::move(legend)}});
    return *this;
}

Figure& Figure::add_y_band(double y_low, double y_high, std::string fill, std::string legend) {
    layers_.push_back({BandLayer{std::min(y_low, y_high), std::max(y_low, y_high), std::move(fill), std::move(legend)}});
    return *this;
}

Figure& Figure::add_hline(double y, const LineStyle& style, std::string legend) {
    layers_.push_back({HorizontalLineLayer{y, style, std::move(legend)}});
    return *this;
}

Figure& Figure::add_vline(double x, const LineStyle& style, std::string legend) {
    layers_.push_back({VerticalLineLayer{x, style, std::move(legend)}});
    return *this;
}

Figure& Figure::add_text(double x, double y, std::string text) { return add_text(x, y, std::move(text), TextStyle{}); }

Figure& Figure::add_text(double x, double y, std::string text, const TextStyle& style) {
    layers_.push_back({TextLayer{x, y, std::move(text), style}});
    return *this;
}

static bool has_grid_map(const std::vector<Layer>& layers) {
    return std::any_of(layers.begin(), layers.end(), [](const Layer& l) {
        return layer_as<CategoryMapLayer>(l) != nullptr || layer_as<ValueMapLayer>(l) != nullptr;
    });
}

Figure& Figure::category_map(CellGrid grid, std::vector<int> categories, std::vector<Category> legend) {
    if (has_grid_map(layers_)) throw std::logic_error("a figure holds at most one grid map");
    check_grid(grid, categories.size(), "category_map");
    for (std::size_t i = 0; i < categories.size(); ++i) {
        if (categories[i] < -1 || categories[i] >= static_cast<int>(legend.size()))
            throw std::invalid_argument("category_map: cell " + std::to_string(i) + " has category " +
                                        std::to_string(categories[i]) + " but " + std::to_string(legend.size()) +
                                        " categories are listed");
    }
    layers_.push_back({CategoryMapLayer{std::move(grid), std::move(categories), std::move(legend)}});
    return *this;
}

Figure& Figure::value_map(CellGrid grid, std::vector<double> values, ColourScale scale) {
    if (has_grid_map(layers_)) throw std::logic_error("a figure holds at most one grid map");
    check_grid(grid, values.size(), "value_map");
    ValueMapLayer map{std::move(grid), std::move(values), std::move(scale)};
    resolve_colour_range(map);  // reports a bad scale now rather than when drawing
    layers_.push_back({std::move(map)});
    return *this;
}

static std::string document_open(double width, double height, const std::string& title) {
    std::string out = "<?xml version=\"1.0\" encoding=\"UTF-8\" standalone=\"no\"?>\n";
    Svg svg(out);
    svg.raw("<svg xmlns=\"http://www.w3.org/2000/svg\" version=\"1.1\"").attr("width", width).attr("height", height);
    svg.raw(" viewBox=\"0 0 ").num(width).raw(' ').num(height).raw("\">\n");
    if (!title.empty()) svg.raw("<title>").text(title).raw("</title>\n");
    svg.raw("<rect").attr("width", width).attr("height", height).raw(" fill=\"#ffffff\"/>\n");
    return out;
}

std::string Figure::svg() const {
    std::string out = document_open(width_px_, height_px_, title_);
    out += svg_body();
    out += "</svg>\n";
    return out;
}

void Figure::write_svg(const std::string& path) const { write_text_file(path, svg()); }

std::string Figure::svg_body() const { return svg_body("fig"); }

namespace {

// ---------------------------------------------------------------------------------------------
// Laying out a figure: everything decided before drawing

constexpr double bar_gap = 20.0, bar_width = 16.0;

// The colour bar of a value map: its resolved scale, ticks and labels, and the width it takes
// right of the axes.
struct ColourBar {
    ColourRange colours;
    std::vector<double> ticks;
    std::vector<std::string> labels;
    double label_width = 0.0;
    double block = 0.0;
};

// What the figure's settings and layers decide before anything is drawn.
struct Layout {
    Axis x_axis, y_axis;
    std::optional<ColourBar> bar;
    std::vector<std::string> title_lines;
    std::vector<LegendEntry> entries;
    LegendLayout stacked;  // one entry per row: inside the axes or right of them
    LegendLayout flowing;  // entries side by side: below the axes
    LegendPosition where = LegendPosition::hidden;
    double x_label_bottom = 0.0;  // below the axes: tick labels and axis label
    Frame frame;
};

// The figure's grid map, if it has one.
const Layer* grid_map_layer(const std::vector<Layer>& layers) {
    const Layer* map = nullptr;
    for (const auto& l : layers)
        if (layer_as<CategoryMapLayer>(l) || layer_as<ValueMapLayer>(l)) map = &l;
    return map;
}

// The x and y ranges the layers cover (finite values only).
std::pair<Extent, Extent> data_extents(const std::vector<Layer>& layers) {
    Extent xs, ys;
    const auto add_points = [&](const std::vector<double>& x, const std::vector<double>& y) {
        for (std::size_t i = 0; i < x.size(); ++i) {
            if (std::isfinite(x[i]) && std::isfinite(y[i])) {
                xs.add(x[i]);
                ys.add(y[i]);
            }
        }
    };
    const auto add_grid = [&](const CellGrid& grid) {
        xs.add(grid.x_edges.front()), xs.add(grid.x_edges.back());
        ys.add(grid.y_edges.front()), ys.add(grid.y_edges.back());
    };
    for (const auto& l : layers) {
        std::visit(Overloaded{
                       [&](const LineLayer& line) { add_points(line.x, line.y); },
                       [&](const MarkerLayer& markers) { add_points(markers.x, markers.y); },
                       [&](const BandLayer& band) { ys.add(band.y_low), ys.add(band.y_high); },
                       [&](const HorizontalLineLayer& line) { ys.add(line.y); },
                       [&](const VerticalLineLayer& line) { xs.add(line.x); },
                       [&](const TextLayer& text) { xs.add(text.x), ys.add(text.y); },
                       [&](const CategoryMapLayer& map) { add_grid(map.grid); },
                       [&](const ValueMapLayer& map) { add_grid(map.grid); },
                   },
                   l.content);
    }
    return {xs, ys};
}

// Legend entries, in the order the layers were added: layers with a legend text, and each
// labelled category of a category map.
std::vector<LegendEntry> legend_entries(const std::vector<Layer>& layers) {
    std::vector<LegendEntry> entries;
    const auto add = [&](LegendEntry e, const std::string& label) {
        if (label.empty()) return;
        e.label = label;
        entries.push_back(std::move(e));
    };
    const auto line_entry = [](const LineStyle& style) {
        LegendEntry e;
        e.swatch = LegendEntry::Swatch::line;
        e.line = style;
        return e;
    };
    for (const auto& l : layers) {
        std::visit(Overloaded{
                       [&](const LineLayer& line) { add(line_entry(line.style), line.legend); },
                       [&](const HorizontalLineLayer& line) { add(line_entry(line.style), line.legend); },
                       [&](const VerticalLineLayer& line) { add(line_entry(line.style), line.legend); },
                       [&](const MarkerLayer& markers) {
                           LegendEntry e;
                           e.swatch = LegendEntry::Swatch::marker;
                           e.marker = markers.style;
                           add(std::move(e), markers.legend);
                       },
                       [&](const BandLayer& band) {
                           LegendEntry e;
                           e.swatch = LegendEntry::Swatch::patch;
                           e.fill = band.fill;
                           add(std::move(e), band.legend);
                       },
                       [&](const CategoryMapLayer& map) {
                           for (const auto& c : map.legend) {
                               if (c.label.empty()) continue;
                               entries.push_back({LegendEntry::Swatch::patch, {}, {}, c.colour, c.label});
                           }
                       },
                       [](const TextLayer&) {},
                       [](const ValueMapLayer&) {},
                   },
                   l.content);
    }
    return entries;
}

// Ticks and labels of a value map's colour bar, and the width the bar takes.
ColourBar make_colour_bar(const ValueMapLayer& map) {
    ColourBar bar;
    bar.colours = resolve_colour_range(map);
    if (bar.colours.logarithmic) {
        bar.ticks = detail::log_ticks(bar.colours.low, bar.colours.high);
        for (double t : bar.ticks) bar.labels.push_back(detail::log_tick_label(t));
    } else {
        bar.ticks = detail::inner_ticks(bar.colours.low, bar.colours.high, 6);
        bar.labels = tick_labels(bar.ticks);
    }
    for (const auto& l : bar.labels) bar.label_width = std::max(bar.label_width, text_width_px(l, tick_font));
    bar.block = bar_gap + bar_width + tick_length + tick_gap + bar.label_width +
                (bar.colours.label.empty() ? 0.0 : 10.0 + label_font);
    return bar;
}

// Where the stacked legend sits in one of the inside corners of the axes.
Rect inside_legend_box(const Frame& f, LegendPosition p, const LegendLayout& stacked) {
    const double inset = 10.0;
    const bool right = p == LegendPosition::top_right || p == LegendPosition::bottom_right;
    const bool lower = p == LegendPosition::bottom_right || p == LegendPosition::bottom_left;
    const double x = right ? f.area.right - inset - stacked.width : f.area.left + inset;
    const double y = lower ? f.area.bottom - inset - stacked.height : f.area.top + inset;
    return Rect{x, y, x + stacked.width, y + stacked.height};
}

// Points (in pixels) where the layers put ink, for finding a legend corner that covers none.
std::vector<Point> ink_samples(const std::vector<Layer>& layers, const Frame& f) {
    std::vector<Point> samples;
    for (const auto& l : layers) {
        std::visit(Overloaded{
                       [&](const LineLayer& layer) {
                           for (const auto& line : pixel_polylines(layer, f)) {
                               for (std::size_t i = 1; i < line.size(); ++i) {
                                   const double length =
                                       std::hypot(line[i].x - line[i - 1].x, line[i].y - line[i - 1].y);
                                   const int steps = std::max(1, static_cast<int>(length / 3.0));
                                   for (int s = 0; s <= steps; ++s) {
                                       const double t = static_cast<double>(s) / steps;
                                       samples.push_back({line[i - 1].x + t * (line[i].x - line[i - 1].x),
                                                          line[i - 1].y + t * (line[i].y - line[i - 1].y)});
                                   }
                               }
                           }
                       },
                       [&](const MarkerLayer& markers) {
                           for (std::size_t i = 0; i < markers.x.size(); ++i)
                               samples.push_back({f.px(markers.x[i]), f.py(markers.y[i])});
                       },
                       [&](const TextLayer& text) {
                           const double w = text_width_px(text.text, text.style.size_px);
                           const double x = f.px(text.x), y = f.py(text.y);
                           const double x0 = text.style.anchor == "middle" ? x - w / 2
                                             : text.style.anchor == "end"  ? x - w
                                                                           : x;
                           for (double fx = 0; fx <= 1.0; fx += 0.25)
                               for (double fy : {0.0, 0.5, 1.0})
                                   samples.push_back({x0 + fx * w, y - fy * text.style.size_px});
                       },
                       [&](const HorizontalLineLayer& line) {
                           for (double x = f.area.left; x <= f.area.right; x += 3.0) samples.push_back({x, f.py(line.y)});
                       },
                       [&](const VerticalLineLayer& line) {
                           for (double y = f.area.top; y <= f.area.bottom; y += 3.0) samples.push_back({f.px(line.x), y});
                       },
                       [](const BandLayer&) {},
                       [](const CategoryMapLayer&) {},
                       [](const ValueMapLayer&) {},
                   },
                   l.content);
    }
    return samples;
}

// The figure's settings and layers, as lay_out reads them.
struct FigureLayoutInput {
    double width_px, height_px;
    const std::string &title, &x_label, &y_label;
    double x_low, x_high, y_low, y_high;
    bool y_inverted;
    LegendPosition legend_position;
    const std::vector<Layer>& layers;
};

// The x and y axes, with as many tick labels as fit without crowding. Maps use their data
// range exactly (tight); other figures widen it to the nearest nice ticks.
std::pair<Axis, Axis> fit_axes(const FigureLayoutInput& in, const Extent& xs, const Extent& ys, bool tight) {
    const double rough_plot_width = in.width_px - 140.0, rough_plot_height = in.height_px - 110.0;
    const int x_target = std::clamp(static_cast<int>(rough_plot_width / 100.0), 5, 10);
    const int y_target = std::clamp(static_cast<int>(rough_plot_height / 62.0), 5, 10);
    Axis x_axis = fitted_axis(in.x_low, in.x_high, xs, tight, x_target, [&](const Axis& a) {
        return a.ticks.size() < 2 ||
               a.widest_label_px + 14.0 < rough_plot_width * (a.ticks[1] - a.ticks[0]) / (a.high - a.low);
    });
    Axis y_axis = fitted_axis(in.y_low, in.y_high, ys, tight, y_target, [&](const Axis& a) {
        return a.ticks.size() < 2 || tick_font * 1.8 < rough_plot_height * (a.ticks[1] - a.ticks[0]) / (a.high - a.low);
    });
    return {std::move(x_axis), std::move(y_axis)};
}

// The space around the axes that the title, tick labels and axis labels need; the colour bar and
// an outside legend add to it (Margins::frame).
struct Margins {
    double left = 0.0, top = 0.0, bottom = 0.0, base_right = 0.0;

    // The plot area when the legend goes to `where`.
    Frame frame(LegendPosition where, const Layout& layout, const FigureLayoutInput& in) const {
        const double bar_block = layout.bar ? layout.bar->block : 0.0;
        double right_margin = base_right, bottom_margin = bottom;
        if (layout.bar) right_margin = std::max(right_margin, bar_block + outer_margin);
        if (where == LegendPosition::outside_right && !layout.entries.empty())
            right_margin = bar_block + 16.0 + layout.stacked.width + outer_margin;
        if (where == LegendPosition::below && !layout.entries.empty()) bottom_margin += 8.0 + layout.flowing.height;
        Frame f;
        // Whole pixels, so that the frame and map cells line up with the pixel grid.
        f.area = {std::round(left), std::round(top), std::round(std::max(left + 20.0, in.width_px - right_margin)),
                  std::round(std::max(top + 20.0, in.height_px - bottom_margin))};
        f.x0 = layout.x_axis.low;
        f.x1 = layout.x_axis.high;
        f.y0 = layout.y_axis.low;
        f.y1 = layout.y_axis.high;
        f.y_inverted = in.y_inverted;
        return f;
    }
};

Margins measure_margins(const FigureLayoutInput& in, const Layout& layout) {
    Margins m;
    m.top = layout.title_lines.empty()
                ? outer_margin + 8.0
                : outer_margin + title_font * 1.25 * static_cast<double>(layout.title_lines.size()) + 10.0;
    const Axis& x_axis = layout.x_axis;
    const double first_x_label_half =
        x_axis.labels.empty() ? 0.0 : text_width_px(x_axis.labels.front(), tick_font) / 2.0;
    const double last_x_label_half = x_axis.labels.empty() ? 0.0 : text_width_px(x_axis.labels.back(), tick_font) / 2.0;
    m.left = std::max(outer_margin + (in.y_label.empty() ? 0.0 : label_font + 10.0) + layout.y_axis.widest_label_px +
                          tick_gap + tick_length,
                      outer_margin + first_x_label_half);
    m.bottom = tick_length + tick_gap + tick_font + (in.x_label.empty() ? 0.0 : 8.0 + label_font) + outer_margin;
    m.base_right = std::max(outer_margin + 12.0, last_x_label_half + 10.0);
    return m;
}

// Where the legend goes: as asked, or (automatic) an inside corner that covers no ink, else
// outside the axes, right of them or below them, whichever leaves them the larger area. A
// figure with a grid map always has its legend outside.
LegendPosition place_legend(const FigureLayoutInput& in, const Layout& layout, const Margins& margins,
                            bool has_map) {
    if (layout.entries.empty()) return LegendPosition::hidden;
    if (in.legend_position != LegendPosition::automatic) return in.legend_position;
    const auto outside = [&] {
        const Rect right = margins.frame(LegendPosition::outside_right, layout, in).area;
        const Rect below = margins.frame(LegendPosition::below, layout, in).area;
        return right.width() * right.height() >= below.width() * below.height() ? LegendPosition::outside_right
                                                                                 : LegendPosition::below;
    };
    if (has_map) return outside();
    const Frame f = margins.frame(LegendPosition::hidden, layout, in);
    const std::vector<Point> samples = ink_samples(in.layers, f);
    const LegendLayout& stacked = layout.stacked;
    const bool fits_inside = stacked.width < f.area.width() * 0.6 && stacked.height < f.area.height() * 0.7;
    if (fits_inside) {
        for (LegendPosition p : {LegendPosition::top_right, LegendPosition::top_left, LegendPosition::bottom_right,
                                 LegendPosition::bottom_left}) {
            const Rect box = inside_legend_box(f, p, stacked);
            const bool covers =
                std::any_of(samples.begin(), samples.end(), [&](const Point& s) { return box.contains(s.x, s.y, 4.0); });
            if (!covers) return p;
        }
    }
    return outside();
}

// Ranges, ticks, colour bar, margins, legend entries and the legend's place, and the plot area
// that results.
Layout lay_out(const FigureLayoutInput& in) {
    Layout layout;
    const Layer* map = grid_map_layer(in.layers);
    if (map)
        if (const auto* values = layer_as<ValueMapLayer>(*map)) layout.bar = make_colour_bar(*values);
    const auto [xs, ys] = data_extents(in.layers);
    layout.entries = legend_entries(in.layers);
    layout.stacked = stacked_legend(layout.entries);
    std::tie(layout.x_axis, layout.y_axis) = fit_axes(in, xs, ys, map != nullptr);
    layout.title_lines =
        in.title.empty() ? std::vector<std::string>{} : wrap_text(in.title, title_font, in.width_px - 2 * outer_margin);
    const Margins margins = measure_margins(in, layout);
    // The legend under the axes spans at most their width (known well enough before the layout).
    layout.flowing = flowing_legend(layout.entries, in.width_px - margins.left - margins.base_right);
    layout.x_label_bottom = margins.bottom - outer_margin;
    layout.where = place_legend(in, layout, margins, map != nullptr);
    layout.frame = margins.frame(layout.where, layout, in);
    return layout;
}

// ---------------------------------------------------------------------------------------------
// Drawing a laid-out figure, back to front

void draw_bands(Svg& svg, const std::vector<Layer>& layers, const Frame& frame) {
    const Rect& area = frame.area;
    for (const auto& l : layers) {
        const auto* band = layer_as<BandLayer>(l);
        if (!band) continue;
        // Limits clamped to the axis range first, so infinite limits reach the edge.
        const double low = std::max(band->y_low, frame.y0), high = std::min(band->y_high, frame.y1);
        if (!(high > low)) continue;
        double y0 = frame.py(high), y1 = frame.py(low);
        if (y0 > y1) std::swap(y0, y1);
        if (!(y1 > y0)) continue;
        svg.raw("<rect").attr("x", area.left).attr("y", y0).attr("width", area.width()).attr("height", y1 - y0);
        svg.attr("fill", band->fill).raw("/>\n");
    }
}

void draw_grid_lines(Svg& svg, const Layout& layout) {
    const Frame& frame = layout.frame;
    const Rect& area = frame.area;
    svg.raw("<g").attr("stroke", grid_colour).raw(" stroke-width=\"1\" shape-rendering=\"crispEdges\">\n");
    for (double t : layout.x_axis.ticks) {
        const double x = frame.px(t);
        if (x <= area.left + 0.5 || x >= area.right - 0.5) continue;
        svg.raw("<line").attr("x1", x).attr("y1", area.top).attr("x2", x).attr("y2", area.bottom).raw("/>\n");
    }
    for (double t : layout.y_axis.ticks) {
        const double y = frame.py(t);
        if (y <= area.top + 0.5 || y >= area.bottom - 0.5) continue;
        svg.raw("<line").attr("x1", area.left).attr("y1", y).attr("x2", area.right).attr("y2", y).raw("/>\n");
    }
    svg.raw("</g>\n");
}

void draw_category_map(Svg& svg, const CategoryMapLayer& map, const Frame& frame) {
    const std::size_t nx = map.grid.nx();
    draw_cells(
        svg, map.grid, frame, [&](std::size_t ix, std::size_t iy) { return map.categories[iy * nx + ix]; },
        [&](int key) { return map.legend[static_cast<std::size_t>(key)].colour; });
}

void draw_value_map(Svg& svg, const ValueMapLayer& map, const ColourRange& colours, const Frame& frame) {
    const std::size_t nx = map.grid.nx();
    std::vector<int> levels(map.values.size());
    for (std::size_t i = 0; i < levels.size(); ++i) levels[i] = colours.level(map.values[i]);
    draw_cells(
        svg, map.grid, frame, [&](std::size_t ix, std::size_t iy) { return levels[iy * nx + ix]; },
        [](int key) { return level_colour(key); });
}

void draw_line(Svg& svg, const LineLayer& layer, const Frame& frame) {
    for (const auto& line : pixel_polylines(layer, frame)) {
        svg.raw("<polyline fill=\"none\"");
        stroke_attributes(svg, layer.style);
        svg.raw(layer.style.dash.empty() ? " stroke-linecap=\"round\"" : " stroke-linecap=\"butt\"");
        svg.raw(" stroke-linejoin=\"round\" points=\"");
        for (std::size_t i = 0; i < line.size(); ++i) {
            if (i > 0) svg.raw(" ");
            svg.num(line[i].x).raw(",").num(line[i].y);
        }
        svg.raw("\"/>\n");
    }
}

// A horizontal (at data y = at) or vertical (at data x = at) line across the axes.
void draw_reference_line(Svg& svg, bool horizontal, double at, const LineStyle& style, const Frame& frame) {
    const Rect& area = frame.area;
    const double p = horizontal ? frame.py(at) : frame.px(at);
    if (!std::isfinite(p)) return;
    if (horizontal ? (p < area.top - 1 || p > area.bottom + 1) : (p < area.left - 1 || p > area.right + 1)) return;
    svg.raw("<line");
    if (horizontal) svg.attr("x1", area.left).attr("y1", p).attr("x2", area.right).attr("y2", p);
    else svg.attr("x1", p).attr("y1", area.top).attr("x2", p).attr("y2", area.bottom);
    stroke_attributes(svg, style);
    svg.raw("/>\n");
}

// Lines and reference lines, in the order they were added (clipped to the axes by the caller).
void draw_lines(Svg& svg, const std::vector<Layer>& layers, const Frame& frame) {
    for (const auto& l : layers) {
        if (const auto* line = layer_as<LineLayer>(l)) draw_line(svg, *line, frame);
        else if (const auto* h = layer_as<HorizontalLineLayer>(l)) draw_reference_line(svg, true, h->y, h->style, frame);
        else if (const auto* v = layer_as<VerticalLineLayer>(l)) draw_reference_line(svg, false, v->x, v->style, frame);
    }
}

// Markers outside the axes are left out.
void draw_markers(Svg& svg, const MarkerLayer& markers, const Frame& frame) {
    open_marker_group(svg, markers.style);
    svg.raw("\n");
    for (std::size_t i = 0; i < markers.x.size(); ++i) {
        if (!std::isfinite(markers.x[i]) || !std::isfinite(markers.y[i])) continue;
        const double x = frame.px(markers.x[i]), y = frame.py(markers.y[i]);
        if (!frame.area.contains(x, y, 0.5)) continue;
        draw_marker(svg, markers.style, x, y);
        svg.raw("\n");
    }
    svg.raw("</g>\n");
}

void draw_text(Svg& svg, const TextLayer& text, const Frame& frame) {
    const double x = frame.px(text.x), y = frame.py(text.y);
    if (!std::isfinite(x) || !std::isfinite(y) || !frame.area.contains(x, y, 1.0)) return;
    const std::string& anchor = text.style.anchor;
    const char* a = anchor == "middle" ? "middle" : anchor == "end" ? "end" : "start";
    svg.text_element(x, y, text.text, std::max(1.0, text.style.size_px), a, text.style.colour, text.style.bold);
}

// Markers and text sit above the clipped layers, in the order they were added.
void draw_markers_and_text(Svg& svg, const std::vector<Layer>& layers, const Frame& frame) {
    for (const auto& l : layers) {
        if (const auto* markers = layer_as<MarkerLayer>(l)) draw_markers(svg, *markers, frame);
        else if (const auto* text = layer_as<TextLayer>(l)) draw_text(svg, *text, frame);
    }
}

void draw_frame_and_ticks(Svg& svg, const Layout& layout) {
    const Frame& frame = layout.frame;
    const Rect& area = frame.area;
    svg.raw("<g").attr("stroke", axis_colour).raw(" stroke-width=\"1\" fill=\"none\" shape-rendering=\"crispEdges\">\n");
    svg.raw("<rect").attr("x", area.left).attr("y", area.top).attr("width", area.width()).attr("height", area.height()).raw("/>\n");
    svg.raw("<path d=\"");
    for (double t : layout.x_axis.ticks) {
        const double x = frame.px(t);
        svg.raw("M").num(x).raw(" ").num(area.bottom).raw("v").num(tick_length);
    }
    for (double t : layout.y_axis.ticks) {
        const double y = frame.py(t);
        svg.raw("M").num(area.left).raw(" ").num(y).raw("h").num(-tick_length);
    }
    svg.raw("\"/>\n</g>\n");
}

void draw_axis_labels(Svg& svg, const Layout& layout, const std::string& x_label, const std::string& y_label) {
    const Frame& frame = layout.frame;
    const Rect& area = frame.area;
    svg.raw("<g").attr("font-size", tick_font, 1).attr("fill", tick_label_colour).raw(">\n");
    const double x_label_baseline = area.bottom + tick_length + tick_gap + ascent * tick_font;
    for (std::size_t i = 0; i < layout.x_axis.ticks.size(); ++i) {
        svg.raw("<text").attr("x", frame.px(layout.x_axis.ticks[i])).attr("y", x_label_baseline);
        svg.raw(" text-anchor=\"middle\">").text(layout.x_axis.labels[i]).raw("</text>\n");
    }
    for (std::size_t i = 0; i < layout.y_axis.ticks.size(); ++i) {
        svg.raw("<text").attr("x", area.left - tick_length - tick_gap).attr("y", frame.py(layout.y_axis.ticks[i]) + 0.36 * tick_font);
        svg.raw(" text-anchor=\"end\">").text(layout.y_axis.labels[i]).raw("</text>\n");
    }
    svg.raw("</g>\n");
    if (!x_label.empty()) {
        const double baseline = x_label_baseline + descent * tick_font + 8.0 + ascent * label_font;
        svg.text_element((area.left + area.right) / 2, baseline, x_label, label_font, "middle", label_colour);
    }
    if (!y_label.empty()) {
        const double x = outer_margin + ascent * label_font, y = (area.top + area.bottom) / 2;
        const std::string transform = "translate(" + number(x) + "," + number(y) + ") rotate(-90)";
        svg.text_element(0, 0, y_label, label_font, "middle", label_colour, false, transform);
    }
}

// Centred over the axes when it fits there, else over the figure.
void draw_title(Svg& svg, const Layout& layout, double width_px) {
    const Rect& area = layout.frame.area;
    for (std::size_t i = 0; i < layout.title_lines.size(); ++i) {
        const double w = text_width_px(layout.title_lines[i], title_font, true);
        double centre = (area.left + area.right) / 2;
        if (centre - w / 2 < outer_margin || centre + w / 2 > width_px - outer_margin) centre = width_px / 2;
        const double baseline = outer_margin + ascent * title_font + title_font * 1.25 * static_cast<double>(i);
        svg.text_element(centre, baseline, layout.title_lines[i], title_font, "middle", label_colour, true);
    }
}

// One band per colour level, exactly as the map quantises them.
void draw_colour_bar(Svg& svg, const ColourBar& bar, const Rect& area) {
    const ColourRange& colours = bar.colours;
    const double x0 = area.right + bar_gap, h = area.height();
    svg.raw("<g shape-rendering=\"crispEdges\">\n");
    for (int level = 0; level < colour_levels; ++level) {
        const double y_top = std::round(area.bottom - h * (level + 1) / colour_levels);
        const double y_bottom = std::round(area.bottom - h * level / colour_levels);
        if (y_bottom <= y_top) continue;
        svg.raw("<rect").attr("x", x0).attr("y", y_top).attr("width", bar_width).attr("height", y_bottom - y_top);
        svg.attr("fill", level_colour(level)).raw("/>\n");
    }
    svg.raw("<rect").attr("x", x0).attr("y", area.top).attr("width", bar_width).attr("height", h);
    svg.raw(" fill=\"none\"").attr("stroke", axis_colour).raw("/>\n<path").attr("stroke", axis_colour).raw(" d=\"");
    std::vector<double> tick_y;
    for (double t : bar.ticks) {
        const double f = colours.fraction(t);
        tick_y.push_back(area.bottom - f * h);
        svg.raw("M").num(x0 + bar_width).raw(" ").num(tick_y.back()).raw("h").num(tick_length);
    }
    if (colours.logarithmic) {
        // Unlabelled ticks at 2..9 x 10^k show the scale is logarithmic.
        const int first = static_cast<int>(std::floor(std::log10(colours.low)));
        const int last = static_cast<int>(std::ceil(std::log10(colours.high)));
        if (last - first <= 8) {
            for (int e = first; e <= last; ++e) {
                for (int m = 2; m <= 9; ++m) {
                    const double v = m * std::pow(10.0, e);
                    if (v < colours.low || v > colours.high) continue;
                    svg.raw("M").num(x0 + bar_width).raw(" ").num(area.bottom - colours.fraction(v) * h).raw("h3");
                }
            }
        }
    }
    svg.raw("\"/>\n</g>\n");
    svg.raw("<g").attr("font-size", tick_font, 1).attr("fill", tick_label_colour).raw(">\n");
    for (std::size_t i = 0; i < bar.ticks.size(); ++i) {
        svg.raw("<text").attr("x", x0 + bar_width + tick_length + tick_gap).attr("y", tick_y[i] + 0.36 * tick_font);
        svg.raw(">").text(bar.labels[i]).raw("</text>\n");
    }
    svg.raw("</g>\n");
    if (!colours.label.empty()) {
        const double x = x0 + bar_width + tick_length + tick_gap + bar.label_width + 10.0 + ascent * label_font;
        const std::string transform =
            "translate(" + number(x) + "," + number((area.top + area.bottom) / 2) + ") rotate(-90)";
        svg.text_element(0, 0, colours.label, label_font, "middle", label_colour, false, transform);
    }
}

// The legend's box for the chosen position.
Rect legend_box(const Layout& layout) {
    const Rect& area = layout.frame.area;
    const LegendLayout& entries = layout.where == LegendPosition::below ? layout.flowing : layout.stacked;
    if (layout.where == LegendPosition::outside_right) {
        const double x = area.right + (layout.bar ? layout.bar->block : 0.0) + 16.0;
        return {x, area.top, x + entries.width, area.top + entries.height};
    }
    if (layout.where == LegendPosition::below) {
        const double x = std::max(outer_margin, (area.left + area.right - entries.width) / 2);
        const double y = area.bottom + layout.x_label_bottom + 8.0;
        return {x, y, x + entries.width, y + entries.height};
    }
    return inside_legend_box(layout.frame, layout.where, layout.stacked);
}

void draw_legend_swatch(Svg& svg, const LegendEntry& e, double sx, double cy) {
    const bool light = e.swatch == LegendEntry::Swatch::line     ? is_light_colour(e.line.colour)
                       : e.swatch == LegendEntry::Swatch::marker ? is_light_colour(e.marker.colour)
                                                                 : false;
    if (light) {  // a grey backing, as light lines are meant to be seen on dark maps
        svg.raw("<rect").attr("x", sx).attr("y", cy - 7).attr("width", legend_swatch).attr("height", 14);
        svg.raw(" fill=\"#8c8c8c\"/>\n");
    }
    switch (e.swatch) {
        case LegendEntry::Swatch::line: {
            LineStyle style = e.line;
            style.width_px = std::clamp(style.width_px, 1.0, 4.0);
            style.opacity = std::max(style.opacity, 0.6);
            svg.raw("<line").attr("x1", sx).attr("y1", cy).attr("x2", sx + legend_swatch).attr("y2", cy);
            stroke_attributes(svg, style);
            svg.raw("/>\n");
            break;
        }
        case LegendEntry::Swatch::marker: {
            MarkerStyle style = e.marker;
            style.radius_px = std::clamp(style.radius_px, 2.5, 6.0);
            open_marker_group(svg, style);
            draw_marker(svg, style, sx + legend_swatch / 2, cy);
            svg.raw("</g>\n");
            break;
        }
        case LegendEntry::Swatch::patch:
            svg.raw("<rect").attr("x", sx + 2).attr("y", cy - 6).attr("width", legend_swatch - 4).attr("height", 12);
            svg.attr("fill", e.fill).raw(" stroke=\"#999999\" stroke-width=\"0.5\"/>\n");
            break;
    }
}

void draw_legend(Svg& svg, const Layout& layout) {
    const Rect box = legend_box(layout);
    const LegendLayout& placed = layout.where == LegendPosition::below ? layout.flowing : layout.stacked;
    svg.raw("<g>\n<rect").attr("x", box.left).attr("y", box.top).attr("width", box.width()).attr("height", box.height());
    svg.raw(" rx=\"3\" fill=\"#ffffff\" fill-opacity=\"0.92\" stroke=\"#c8c8c8\"/>\n");
    for (std::size_t i = 0; i < layout.entries.size(); ++i) {
        const LegendEntry& e = layout.entries[i];
        const double cy = box.top + placed.entries[i].y;
        const double sx = box.left + placed.entries[i].x;
        draw_legend_swatch(svg, e, sx, cy);
        svg.text_element(sx + legend_swatch + legend_gap, cy + 0.36 * legend_font, e.label, legend_font, "start",
                         label_colour);
    }
    svg.raw("</g>\n");
}

}  // namespace

std::string Figure::svg_body(const std::string& id_prefix) const {
    const Layout layout = lay_out({width_px_, height_px_, title_, x_label_, y_label_, x_low_, x_high_, y_low_, y_high_,
                                   y_inverted_, legend_position_, layers_});
    const Frame& frame = layout.frame;
    const Rect& area = frame.area;

    std::string out;
    out.reserve(1 << 16);
    Svg svg(out);
    const std::string clip_id = id_prefix + "-axes";
    svg.raw("<g font-family=\"sans-serif\">\n");
    svg.raw("<defs><clipPath").attr("id", clip_id).raw("><rect").attr("x", area.left).attr("y", area.top);
    svg.attr("width", area.width()).attr("height", area.height()).raw("/></clipPath></defs>\n");

    // Clipped to the axes: bands under the grid, then the grid, the map and the lines.
    svg.raw("<g clip-path=\"url(#").text(clip_id).raw(")\">\n");
    draw_bands(svg, layers_, frame);
    if (grid_) draw_grid_lines(svg, layout);
    if (const Layer* map = grid_map_layer(layers_)) {
        if (const auto* categories = layer_as<CategoryMapLayer>(*map)) draw_category_map(svg, *categories, frame);
        else draw_value_map(svg, std::get<ValueMapLayer>(map->content), layout.bar->colours, frame);
    }
    draw_lines(svg, layers_, frame);
    svg.raw("</g>\n");

    draw_markers_and_text(svg, layers_, frame);
    draw_frame_and_ticks(svg, layout);
    draw_axis_labels(svg, layout, x_label_, y_label_);
    draw_title(svg, layout, width_px_);
    if (layout.bar) draw_colour_bar(svg, *layout.bar, area);
    if (layout.where != LegendPosition::hidden && !layout.entries.empty()) draw_legend(svg, layout);
    svg.raw("</g>\n");
    return out;
}

// ---------------------------------------------------------------------------------------------
// Several figures in one document

std::string compose_figures(const std::vector<const Figure*>& figures, int columns, const std::string& title) {
    if (figures.empty()) throw std::invalid_argument("compose_figures: no figures");
    for (const Figure* f : figures)
        if (f == nullptr) throw std::invalid_argument("compose_figures: a figure is missing (null)");
    const std::size_t n = figures.size();
    const std::size_t cols = std::clamp<std::size_t>(columns < 1 ? 1 : static_cast<std::size_t>(columns), 1, n);
    const std::size_t rows = (n + cols - 1) / cols;
    std::vector<double> column_width(cols, 0.0), row_height(rows, 0.0);
    for (std::size_t i = 0; i < n; ++i) {
        column_width[i % cols] = std::max(column_width[i % cols], figures[i]->width_px());
        row_height[i / cols] = std::max(row_height[i / cols], figures[i]->height_px());
    }
    constexpr double heading_font = 21.0;
    double width = 0.0, height = 0.0;
    for (double w : column_width) width += w;
    for (double h : row_height) height += h;
    const std::vector<std::string> heading =
        title.empty() ? std::vector<std::string>{} : wrap_text(title, heading_font, width - 2 * outer_margin);
    const double heading_height = heading.empty() ? 0.0 : outer_margin + heading_font * 1.3 * static_cast<double>(heading.size()) + 4.0;
    height += heading_height;

    std::string out = document_open(width, height, title);
    Svg svg(out);
    for (std::size_t i = 0; i < heading.size(); ++i) {
        svg.raw("<text font-family=\"sans-serif\" font-weight=\"bold\"").attr("font-size", heading_font, 1);
        svg.attr("x", width / 2).attr("y", outer_margin + ascent * heading_font + heading_font * 1.3 * static_cast<double>(i));
        svg.raw(" text-anchor=\"middle\"").attr("fill", label_colour).raw(">").text(heading[i]).raw("</text>\n");
    }
    double y = heading_height;
    for (std::size_t r = 0; r < rows; ++r) {
        double x = 0.0;
        for (std::size_t c = 0; c < cols && r * cols + c < n; ++c) {
            const Figure& f = *figures[r * cols + c];
            // Centred in its cell when the cell is larger than the figure.
            const double dx = x + (column_width[c] - f.width_px()) / 2, dy = y + (row_height[r] - f.height_px()) / 2;
            svg.raw("<g transform=\"translate(").num(dx).raw(",").num(dy).raw(")\">\n");
            out += f.svg_body("fig" + std::to_string(r * cols + c + 1));
            svg.raw("</g>\n");
            x += column_width[c];
        }
        y += row_height[r];
    }
    out += "</svg>\n";
    return out;
}

void write_composed_svg(const std::string& path, const std::vector<const Figure*>& figures, int columns,
                        const std::string& title) {
    write_text_file(path, compose_figures(figures, columns, title));
}

}  // namespace firnray::plot
