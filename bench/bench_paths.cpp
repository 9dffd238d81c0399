// Source-receiver pairs per second for find_paths with the closed-form solver, all paths and
// amplitudes: median over repetitions of one pass over a fixed set of random pairs.
// Usage: bench_paths [repetitions]   (figures recorded in docs/performance.md)
#include <algorithm>
#include <chrono>
#include <cstdio>
#include <cstdlib>
#include <memory>
#include <random>
#include <vector>

#include "model/firn_model.hpp"
#include "paths/find_paths.hpp"
#include "solver/closed_form_solver.hpp"

using namespace firnray;

namespace {

struct Pair {
    Point source, receiver;
};

struct Result {
    double pairs_per_second;
    double paths_per_pair;
};

Result run(const RaySolver& solver, const std::vector<Pair>& pairs, int repetitions) {
    std::vector<double> rates;
    std::size_t paths = 0;
    for (int r = 0; r < repetitions; ++r) {
        paths = 0;
        const auto start = std::chrono::steady_clock::now();
        for (const Pair& p : pairs) paths += find_paths(solver, p.source, p.receiver).size();
        const auto stop = std::chrono::steady_clock::now();
        rates.push_back(static_cast<double>(pairs.size()) / std::chrono::duration<double>(stop - start).count());
    }
    std::nth_element(rates.begin(), rates.begin() + repetitions / 2, rates.end());
    return {rates[static_cast<std::size_t>(repetitions / 2)], static_cast<double>(paths) / static_cast<double>(pairs.size())};
}

}  // namespace

int main(int argc, char** argv) {
    const int repetitions = argc > 1 ? std::max(1, std::atoi(argv[1])) : 21;
    auto firn = std::make_shared<FirnModel>();
    firn->name = "benchmark firn (generic values, not a site)";
    firn->index = std::make_shared<ExponentialProfile>(1.78, 1.35, 40.0);
    auto with_bottom = std::make_shared<FirnModel>(*firn);
    with_bottom->bottom = Bottom{-2800.0, 0.3};

    // Pairs as a station planner asks them: ends from the surface to 200 m depth, horizontal
    // distances up to 1 km (some in the shadow zone).
    std::mt19937_64 rng(2024);
    std::uniform_real_distribution<double> depth(0.0, 200.0), distance(0.0, 1000.0);
    std::vector<Pair> pairs(20000);
    for (Pair& p : pairs) {
        p.source = {0.0, 0.0, -depth(rng)};
        p.receiver = {distance(rng), 0.0, -depth(rng)};
    }

    // Pairs close enough to be in view of each other (mostly two paths each).
    std::uniform_real_distribution<double> near_distance(0.0, 150.0);
    std::vector<Pair> near(20000);
    for (Pair& p : near) {
        p.source = {0.0, 0.0, -depth(rng)};
        p.receiver = {near_distance(rng), 0.0, -depth(rng)};
    }

    const ClosedFormSolver plain(firn), bottomed(with_bottom);
    std::printf("find_paths with the closed form, default options, 20000 random pairs, median of %d passes\n", repetitions);
    const Result a = run(plain, pairs, repetitions);
    std::printf("  ends 0-200 m deep, 0-1000 m apart, no bottom:        %9.0f pairs/s  (%.2f paths per pair)\n",
                a.pairs_per_second, a.paths_per_pair);
    const Result b = run(bottomed, pairs, repetitions);
    std::printf("  ends 0-200 m deep, 0-1000 m apart, bottom at 2800 m: %9.0f pairs/s  (%.2f paths per pair)\n",
                b.pairs_per_second, b.paths_per_pair);
    const Result c = run(plain, near, repetitions);
    std::printf("  ends 0-200 m deep, 0-150 m apart, no bottom:         %9.0f pairs/s  (%.2f paths per pair)\n",
                c.pairs_per_second, c.paths_per_pair);
    return 0;
}
