// Batch throughput of firnray connect as the command runs it: a pairs CSV (in memory) is read,
// every path of every pair found with all its amplitudes, and the output formatted into memory
// (its bytes counted). Medians over passes. Also the scaling from 1 to 2 threads, and the numeric
// solver per pair on a tabulated model with its accuracy against the closed form.
// Usage, from the source folder: bench_connect [passes] [pairs] [table model]
//                                 bench_connect scaling [passes] [pairs]   (the 1 → 2 thread ratio only)
// (figures recorded in docs/performance-connect.md)
#include <algorithm>
#include <chrono>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <memory>
#include <random>
#include <string>
#include <vector>

#include <fmt/format.h>

#include "core/constants.hpp"
#include "io/csv_reader.hpp"
#include "model/model_file.hpp"
#include "output/path_output.hpp"
#include "paths/pair_batch.hpp"
#include "solver/closed_form_solver.hpp"
#include "solver/numeric_solver.hpp"

using namespace firnray;

namespace {

double seconds_since(std::chrono::steady_clock::time_point start) {
    return std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
}

double median(std::vector<double> values) {
    std::sort(values.begin(), values.end());
    return values[values.size() / 2];
}

// Pairs as a station planner asks them: ends from the surface to 200 m deep, up to `reach` apart.
std::string pairs_csv(std::size_t count, double reach, unsigned seed) {
    std::mt19937_64 rng(seed);
    std::uniform_real_distribution<double> depth(0.0, 200.0), distance(0.0, reach);
    std::string text = "id,source_x_m,source_z_m,receiver_x_m,receiver_z_m\n";
    for (std::size_t i = 0; i < count; ++i)
        text += fmt::format("p{},0,{:.3f},{:.3f},{:.3f}\n", i, -depth(rng), distance(rng), -depth(rng));
    return text;
}

struct Timing {
    double pairs_per_second = 0.0;
    double bytes_per_pair = 0.0;
    double paths_per_pair = 0.0;
};

// One pass = what the command does after loading the model: parse the CSV, read the pairs, find
// and format every pair, join the pieces.
Timing time_batch(const RaySolver& solver, const std::string& csv, PathFormat format, int threads, int passes) {
    std::vector<double> rates;
    BatchRun run;
    for (int pass = 0; pass < passes; ++pass) {
        const auto start = std::chrono::steady_clock::now();
        const auto pairs = read_path_pairs(parse_csv(csv, "bench"), threads);
        const BatchFormatter formatter(format, {std::make_shared<FirnModel>(solver.model()), solver.name()}, pairs);
        run = connect_batch(solver, pairs, PathOptions{}, formatter, threads);
        rates.push_back(static_cast<double>(pairs.size()) / seconds_since(start));
    }
    return {median(rates), static_cast<double>(run.text.size()) / static_cast<double>(run.pairs),
            static_cast<double>(run.paths) / static_cast<double>(run.pairs)};
}

const char* format_name(PathFormat format) {
    return format == PathFormat::text ? "text" : format == PathFormat::csv ? "csv " : "json";
}

}  // namespace

int main(int argc, char** argv) {
    const bool scaling_only = argc > 1 && std::string(argv[1]) == "scaling";
    if (scaling_only) {
        --argc;
        ++argv;
    }
    const int passes = argc > 1 ? std::max(1, std::atoi(argv[1])) : 11;
    const std::size_t count = argc > 2 ? static_cast<std::size_t>(std::max(100, std::atoi(argv[2]))) : 20000;

    auto firn = std::make_shared<FirnModel>(default_model());
    const ClosedFormSolver closed(firn);
    const std::string far = pairs_csv(count, 1000.0, 2024), near = pairs_csv(count, 150.0, 7);

    if (!scaling_only) std::printf("firnray connect batch, closed form, default model, %zu pairs, median of %d passes\n", count, passes);
    if (!scaling_only) std::printf("(parse CSV + find all paths with amplitudes + format into memory)\n");
    for (const auto& [label, csv] : {std::pair{"0-1000 m apart", &far}, std::pair{"0-150 m apart ", &near}}) {
        if (scaling_only) break;
        for (const PathFormat format : {PathFormat::csv, PathFormat::text, PathFormat::json}) {
            const Timing t = time_batch(closed, *csv, format, 1, passes);
            std::printf("  %s, %s, 1 thread: %9.0f pairs/s  (%.2f paths/pair, %.0f bytes/pair)\n", label,
                        format_name(format), t.pairs_per_second, t.paths_per_pair, t.bytes_per_pair);
        }
    }

    // Rounds alternate between 1 and 2 threads, so that a load that comes and goes on the shared
    // machine hits both alike; each round times a pass after an untimed one with the same thread
    // count (the first pass after a change pays for the allocator's arenas and page faults).
    std::printf("\nscaling, 0-150 m apart, csv: rounds alternate between 1 and 2 threads\n");
    std::vector<double> one, two;
    for (int pass = 0; pass < passes; ++pass) {
        time_batch(closed, near, PathFormat::csv, 1, 1);
        one.push_back(time_batch(closed, near, PathFormat::csv, 1, 1).pairs_per_second);
        time_batch(closed, near, PathFormat::csv, 2, 1);
        two.push_back(time_batch(closed, near, PathFormat::csv, 2, 1).pairs_per_second);
    }
    std::printf("  1 thread: %9.0f pairs/s   2 threads: %9.0f pairs/s   ratio of medians %.2f\n", median(one), median(two),
                median(two) / median(one));
    if (scaling_only) return 0;

    // The numeric solver: its accuracy against the closed form on the exponential default model,
    // then its cost on a tabulated model (no closed form there; accuracy against the same solver at
    // its default tolerance 1e-10), at the tolerance firnray connect uses and at the default.
    const std::size_t numeric_count = std::min<std::size_t>(count, 200);
    struct Accuracy {
        double time_ps = 0.0, angle_deg = 0.0;
        std::size_t other_paths = 0;
    };
    auto compare = [](const RaySolver& reference, const RaySolver& tested, const std::vector<PathPair>& pairs) {
        Accuracy worst;
        for (const PathPair& p : pairs) {
            const auto a = connect_pair(reference, p, {}), b = connect_pair(tested, p, {});
            if (a.paths.size() != b.paths.size()) {
                ++worst.other_paths;
                continue;
            }
            for (std::size_t i = 0; i < a.paths.size(); ++i) {
                worst.other_paths += a.paths[i].kind != b.paths[i].kind;
                worst.time_ps = std::max(worst.time_ps, std::abs(a.paths[i].time_s - b.paths[i].time_s) * 1e12);
                worst.angle_deg = std::max(
                    {worst.angle_deg, rad_to_deg(std::abs(a.paths[i].launch_zenith_rad - b.paths[i].launch_zenith_rad)),
                     rad_to_deg(std::abs(a.paths[i].arrival_zenith_rad - b.paths[i].arrival_zenith_rad))});
            }
        }
        return worst;
    };
    IntegrationTolerances connect_tolerances;
    connect_tolerances.relative = connect_tolerances.absolute = 1e-8;  // as src/cli/commands/connect.cpp
    const auto sample = read_path_pairs(parse_csv(pairs_csv(numeric_count, 1000.0, 99), "bench"));
    std::printf("\nnumeric solver vs closed form, default model, %zu pairs 0-1000 m apart:\n", numeric_count);
    for (const auto& [label, tolerances] :
         {std::pair{"tolerance 1e-10 (default)", IntegrationTolerances{}}, std::pair{"tolerance 1e-8 (connect)", connect_tolerances}}) {
        const Accuracy a = compare(closed, NumericSolver(firn, tolerances), sample);
        std::printf("  %s: worst time %.3g ps, worst angle %.3g deg, %zu pairs with other paths\n", label, a.time_ps,
                    a.angle_deg, a.other_paths);
    }

    const std::string table_path = argc > 3 ? argv[3] : "models/table-density.toml";
    const auto table = std::make_shared<const FirnModel>(load_model_file(table_path));
    const NumericSolver table_default(table), table_connect(table, connect_tolerances);
    for (const auto& [label, reach] : {std::pair{"0-1000 m apart", 1000.0}, std::pair{"0-150 m apart ", 150.0}}) {
        const auto pairs = read_path_pairs(parse_csv(pairs_csv(numeric_count, reach, 5), "bench"));
        for (const RaySolver* solver : {static_cast<const RaySolver*>(&table_default), static_cast<const RaySolver*>(&table_connect)}) {
            std::vector<double> per_pair;
            std::size_t paths = 0, failed = 0;
            for (int pass = 0; pass < std::max(3, passes / 3); ++pass) {
                paths = failed = 0;
                const auto start = std::chrono::steady_clock::now();
                for (const PathPair& p : pairs) {
                    const PairPaths r = connect_pair(*solver, p, {});
                    paths += r.paths.size();
                    failed += !r.error.empty();
                }
                per_pair.push_back(seconds_since(start) / static_cast<double>(pairs.size()));
            }
            std::printf("numeric solver, %s, %s, tolerance %s: %.3f ms per pair (%.2f paths/pair, %zu failed)\n",
                        table_path.c_str(), label, solver == &table_default ? "1e-10" : "1e-8 ", median(per_pair) * 1e3,
                        static_cast<double>(paths) / static_cast<double>(pairs.size()), failed);
        }
        const Accuracy a = compare(table_default, table_connect, pairs);
        std::printf("  1e-8 against 1e-10 on the table: worst time %.3g ps, worst angle %.3g deg, %zu pairs with other "
                    "paths\n",
                    a.time_ps, a.angle_deg, a.other_paths);
    }
    return 0;
}
