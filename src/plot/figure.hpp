// SVG plots written by firnray itself: one set of axes per Figure, with ticks, labels in units,
// a title naming the model, a legend or colour scale. Line, marker, band and grid-map layers.
// Figures can be placed side by side or stacked into one SVG document (compose_figures).
#pragma once

#include <limits>
#include <span>
#include <string>
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
    std::string shape = "circle";    // "circle", "square", "triangle", "cross"
};

// A regular or irregular grid of cells: nx = x_edges.size() - 1 columns, ny = y_edges.size() - 1
// rows; cell (ix, iy) spans [x_edges[ix], x_edges[ix+1]] x [y_edges[iy], y_edges[iy+1]] and its
// value is stored at index iy * nx + ix.
struct CellGrid {
    std::vector<double> x_edges, y_edges;
    std::size_t nx() const { return x_edges.empty() ? 0 : x_edges.size() - 1; }
    std::size_t ny() const { return y_edges.empty() ? 0 : y_edges.size() - 1; }
};

struct Category {
    std::string label;   // shown in the legend
    std::string colour;
};

struct ColourScale {
    double low = std::numeric_limits<double>::quiet_NaN();   // NaN: from the data
    double high = std::numeric_limits<double>::quiet_NaN();
    std::string label;        // with units, e.g. "time between paths (ns)"
    bool logarithmic = false;
};

class Figure {
public:
    explicit Figure(double width_px = 960, double height_px = 600);

    Figure& title(std::string text);
    Figure& x_label(std::string text);  // include units: "horizontal distance (m)"
    Figure& y_label(std::string text);
    Figure& x_range(double low, double high);  // default: from the data, with nice rounding
    Figure& y_range(double low, double high);

    Figure& add_line(std::span<const double> x, std::span<const double> y, const LineStyle& style,
                     std::string legend = "");
    Figure& add_markers(std::span<const double> x, std::span<const double> y, const MarkerStyle& style,
                        std::string legend = "");
    // A shaded horizontal band (e.g. the air above z = 0), drawn under everything else.
    Figure& add_y_band(double y_low, double y_high, std::string fill, std::string legend = "");
    Figure& add_hline(double y, const LineStyle& style, std::string legend = "");
    Figure& add_vline(double x, const LineStyle& style, std::string legend = "");
    Figure& add_text(double x, double y, std::string text);  // data coordinates

    // Grid maps (at most one per figure). Cells with category -1 or a NaN value are left blank.
    // Equal neighbouring cells in a row are merged into one rectangle, so 1000 x 500 grids stay small.
    Figure& category_map(CellGrid grid, std::vector<int> categories, std::vector<Category> legend);
    Figure& value_map(CellGrid grid, std::vector<double> values, ColourScale scale);

    std::string svg() const;  // a complete standalone SVG document

    // (implementation detail, public for compose_figures)
    double width_px() const { return width_px_; }
    double height_px() const { return height_px_; }
    std::string svg_body() const;  // the drawing without the <svg> wrapper

private:
    struct Layer;
    double width_px_, height_px_;
    std::string title_, x_label_, y_label_;
    double x_low_ = std::numeric_limits<double>::quiet_NaN(), x_high_ = x_low_;
    double y_low_ = x_low_, y_high_ = x_low_;
    std::vector<Layer> layers_;
    // (the implementation may add members)
};

// Several figures in one SVG document, laid out in rows of `columns`, with an overall title.
std::string compose_figures(const std::vector<const Figure*>& figures, int columns, const std::string& title = "");

// "Nice" tick positions (1, 2, 5 x 10^k steps) covering [low, high] with about `target` ticks.
std::vector<double> nice_ticks(double low, double high, int target = 6);

}  // namespace firnray::plot
