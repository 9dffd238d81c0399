// Benchmark of the stratified core (solver/stratified_intervals, snell_integrals, path_families)
// on a synthetic 200-point log: an exponential trend (n_deep 1.78, n_surface 1.35, 37 m), seasonal
// layering of ±15 kg/m³ (±0.013 in n) and an ice lens at 60 m, interpolated by the monotone cubic
// of TableProfile, so n falls with depth in many places. Prints the cost of one leg (fixed ends, a
// turning end, a whole duct), and the median cost of finding every path of a pair (max_bounces 1
// and 4) over a grid of pairs, and the same for the exponential profile. Last, today's find_paths
// on a smooth 200-point log (the trend alone, n growing with depth) with NumericSolver and with
// StratifiedSolver, the drop-in RaySolver on the same quadrature.
//
// Whole cells of a leg come from tables the profile fills on first use (solver/snell_integrals.cpp):
// each leg is timed with them (after one warm-up call) and by quadrature alone, and the pairs are
// timed twice, on a fresh profile (tables filled as the pairs need them) and again (tables warm).
//
// Times are CPU time of the calling thread (the machine is often shared, and wall-clock figures
// then mostly measure the other processes).
//
// The warm log is timed twice more with each pair run 5 times and its least time kept (see
// bench_pairs), a steadier figure on a shared host than a single run per pair.
//
// Usage: bench_stratified [pairs per depth] (default 12)
#include <algorithm>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <ctime>
#include <memory>
#include <vector>

#include "model/table_profile.hpp"
#include "paths/find_paths.hpp"
#include "solver/numeric_solver.hpp"
#include "solver/path_families.hpp"
#include "solver/stratified_solver.hpp"

using namespace firnray;

namespace {

std::shared_ptr<const IndexProfile> smooth_log() {
    std::vector<double> depth, n;
    for (int i = 0; i < 200; ++i) {
        depth.push_back(i);
        n.push_back(1.78 - 0.43 * std::exp(-i / 37.0));
    }
    return std::make_shared<TableProfile>(depth, n);
}

std::shared_ptr<const IndexProfile> synthetic_log() {
    std::vector<double> depth, n;
    unsigned state = 12345u;
    auto next_uniform = [&]() {
        state = state * 1664525u + 1013904223u;
        return (state >> 8) / 16777216.0;
    };
    for (int i = 0; i < 200; ++i) {
        const double d = i;
        double value = 1.78 - 0.43 * std::exp(-d / 37.0) + 0.013 * std::sin(2.0 * 3.14159265358979 * d / 7.3) +
                       0.004 * (next_uniform() - 0.5);
        if (i == 60) value += 0.05;  // the ice lens
        depth.push_back(d);
        n.push_back(value);
    }
    return std::make_shared<TableProfile>(depth, n);
}

double cpu_microseconds() {
    timespec t{};
    clock_gettime(CLOCK_THREAD_CPUTIME_ID, &t);
    return t.tv_sec * 1e6 + t.tv_nsec * 1e-3;
}

template <class Body>
double microseconds_per_call(int calls, const Body& body) {
    const double start = cpu_microseconds();
    for (int i = 0; i < calls; ++i) body();
    return (cpu_microseconds() - start) / calls;
}

// Each pair is timed `runs` times in a row and its least time kept: on a shared host the other
// processes only ever add time (caches and the core's other hardware thread), so the least of a
// few runs is the closest to the pair's own cost (common practice in benchmarking).
void bench_pairs(const char* name, const StratifiedProfile& profile, int per_depth, int max_bounces, int runs = 1) {
    StratifiedPathOptions options;
    options.max_bounces = max_bounces;
    std::vector<double> costs;
    std::size_t paths = 0;
    for (int i = 0; i < per_depth; ++i)
        for (int j = 0; j < per_depth; ++j) {
            const double zs = -5.0 - 190.0 * i / per_depth, zr = -3.0 - 180.0 * j / per_depth;
            const double distance = 20.0 + 980.0 * ((i * 7 + j * 3) % per_depth) / per_depth;
            double least = 0.0;
            for (int run = 0; run < runs; ++run) {
                const double start = cpu_microseconds();
                const std::size_t found = find_stratified_paths(profile, zs, zr, distance, options).size();
                const double cost = cpu_microseconds() - start;
                if (run == 0) paths += found;
                least = run == 0 ? cost : std::min(least, cost);
            }
            costs.push_back(least);
        }
    std::sort(costs.begin(), costs.end());
    char least_of[32] = "";
    if (runs > 1) std::snprintf(least_of, sizeof least_of, " (least of %d runs)", runs);
    std::printf("%-12s max_bounces %d: %zu pairs, %zu paths, CPU per pair%s: median %.0f us, 90%% %.0f us, max %.0f us\n",
                name, max_bounces, costs.size(), paths, least_of, costs[costs.size() / 2], costs[costs.size() * 9 / 10],
                costs.back());
}

}  // namespace

int main(int argc, char** argv) {
    const int per_depth = argc > 1 ? std::max(2, std::atoi(argv[1])) : 12;
    const StratifiedProfile log(synthetic_log());
    std::printf("synthetic log: %zu cells, %zu runs, %zu inversions, %zu ducts\n", log.cell_count(), log.runs().size(),
                log.inversions().size(), log.ducts().size());
    volatile double sink = 0.0;
    const RayLevel level = RayLevel::plain(1.70);
    const auto interval = log.interval_around(level, -120.0);
    if (interval) {
        std::printf("interval at 120 m for ξ 1.70: %.3f to %.3f m\n", interval->upper_z, interval->lower_z);
        const LegEndpoint up{interval->upper_z, interval->upper_kind == UpperEndKind::turning ? LegEnd::turning : LegEnd::fixed};
        auto leg_line = [&](const char* name, LegEndpoint a, LegEndpoint b, bool with_time) {
            sink = leg_integrals(log, level, a, b, with_time).distance_m;  // fills the tables it needs
            const double tables = microseconds_per_call(2000, [&] { sink = leg_integrals(log, level, a, b, with_time).distance_m; });
            const double quadrature = microseconds_per_call(
                2000, [&] { sink = leg_integrals_by_quadrature(log, level, a, b, with_time).distance_m; });
            std::printf("%-38s %7.2f us (quadrature alone %.2f us)\n", name, tables, quadrature);
        };
        leg_line("leg 120 m to 190 m, fixed ends:", {-120.0}, {-190.0}, true);
        leg_line("leg 120.3 m to 189.7 m, fixed ends:", {-120.3}, {-189.7}, true);
        leg_line("leg 120 m to the end above:", {-120.0}, up, true);
        leg_line("same, distance and derivative only:", {-120.0}, up, false);
    }
    std::printf("interval_around:                       %.2f us\n",
                microseconds_per_call(2000, [&] { sink = log.interval_around(level, -120.0)->upper_z; }));
    const StratifiedProfile fresh_log(synthetic_log());
    const StratifiedProfile fresh_exponential(std::make_shared<ExponentialProfile>(1.78, 1.35, 37.0));
    const double cold_start = cpu_microseconds();
    bench_pairs("log, cold", fresh_log, per_depth, 1);
    std::printf("  (that pass, tables included: %.0f ms)\n", (cpu_microseconds() - cold_start) * 1e-3);
    bench_pairs("log", fresh_log, per_depth, 1);
    bench_pairs("log", fresh_log, per_depth, 4);
    bench_pairs("log", fresh_log, per_depth, 1, 5);
    bench_pairs("log", fresh_log, per_depth, 4, 5);
    bench_pairs("exp., cold", fresh_exponential, per_depth, 1);
    bench_pairs("exponential", fresh_exponential, per_depth, 1);

    auto model = std::make_shared<FirnModel>();
    model->name = "smooth log";
    model->origin = "bench";
    model->index = smooth_log();
    const NumericSolver numeric(model);
    const StratifiedSolver stratified(model);
    for (const RaySolver* solver : {static_cast<const RaySolver*>(&numeric), static_cast<const RaySolver*>(&stratified)}) {
        std::vector<double> costs;
        std::size_t paths = 0;
        for (int i = 0; i < per_depth; ++i)
            for (int j = 0; j < per_depth; ++j) {
                const Point source{0.0, 0.0, -5.0 - 190.0 * i / per_depth};
                const Point receiver{20.0 + 480.0 * ((i * 7 + j * 3) % per_depth) / per_depth, 0.0, -3.0 - 180.0 * j / per_depth};
                const double start = cpu_microseconds();
                paths += find_paths(*solver, source, receiver).size();
                costs.push_back(cpu_microseconds() - start);
            }
        std::sort(costs.begin(), costs.end());
        std::printf("find_paths, smooth log, %-10s: %zu pairs, %zu paths, CPU per pair: median %.0f us, 90%% %.0f us\n",
                    solver->name().c_str(), costs.size(), paths, costs[costs.size() / 2], costs[costs.size() * 9 / 10]);
    }
    (void)sink;
    return 0;
}
