// Timing shared by the benchmark programs: the median of several runs, by wall clock and by
// processor time.
#pragma once

#include <algorithm>
#include <chrono>
#include <ctime>
#include <vector>

// Median wall time of `repeats` runs; cpu_seconds gets the median processor time (all threads),
// which a machine shared with other jobs does not inflate.
inline double median_seconds(int repeats, const auto& body, double* cpu_seconds = nullptr) {
    std::vector<double> times, cpu;
    for (int r = 0; r < repeats; ++r) {
        const auto start = std::chrono::steady_clock::now();
        const std::clock_t cpu_start = std::clock();
        body();
        cpu.push_back(static_cast<double>(std::clock() - cpu_start) / CLOCKS_PER_SEC);
        times.push_back(std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count());
    }
    std::sort(times.begin(), times.end());
    std::sort(cpu.begin(), cpu.end());
    if (cpu_seconds) *cpu_seconds = cpu[cpu.size() / 2];
    return times[times.size() / 2];
}
