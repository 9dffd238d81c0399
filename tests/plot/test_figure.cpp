// SVG figures: well-formed documents that librsvg renders (an independent SVG implementation,
// run as rsvg-convert), escaped text, compact grid maps, blank cells, clipping and layout.
#include <catch2/catch.hpp>

#include <cmath>
#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <limits>
#include <regex>
#include <stdexcept>
#include <string>
#include <vector>

#include "core/errors.hpp"
#include "plot/figure.hpp"
#include "plot/plot_detail.hpp"
#include "support/run_cli.hpp"

using namespace firnray;
using namespace firnray::plot;
namespace fs = std::filesystem;

namespace {

const double not_a_number = std::numeric_limits<double>::quiet_NaN();

std::size_t count(const std::string& text, const std::string& what) {
    std::size_t n = 0;
    for (auto at = text.find(what); at != std::string::npos; at = text.find(what, at + what.size())) ++n;
    return n;
}

struct Rendered {
    bool ok = false;
    std::uintmax_t png_bytes = 0;
    unsigned width = 0, height = 0;
    std::string errors;
};

// Renders the SVG with rsvg-convert (librsvg); FAILs the test when the tool is missing, since the
// set-up script installs it (Debian package librsvg2-bin).
Rendered render_png(const std::string& svg, const std::string& name) {
    if (std::system("command -v rsvg-convert >/dev/null 2>&1") != 0) {
        FAIL("rsvg-convert is not installed: install the Debian package librsvg2-bin (the set-up script "
             "does) so that the plot tests can check the SVG renders");
    }
    const std::string dir = test::temp_folder("plot");
    const std::string svg_path = dir + "/" + name + ".svg", png_path = dir + "/" + name + ".png";
    const std::string err_path = dir + "/" + name + ".err";
    test::write_file(svg_path, svg);
    const std::string command = "rsvg-convert '" + svg_path + "' -o '" + png_path + "' 2>'" + err_path + "'";
    Rendered r;
    r.ok = std::system(command.c_str()) == 0;
    r.errors = test::read_file(err_path);
    if (fs::exists(png_path)) {
        r.png_bytes = fs::file_size(png_path);
        const std::string png = test::read_file(png_path);
        // PNG signature, then the IHDR chunk with big-endian width and height.
        if (png.size() > 24 && png.compare(0, 8, "\x89PNG\r\n\x1a\n") == 0) {
            const auto be32 = [&](std::size_t at) {
                unsigned v = 0;
                for (std::size_t i = 0; i < 4; ++i) v = (v << 8) | static_cast<unsigned char>(png[at + i]);
                return v;
            };
            r.width = be32(16);
            r.height = be32(20);
        }
    }
    return r;
}

CellGrid regular_grid(std::size_t nx, std::size_t ny, double x0, double x1, double y0, double y1) {
    CellGrid g;
    for (std::size_t i = 0; i <= nx; ++i) g.x_edges.push_back(x0 + (x1 - x0) * static_cast<double>(i) / nx);
    for (std::size_t j = 0; j <= ny; ++j) g.y_edges.push_back(y0 + (y1 - y0) * static_cast<double>(j) / ny);
    return g;
}

// Three regions with curved boundaries, like a path-count map of a source in firn.
std::vector<int> curved_regions(std::size_t nx, std::size_t ny) {
    std::vector<int> c(nx * ny);
    for (std::size_t j = 0; j < ny; ++j) {
        for (std::size_t i = 0; i < nx; ++i) {
            const double x = (i + 0.5) / nx * 1000.0, z = -200.0 + (j + 0.5) / ny * 200.0;
            const double boundary = -30.0 - 0.00015 * x * x;
            c[j * nx + i] = z > boundary ? 0 : (z > boundary - 40.0 + 10.0 * std::sin(x / 80.0) ? 2 : 1);
        }
    }
    return c;
}

const std::vector<Category> three_categories = {
    {"no path", "#d9d9d9"}, {"two paths", "#56b4e9"}, {"three paths", "#e69f00"}};

// A figure with every kind of layer except a value map.
Figure every_layer_figure() {
    Figure f;
    f.title("Every layer").x_label("horizontal distance (m)").y_label("z (m)");
    f.add_y_band(0.0, std::numeric_limits<double>::infinity(), "#e3f0fb", "air");
    const std::size_t nx = 50, ny = 20;
    auto categories = curved_regions(nx, ny);
    categories[5] = -1;
    f.category_map(regular_grid(nx, ny, 0, 1000, -200, 0), categories, three_categories);
    const std::vector<double> x = {0, 100, not_a_number, 300, 400, 2000}, z = {-10, -50, -60, -80, -100, -150};
    f.add_line(x, z, LineStyle{"#0072b2", 2.0, "", 1.0}, "ray");
    f.add_line(std::vector<double>{0, 1000}, std::vector<double>{-120, -20}, LineStyle{"#d55e00", 1.5, "6 3", 0.7},
               "dashed");
    int k = 0;
    for (const char* shape : {"circle", "square", "diamond", "triangle", "cross", "plus"}) {
        MarkerStyle m;
        m.shape = shape;
        m.colour = palette_colour(static_cast<std::size_t>(k));
        const std::vector<double> mx = {100.0 + 150.0 * k}, mz = {-150.0};
        f.add_markers(mx, mz, m, shape);
        ++k;
    }
    f.add_hline(-100, LineStyle{"#444444", 1.0, "2 2", 1.0}, "z = -100 m");
    f.add_vline(500, LineStyle{"#444444", 1.0, "", 1.0});
    f.add_text(600, -30, "label");
    f.add_text(600, -60, "centred, bold", TextStyle{"#000000", 14.0, "middle", true});
    return f;
}

Figure value_map_figure(bool logarithmic) {
    Figure f;
    const std::size_t nx = 100, ny = 50;
    std::vector<double> v(nx * ny);
    for (std::size_t j = 0; j < ny; ++j)
        for (std::size_t i = 0; i < nx; ++i) v[j * nx + i] = 0.05 * std::exp((i + 0.5) / 15.0) + 0.01 * j;
    v[0] = not_a_number;
    ColourScale scale;
    scale.label = "time between paths (ns)";
    scale.logarithmic = logarithmic;
    f.value_map(regular_grid(nx, ny, 0, 1000, -200, 0), v, scale);
    f.title("Value map").x_label("horizontal distance (m)").y_label("z (m)");
    f.add_line(std::vector<double>{0, 1000}, std::vector<double>{-60, -60}, LineStyle{"#ffffff", 1.5, "5 3", 1.0},
               "firn-ice transition");
    return f;
}

std::vector<double> circle_cy(const std::string& svg) {
    std::vector<double> out;
    const std::regex circle("<circle cx=\"[-0-9.]+\" cy=\"([-0-9.]+)\"");
    for (auto it = std::sregex_iterator(svg.begin(), svg.end(), circle); it != std::sregex_iterator(); ++it)
        out.push_back(std::stod((*it)[1]));
    return out;
}

}  // namespace

TEST_CASE("an SVG with every layer type is well formed: librsvg renders it at the figure size", "[plot][svg]") {
    const Figure f = every_layer_figure();
    const std::string svg = f.svg();
    CHECK(svg.rfind("<?xml", 0) == 0);
    CHECK(count(svg, "<svg ") == 1);
    CHECK(count(svg, "</svg>") == 1);
    CHECK(count(svg, "clipPath") == 2);
    for (const char* font : {"<script", "@font-face", "xlink:href", "<image"}) CHECK(count(svg, font) == 0);
    const Rendered r = render_png(svg, "every-layer");
    INFO(r.errors);
    CHECK(r.ok);
    CHECK(r.png_bytes > 1000);
    CHECK(r.width == 960);
    CHECK(r.height == 600);

    const Rendered empty = render_png(Figure(400, 300).svg(), "empty");
    CHECK(empty.ok);
    CHECK(empty.width == 400);

    for (bool logarithmic : {false, true}) {
        const Rendered v = render_png(value_map_figure(logarithmic).svg(), logarithmic ? "value-log" : "value-linear");
        INFO(v.errors);
        CHECK(v.ok);
        CHECK(v.png_bytes > 1000);
    }
}

TEST_CASE("compose_figures puts several figures in one renderable document with distinct ids", "[plot][svg]") {
    const Figure a = every_layer_figure(), b = value_map_figure(true);
    Figure c(480, 300);
    c.add_line(std::vector<double>{0, 1}, std::vector<double>{0, 1}, LineStyle{}).title("small");
    const std::string svg = compose_figures({&a, &b, &c}, 2, "Overview & summary");
    CHECK(count(svg, "id=\"fig1-axes\"") == 1);
    CHECK(count(svg, "id=\"fig2-axes\"") == 1);
    CHECK(count(svg, "id=\"fig3-axes\"") == 1);
    CHECK(count(svg, "Overview &amp; summary") >= 1);
    CHECK(count(svg, "<svg ") == 1);
    CHECK(svg.find("width=\"1920\"") != std::string::npos);  // two 960 px columns
    const Rendered r = render_png(svg, "composed");
    INFO(r.errors);
    CHECK(r.ok);
    CHECK(r.width == 1920);
    CHECK(r.height > 900);  // rows of 600 and 300 px, and the heading
    CHECK_THROWS_AS(compose_figures({}, 2), std::invalid_argument);
}

TEST_CASE("all text is XML-escaped, and bad bytes cannot break the document", "[plot][svg]") {
    CHECK(xml_escape("a < b & \"c\" 'd' >") == "a &lt; b &amp; &quot;c&quot; &apos;d&apos; &gt;");
    CHECK(xml_escape("tab\there") == "tab here");
    CHECK(xml_escape(std::string("bell\x07")) == "bell");
    CHECK(xml_escape("z\xe2\x82\x80 = 37.5 m") == "z\xe2\x82\x80 = 37.5 m");  // valid UTF-8 kept
    CHECK(xml_escape("bad \xff byte") == "bad \xef\xbf\xbd byte");           // replaced by U+FFFD

    Figure f;
    f.title("Model <fictional> & \"Dome\" \x01\xff").x_label("x < 5 (m)").y_label("depth & z");
    f.add_line(std::vector<double>{0, 1}, std::vector<double>{0, 1}, LineStyle{}, "<script>alert(1)</script>");
    f.add_text(0.5, 0.5, "a&b");
    const std::string svg = f.svg();
    CHECK(svg.find("Model &lt;fictional&gt; &amp; &quot;Dome&quot;") != std::string::npos);
    CHECK(svg.find("x &lt; 5 (m)") != std::string::npos);
    CHECK(svg.find("depth &amp; z") != std::string::npos);
    CHECK(svg.find("a&amp;b") != std::string::npos);
    CHECK(svg.find("<script") == std::string::npos);
    CHECK(svg.find('\x01') == std::string::npos);
    const Rendered r = render_png(svg, "escaped");
    INFO(r.errors);
    CHECK(r.ok);
}

TEST_CASE("a 1000 x 500 category map stays under 5 MB (and a smooth value map too)", "[plot][svg][size]") {
    const std::size_t nx = 1000, ny = 500;
    const CellGrid grid = regular_grid(nx, ny, 0, 1000, -200, 0);
    Figure categories;
    categories.category_map(grid, curved_regions(nx, ny), three_categories).title("path count");
    const std::string category_svg = categories.svg();
    INFO("category map: " << category_svg.size() << " bytes");
    CHECK(category_svg.size() < 5'000'000);
    CHECK(count(category_svg, "<rect") < 5000);  // 500 000 cells, merged

    std::vector<double> values(nx * ny);
    for (std::size_t j = 0; j < ny; ++j)
        for (std::size_t i = 0; i < nx; ++i)
            values[j * nx + i] = std::hypot(static_cast<double>(i), 2.0 * static_cast<double>(ny - j)) / 299.79;
    Figure smooth;
    smooth.value_map(grid, values, ColourScale{not_a_number, not_a_number, "travel time (ns)", false});
    const std::string value_svg = smooth.svg();
    INFO("value map: " << value_svg.size() << " bytes");
    CHECK(value_svg.size() < 5'000'000);

    const Rendered r = render_png(category_svg, "large-category-map");
    INFO(r.errors);
    CHECK(r.ok);
}

TEST_CASE("grid maps draw no rectangles for blank cells and merge equal neighbours", "[plot][svg]") {
    const CellGrid grid = regular_grid(4, 3, 0, 4, 0, 3);
    const auto rects_for = [&](std::vector<int> cells) {
        Figure f;
        f.category_map(grid, std::move(cells), three_categories);
        return count(f.svg(), "<rect");
    };
    const std::size_t none = rects_for(std::vector<int>(12, -1));
    // One cell.
    std::vector<int> one(12, -1);
    one[5] = 2;
    CHECK(rects_for(one) == none + 1);
    // A full row of equal cells is one rectangle; so is the whole grid when all cells are equal.
    std::vector<int> row(12, -1);
    for (int i = 4; i < 8; ++i) row[static_cast<std::size_t>(i)] = 1;
    CHECK(rects_for(row) == none + 1);
    CHECK(rects_for(std::vector<int>(12, 0)) == none + 1);
    // Vertical stripes: one rectangle per stripe; a checkerboard: one per cell.
    std::vector<int> stripes(12), checker(12);
    for (std::size_t j = 0; j < 3; ++j)
        for (std::size_t i = 0; i < 4; ++i) {
            stripes[j * 4 + i] = static_cast<int>(i % 2);
            checker[j * 4 + i] = static_cast<int>((i + j) % 2);
        }
    CHECK(rects_for(stripes) == none + 4);
    CHECK(rects_for(checker) == none + 12);

    // Value maps: NaN cells are blank, as are cells <= 0 on a logarithmic scale.
    const auto value_rects = [&](std::vector<double> values, bool logarithmic) {
        Figure f;
        f.value_map(grid, std::move(values), ColourScale{1.0, 10.0, "v", logarithmic});
        return count(f.svg(), "<rect");
    };
    const std::size_t blank = value_rects(std::vector<double>(12, not_a_number), false);
    std::vector<double> some(12, not_a_number);
    some[0] = 2.0;
    some[11] = 5.0;
    CHECK(value_rects(some, false) == blank + 2);
    some[3] = -1.0;
    CHECK(value_rects(some, true) == blank + 2);
}

TEST_CASE("lines break at NaN and are clipped to the axes", "[plot][svg]") {
    Figure f;
    f.x_range(0, 10).y_range(0, 10);
    const std::vector<double> x = {1, 2, 3, not_a_number, 5, 6, 7}, y = {1, 2, 3, 4, 5, 6, 7};
    f.add_line(x, y, LineStyle{});
    CHECK(count(f.svg(), "<polyline") == 2);

    Figure far;
    far.x_range(0, 10).y_range(0, 10);
    // From inside to very far outside: the drawn part ends near the frame, not 1e12 pixels away.
    far.add_line(std::vector<double>{5, 1e15}, std::vector<double>{5, 5}, LineStyle{});
    far.add_line(std::vector<double>{20, 30}, std::vector<double>{20, 30}, LineStyle{});  // wholly outside
    const std::string svg = far.svg();
    CHECK(count(svg, "<polyline") == 1);
    const std::regex points("points=\"([^\"]*)\"");
    std::smatch m;
    REQUIRE(std::regex_search(svg, m, points));
    CHECK(m[1].str().size() < 40);
}

TEST_CASE("line simplification drops only invisible detail", "[plot][svg]") {
    const std::regex points("points=\"([^\"]*)\"");
    const auto point_count = [&](const Figure& f) {
        const std::string svg = f.svg();
        std::smatch m;
        if (!std::regex_search(svg, m, points)) return std::size_t{0};
        return count(m[1].str(), ",");
    };
    // A path that doubles back on itself keeps its turning point.
    Figure back;
    back.x_range(0, 10).y_range(0, 10).add_line(std::vector<double>{0, 10, 5}, std::vector<double>{5, 5, 5}, LineStyle{});
    CHECK(point_count(back) == 3);
    // A straight line of 10 000 points becomes two points; a smooth curve far fewer than its samples.
    std::vector<double> x, y, curve;
    for (int i = 0; i <= 10000; ++i) {
        x.push_back(i / 1000.0);
        y.push_back(i / 1000.0);
        curve.push_back(5.0 + 4.0 * std::sin(i / 1000.0));
    }
    Figure straight;
    straight.x_range(0, 10).y_range(0, 10).add_line(x, y, LineStyle{});
    CHECK(point_count(straight) == 2);
    Figure smooth;
    smooth.x_range(0, 10).y_range(0, 10).add_line(x, curve, LineStyle{});
    CHECK(point_count(smooth) < 300);
    CHECK(point_count(smooth) > 10);
}

TEST_CASE("numbers are written with at most two decimals, fonts are at least 12 px", "[plot][svg]") {
    const std::string svg = every_layer_figure().svg() + value_map_figure(true).svg();
    const std::regex long_number("=\"-?[0-9]+\\.[0-9]{3,}\"|[ ,\"][-]?[0-9]+\\.[0-9]{3,}[ ,\"]");
    CHECK_FALSE(std::regex_search(svg, long_number));
    const std::regex font_size("font-size=\"([0-9.]+)\"");
    std::size_t fonts = 0;
    for (auto it = std::sregex_iterator(svg.begin(), svg.end(), font_size); it != std::sregex_iterator(); ++it) {
        CHECK(std::stod((*it)[1]) >= 12.0);
        ++fonts;
    }
    CHECK(fonts > 5);
    CHECK(svg.find("font-family=\"sans-serif\"") != std::string::npos);
    CHECK(detail::number(12.5) == "12.5");
    CHECK(detail::number(3.0) == "3");
    CHECK(detail::number(-0.001) == "0");
    CHECK(detail::number(0.30000000000000004) == "0.3");
}

TEST_CASE("invert_y puts larger y lower on the page, e.g. depth downward", "[plot][svg]") {
    const std::vector<double> x = {0, 0}, depth = {0, 100};
    Figure normal, inverted;
    normal.add_markers(x, depth, MarkerStyle{});
    inverted.add_markers(x, depth, MarkerStyle{}).invert_y();
    const auto up = circle_cy(normal.svg()), down = circle_cy(inverted.svg());
    REQUIRE(up.size() == 2);
    REQUIRE(down.size() == 2);
    CHECK(up[1] < up[0]);      // y = 100 above y = 0
    CHECK(down[1] > down[0]);  // depth 100 m below 0 m
}

TEST_CASE("the automatic legend avoids data, tick labels use the data range", "[plot][svg]") {
    Figure f;
    // Data filling the upper part (a zigzag between 0.7 and 1): the legend goes to a lower corner.
    std::vector<double> x, y;
    for (int i = 0; i <= 100; ++i) {
        x.push_back(i / 100.0);
        y.push_back(i % 2 == 0 ? 0.7 : 1.0);
    }
    f.add_line(x, y, LineStyle{}, "upper data").y_range(0, 1);
    const std::string svg = f.svg();
    const std::regex legend_box("<rect x=\"([-0-9.]+)\" y=\"([-0-9.]+)\" width=\"[-0-9.]+\" height=\"[-0-9.]+\" rx=\"3\"");
    std::smatch m;
    REQUIRE(std::regex_search(svg, m, legend_box));
    CHECK(std::stod(m[2]) > 300.0);  // lower half of the 600 px figure
    // Ticks 0 .. 1 labelled without rounding noise.
    CHECK(svg.find(">0.6<") != std::string::npos);
    CHECK(svg.find("0000000") == std::string::npos);
}

TEST_CASE("write_svg writes the document whole, and reports an unwritable path", "[plot][svg]") {
    Figure f;
    f.add_line(std::vector<double>{0, 1}, std::vector<double>{0, 1}, LineStyle{}).title("written");
    const std::string path = test::temp_folder("plot-write") + "/figure.svg";
    f.write_svg(path);
    CHECK(test::read_file(path) == f.svg());
    CHECK_THROWS_AS(f.write_svg(test::temp_folder("plot-write") + "/no/such/folder/figure.svg"), OutputError);
}

TEST_CASE("bad plot input gives typed errors with clear messages", "[plot]") {
    Figure f;
    CHECK_THROWS_AS(f.x_range(1, 1), DataInputError);
    CHECK_THROWS_AS(f.y_range(not_a_number, 1), DataInputError);
    CHECK_THROWS_WITH(f.x_range(5, 3), Catch::Matchers::Contains("must be below"));
    CHECK_THROWS_AS(f.add_line(std::vector<double>{1, 2}, std::vector<double>{1}, LineStyle{}), std::invalid_argument);
    CHECK_THROWS_AS(f.add_markers(std::vector<double>{1}, std::vector<double>{1}, MarkerStyle{"#000", 3, "star"}),
                    std::invalid_argument);
    const CellGrid grid = regular_grid(2, 2, 0, 1, 0, 1);
    CHECK_THROWS_AS(f.category_map(grid, {0, 1, 2}, three_categories), std::invalid_argument);
    CHECK_THROWS_AS(f.category_map(grid, {0, 1, 2, 3}, three_categories), std::invalid_argument);
    CHECK_THROWS_AS(f.value_map(grid, {1, 2, 3, 4}, ColourScale{0.0, 10.0, "v", true}), DataInputError);
    CHECK_THROWS_AS(f.value_map(grid, {1, 2, 3, 4}, ColourScale{5.0, 1.0, "v", false}), DataInputError);
    CellGrid unordered = grid;
    unordered.x_edges = {0, 2, 1};
    CHECK_THROWS_AS(f.value_map(unordered, {1, 2, 3, 4}, ColourScale{}), std::invalid_argument);
    f.value_map(grid, {1, 2, 3, 4}, ColourScale{});
    CHECK_THROWS_AS(f.category_map(grid, {0, 1, 2, 0}, three_categories), std::logic_error);
    CHECK_THROWS_AS(Figure(10, 10), std::invalid_argument);
}

TEST_CASE("colour helpers: a distinct palette and a ramp rising in lightness (viridis end colours)", "[plot]") {
    CHECK(palette_colour(0) != palette_colour(1));
    CHECK(palette_colour(0) == palette_colour(8));
    // End colours of matplotlib's viridis (from memory).
    CHECK(sequential_colour(0.0) == "#440154");
    CHECK(sequential_colour(1.0) == "#fde725");
    CHECK(sequential_colour(-3.0) == "#440154");
    // Relative luminance (ITU-R BT.709 weights on sRGB, an approximation) rises level by level, so
    // the map reads in order; the ramp is meant to be perceptually ordered.
    double previous = -1.0;
    for (int level = 0; level < 64; ++level) {
        const std::string c = sequential_colour(level / 63.0);
        REQUIRE(c.size() == 7);
        const auto channel = [&](int i) { return std::stoi(c.substr(1 + 2 * i, 2), nullptr, 16) / 255.0; };
        const double luminance = 0.2126 * channel(0) + 0.7152 * channel(1) + 0.0722 * channel(2);
        CHECK(luminance > previous);
        previous = luminance;
    }
}
