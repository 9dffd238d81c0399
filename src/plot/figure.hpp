// A generic SVG figure library: one set of axes per Figure, with ticks, labels in units, a title,
// a legend or colour scale, and layers of lines, markers, bands, reference lines, text and grid
// maps. It knows nothing of what is plotted: the output layer (src/output/) configures it.
// Figures can be placed side by side or stacked into one SVG document (compose_figures).
#pragma once

#include <cstddef>
#include <limits>
#include <span>
#include <string>
#include <string_view>
#include <vector>

namespace firnray::plot {

struct LineStyle {
    std::string colour = "#1f77b4";  // any CSS colour
    double width_px = 1.5;
    std::string dash;                // SVG stroke-dasharray, e.g. "6 3"; empty = solid
    double opacity = 1.0;
};

struct MarkerStyle {
    std::string colour = "#d62728";
    double radius_px = 3.0;
    std::string shape = "circle";    // "circle", "square", "diamond", "triangle", "cross", "plus"
};

struct TextStyle {
    std::string colour = "#222222";
    double size_px = 13.0;
    std::string anchor = "start";    // "start", "middle" or "end" (horizontal alignment at x)
    bool bold = false;
};

// A regular or irregular grid of cells: nx = x_edges.size() - 1 columns, ny = y_edges.size() - 1
// rows; cell (ix, iy) spans [x_edges[ix], x_edges[ix+1]] x [y_edges[iy], y_edges[iy+1]] and its
// value is stored at index iy * nx + ix. Edges must be finite and strictly monotonic (either way).
struct CellGrid {
    std::vector<double> x_edges, y_edges;
    std::size_t nx() const { return x_edges.empty() ? 0 : x_edges.size() - 1; }
    std::size_t ny() const { return y_edges.empty() ? 0 : y_edges.size() - 1; }
};

struct Category {
    std::string label;   // shown in the legend (empty: not listed)
    std::string colour;
};

struct ColourScale {
    double low = std::numeric_limits<double>::quiet_NaN();   // NaN: from the data
    double high = std::numeric_limits<double>::quiet_NaN();
    std::string label;        // with units, e.g. "time between paths (ns)"
    bool logarithmic = false; // cells <= 0 are then left blank
};

// Where the legend box goes. `automatic` picks an inside corner that covers no data, or else
// places the legend outside the axes (always outside when a grid map fills them): right of them
// or below them, whichever leaves the axes more room.
enum class LegendPosition { automatic, top_right, top_left, bottom_right, bottom_left, outside_right, below, hidden };

namespace detail {
struct Layer;  // one line, marker set, band, reference line, text or grid map (figure.cpp)
}

class Figure {
public:
    explicit Figure(double width_px = 960, double height_px = 600);
    ~Figure();
    Figure(const Figure&);
    Figure(Figure&&) noexcept;
    Figure& operator=(const Figure&);
    Figure& operator=(Figure&&) noexcept;

    Figure& title(std::string text);
    Figure& x_label(std::string text);  // include units: "horizontal distance (m)"
    Figure& y_label(std::string text);
    // Explicit ranges; low must be below high (DataInputError otherwise). Default: from the data,
    // widened to the nearest nice ticks (maps: the data range exactly).
    Figure& x_range(double low, double high);
    Figure& y_range(double low, double high);
    Figure& invert_y(bool inverted = true);  // y increasing downward
    Figure& legend_position(LegendPosition where);
    Figure& grid(bool shown = true);         // light grid lines at the ticks (default on)

    Figure& add_line(std::span<const double> x, std::span<const double> y, const LineStyle& style,
                     std::string legend = "");  // a NaN in x or y breaks the line
    Figure& add_markers(std::span<const double> x, std::span<const double> y, const MarkerStyle& style,
                        std::string legend = "");
    // A shaded horizontal band across the axes, drawn under everything else.
    // Either limit may be infinite: the band then reaches the edge of the axes.
    Figure& add_y_band(double y_low, double y_high, std::string fill, std::string legend = "");
    Figure& add_hline(double y, const LineStyle& style, std::string legend = "");
    Figure& add_vline(double x, const LineStyle& style, std::string legend = "");
    Figure& add_text(double x, double y, std::string text);  // data coordinates
    Figure& add_text(double x, double y, std::string text, const TextStyle& style);

    // Grid maps (at most one per figure). Cells with category -1 or a NaN value are left blank.
    // Equal neighbouring cells in a row are merged into one rectangle, so 1000 x 500 grids stay small.
    // Category c is drawn in legend[c].colour. Value maps use 64 levels of a viridis-like ramp.
    Figure& category_map(CellGrid grid, std::vector<int> categories, std::vector<Category> legend);
    Figure& value_map(CellGrid grid, std::vector<double> values, ColourScale scale);

    std::string svg() const;  // a complete standalone SVG document
    void write_svg(const std::string& path) const;  // whole or not at all (OutputError on failure)

    // (implementation detail, public for compose_figures)
    double width_px() const { return width_px_; }
    double height_px() const { return height_px_; }
    std::string svg_body() const;  // the drawing without the <svg> wrapper
    // Element ids (clip paths) start with id_prefix, so several bodies can share one document.
    std::string svg_body(const std::string& id_prefix) const;

private:
    double width_px_, height_px_;
    std::string title_, x_label_, y_label_;
    double x_low_ = std::numeric_limits<double>::quiet_NaN(), x_high_ = x_low_;
    double y_low_ = x_low_, y_high_ = x_low_;
    std::vector<detail::Layer> layers_;
    bool y_inverted_ = false;
    bool grid_ = true;
    LegendPosition legend_position_ = LegendPosition::automatic;
};

// Several figures in one SVG document, laid out in rows of `columns`, with an overall title.
std::string compose_figures(const std::vector<const Figure*>& figures, int columns, const std::string& title = "");
// The same, written atomically to path ("-": standard output).
void write_composed_svg(const std::string& path, const std::vector<const Figure*>& figures, int columns,
                        const std::string& title = "");

// "Nice" tick positions (1, 2, 5 x 10^k steps) covering [low, high] with about `target` ticks:
// the first tick is <= low and the last >= high. low == high gives ticks around that value;
// non-finite input gives no ticks.
std::vector<double> nice_ticks(double low, double high, int target = 6);

// Tick labels for one axis, formatted alike with as few digits as the step needs: "0.3" (never
// "0.30000000000000004"), "2500" (thousands plain), "−5" (a true minus sign), "2×10⁻⁵" for
// very small or very large values.
std::vector<std::string> tick_labels(const std::vector<double>& ticks);

// Colour helpers. palette_colour: distinct colours for lines and categories (Okabe & Ito's
// colour-blind-safe set, reordered so that the first ones show well on white), cycling.
// sequential_colour: t in [0, 1] on a perceptually ordered dark-blue-to-yellow ramp (viridis-like).
std::string palette_colour(std::size_t index);
std::string sequential_colour(double t);

// Text made safe for SVG/XML: & < > " ' escaped, control characters dropped.
std::string xml_escape(std::string_view text);

}  // namespace firnray::plot
