// Batch throughput of firnray connect as the command runs it: a pairs CSV (in memory) is read,
// every path of every pair found with all its amplitudes, and the output formatted into memory
// (its bytes counted). Medians over passes. Also the scaling from 1 to 2 threads, and the numeric
// solver per pair on a tabulated model with its accuracy against the closed form.
// Usage, from the source folder: bench_connect [passes] [pairs]
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
        const auto pairs = read_path_pairs(parse_csv(csv, "bench"));
        const BatchFormatter formatter(format, {"benchmark firn", solver.name()}, pairs);
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
    const int passes = argc > 1 ? std::max(1, std::atoi(argv[1])) : 11;
    const std::size_t count = argc > 2 ? static_cast<std::size_t>(std::max(100, std::atoi(argv[2]))) : 20000;

    auto firn = std::make_shared<FirnModel>(default_model());
    const ClosedFormSolver closed(firn);
    const std::string far = pairs_csv(count, 1000.0, 2024), near = pairs_csv(count, 150.0, 7);

    std::printf("firnray connect batch, closed form, default model, %zu pairs, median of %d passes\n", count, passes);
    std::printf("(parse CSV + find all paths with amplitudes + format into memory)\n");
    for (const auto& [label, csv] : {std::pair{"0-1000 m apart", &far}, std::pair{"0-150 m apart ", &near}}) {
        for (const PathFormat format : {PathFormat::csv, PathFormat::text, PathFormat::json}) {
            const Timing t = time_batch(closed, *csv, format, 1, passes);
            std::printf("  %s, %s, 1 thread: %9.0f pairs/s  (%.2f paths/pair, %.0f bytes/pair)\n", label,
                        format_name(format), t.pairs_per_second, t.paths_per_pair, t.bytes_per_pair);
        }
    }

    std::printf("\nscaling, 0-150 m apart, csv: passes alternate between 1 and 2 threads\n");
    std::vector<double> one, two;
    for (int pass = 0; pass < passes; ++pass) {
        one.push_back(time_batch(closed, near, PathFormat::csv, 1, 1).pairs_per_second);
        two.push_back(time_batch(closed, near, PathFormat::csv, 2, 1).pairs_per_second);
    }
    std::printf("  1 thread: %9.0f pairs/s   2 threads: %9.0f pairs/s   ratio of medians %.2f\n", median(one), median(two),
                median(two) / median(one));

    // The numeric solver at its default tolerances: first its accuracy against the closed form on
    // the exponential default model, then its cost on a tabulated model (no closed form there).
    const NumericSolver numeric_exponential(firn);
    const std::size_t numeric_count = std::min<std::size_t>(count, 200);
    const auto sample = read_path_pairs(parse_csv(pairs_csv(numeric_count, 1000.0, 99), "bench"));
    double worst_time_ps = 0.0, worst_angle_deg = 0.0;
    std::size_t kind_mismatches = 0;
    for (const PathPair& p : sample) {
        const auto a = connect_pair(closed, p, {}), b = connect_pair(numeric_exponential, p, {});
        if (a.paths.size() != b.paths.size()) {
            ++kind_mismatches;
            continue;
        }
        for (std::size_t i = 0; i < a.paths.size(); ++i) {
            kind_mismatches += a.paths[i].kind != b.paths[i].kind;
            worst_time_ps = std::max(worst_time_ps, std::abs(a.paths[i].time_s - b.paths[i].time_s) * 1e12);
            worst_angle_deg = std::max({worst_angle_deg,
                                        rad_to_deg(std::abs(a.paths[i].launch_zenith_rad - b.paths[i].launch_zenith_rad)),
                                        rad_to_deg(std::abs(a.paths[i].arrival_zenith_rad - b.paths[i].arrival_zenith_rad))});
        }
    }
    std::printf("\nnumeric vs closed form, default model, %zu pairs 0-1000 m apart: worst time %.3g ps, worst angle "
                "%.3g deg, %zu pairs with other paths\n",
                numeric_count, worst_time_ps, worst_angle_deg, kind_mismatches);

    const std::string table_path = argc > 3 ? argv[3] : "models/table-density.toml";
    const auto table = std::make_shared<const FirnModel>(load_model_file(table_path));
    const NumericSolver numeric(table);
    for (const auto& [label, reach] : {std::pair{"0-1000 m apart", 1000.0}, std::pair{"0-150 m apart ", 150.0}}) {
        const auto pairs = read_path_pairs(parse_csv(pairs_csv(numeric_count, reach, 5), "bench"));
        std::vector<double> per_pair;
        std::size_t paths = 0;
        for (int pass = 0; pass < std::max(3, passes / 3); ++pass) {
            paths = 0;
            const auto start = std::chrono::steady_clock::now();
            for (const PathPair& p : pairs) paths += connect_pair(numeric, p, {}).paths.size();
            per_pair.push_back(seconds_since(start) / static_cast<double>(pairs.size()));
        }
        std::printf("numeric solver, %s, %s, %s: %.3f ms per pair (%.2f paths/pair)\n", table_path.c_str(), label,
                    "1 thread", median(per_pair) * 1e3, static_cast<double>(paths) / static_cast<double>(pairs.size()));
    }
    return 0;
}
