// Cost of one index_and_gradient call for every profile kind (the ray integrator calls it millions
// of times): the exponential formula, a two-layer profile (inside and outside a transition zone),
// and cubic-spline tables of 30 and 3000 points. Prints the median of several runs in ns per call.
#include <algorithm>
#include <chrono>
#include <cmath>
#include <cstdio>
#include <memory>
#include <random>
#include <vector>

#include "model/index_profile.hpp"
#include "model/layered_profile.hpp"
#include "model/table_profile.hpp"

using namespace firnray;

namespace {

double median_ns_per_call(const IndexProfile& profile, const std::vector<double>& z, int repeats = 9) {
    std::vector<double> times;
    volatile double sink = 0.0;
    for (int r = 0; r < repeats; ++r) {
        double total = 0.0;
        const auto start = std::chrono::steady_clock::now();
        for (double at : z) {
            double n, g;
            profile.index_and_gradient(at, n, g);
            total += n + g;
        }
        const auto stop = std::chrono::steady_clock::now();
        sink = sink + total;
        times.push_back(std::chrono::duration<double, std::nano>(stop - start).count() / static_cast<double>(z.size()));
    }
    std::sort(times.begin(), times.end());
    return times[times.size() / 2];
}

TableProfile sampled(std::size_t points, double deepest) {
    ExponentialProfile reference(1.78, 1.35, 37.0);
    std::vector<double> depth, n;
    for (std::size_t i = 0; i < points; ++i) {
        depth.push_back(deepest * static_cast<double>(i) / static_cast<double>(points - 1));
        n.push_back(reference.index(-depth.back()));
    }
    return TableProfile(depth, n);
}

}  // namespace

int main() {
    std::mt19937_64 rng(1);
    std::uniform_real_distribution<double> anywhere(-300.0, 0.0), in_zone(-11.0, -9.0);
    std::vector<double> z(2'000'000), zone_z(2'000'000);
    for (auto& v : z) v = anywhere(rng);
    for (auto& v : zone_z) v = in_zone(rng);

    const ExponentialProfile exponential(1.78, 1.35, 37.0);
    const LayeredProfile layered(1.33, {ExponentialLayer{10.0, 1.85, 30.0}, ExponentialLayer{INFINITY, 1.78, 40.0}});
    const TableProfile small_table = sampled(30, 300.0), large_table = sampled(3000, 300.0);

    std::printf("index_and_gradient, median of 9 runs over 2e6 random depths in 0-300 m:\n");
    std::printf("  exponential                 %6.1f ns/call\n", median_ns_per_call(exponential, z));
    std::printf("  layered (2 layers)          %6.1f ns/call\n", median_ns_per_call(layered, z));
    std::printf("  layered, inside transition  %6.1f ns/call\n", median_ns_per_call(layered, zone_z));
    std::printf("  table, 30 points            %6.1f ns/call\n", median_ns_per_call(small_table, z));
    std::printf("  table, 3000 points          %6.1f ns/call\n", median_ns_per_call(large_table, z));
    return 0;
}
