// Time to build the SVG of large figures: a 1000 x 500 category map, a 1000 x 500 value map and
// 200 ray paths of 2000 points. Prints the median of several runs and the document sizes.
#include <algorithm>
#include <chrono>
#include <cmath>
#include <cstdio>
#include <functional>
#include <string>
#include <vector>

#include "plot/figure.hpp"

using namespace firnray::plot;

namespace {

double median_ms(const std::function<std::size_t()>& run, std::size_t& bytes, int repeats = 7) {
    std::vector<double> times;
    for (int i = 0; i < repeats; ++i) {
        const auto start = std::chrono::steady_clock::now();
        bytes = run();
        const auto stop = std::chrono::steady_clock::now();
        times.push_back(std::chrono::duration<double, std::milli>(stop - start).count());
    }
    std::sort(times.begin(), times.end());
    return times[times.size() / 2];
}

CellGrid grid(std::size_t nx, std::size_t ny) {
    CellGrid g;
    for (std::size_t i = 0; i <= nx; ++i) g.x_edges.push_back(1000.0 * static_cast<double>(i) / nx);
    for (std::size_t j = 0; j <= ny; ++j) g.y_edges.push_back(-200.0 + 200.0 * static_cast<double>(j) / ny);
    return g;
}

}  // namespace

int main() {
    const std::size_t nx = 1000, ny = 500;
    std::vector<int> categories(nx * ny);
    std::vector<double> values(nx * ny);
    for (std::size_t j = 0; j < ny; ++j) {
        for (std::size_t i = 0; i < nx; ++i) {
            const double x = (i + 0.5) * 1000.0 / nx, z = -200.0 + (j + 0.5) * 200.0 / ny;
            const double boundary = -30.0 - 0.00015 * x * x;
            categories[j * nx + i] = z > boundary ? 0 : (z > boundary - 40.0 + 10.0 * std::sin(x / 80.0) ? 2 : 1);
            values[j * nx + i] = std::hypot(x, z + 100.0) / 299.79;
        }
    }
    const std::vector<Category> legend = {{"none", "#d9d9d9"}, {"two", "#56b4e9"}, {"three", "#e69f00"}};
    std::size_t bytes = 0;

    const double category_ms = median_ms(
        [&] {
            Figure f;
            f.category_map(grid(nx, ny), categories, legend).title("category map");
            return f.svg().size();
        },
        bytes);
    std::printf("category map 1000 x 500: median %.1f ms, %zu bytes\n", category_ms, bytes);

    const double value_ms = median_ms(
        [&] {
            Figure f;
            f.value_map(grid(nx, ny), values, ColourScale{NAN, NAN, "travel time (ns)", false}).title("value map");
            return f.svg().size();
        },
        bytes);
    std::printf("value map 1000 x 500:    median %.1f ms, %zu bytes\n", value_ms, bytes);

    const double rays_ms = median_ms(
        [&] {
            Figure f;
            for (int k = 0; k < 200; ++k) {
                std::vector<double> x(2000), z(2000);
                for (int i = 0; i < 2000; ++i) {
                    x[i] = i * 0.5;
                    z[i] = -150.0 + k * 0.7 + 0.0002 * x[i] * x[i] * std::sin(k * 0.1);
                }
                f.add_line(x, z, LineStyle{palette_colour(static_cast<std::size_t>(k)), 1.0, "", 0.8},
                           k < 3 ? "ray " + std::to_string(k) : "");
            }
            return f.svg().size();
        },
        bytes);
    std::printf("200 rays x 2000 points:  median %.1f ms, %zu bytes\n", rays_ms, bytes);
}
