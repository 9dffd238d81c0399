// Time of one closed-form distance-and-time evaluation (ClosedFormSolver::distance_and_time) and
// of one full segment(), on a fixed set of legs typical of firn: median over many repetitions.
// Usage: bench_closed_form [repetitions]   (figures recorded in docs/performance.md)
#include <algorithm>
#include <chrono>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <memory>
#include <random>
#include <vector>

#include "model/firn_model.hpp"
#include "solver/closed_form_solver.hpp"

using namespace firnray;

namespace {

template <class F>
double median_ns_per_call(int repetitions, std::size_t calls, F&& run) {
    std::vector<double> per_call;
    per_call.reserve(static_cast<std::size_t>(repetitions));
    for (int r = 0; r < repetitions; ++r) {
        const auto start = std::chrono::steady_clock::now();
        run();
        const auto stop = std::chrono::steady_clock::now();
        per_call.push_back(std::chrono::duration<double, std::nano>(stop - start).count() / static_cast<double>(calls));
    }
    std::nth_element(per_call.begin(), per_call.begin() + repetitions / 2, per_call.end());
    return per_call[static_cast<std::size_t>(repetitions / 2)];
}

}  // namespace

int main(int argc, char** argv) {
    const int repetitions = argc > 1 ? std::max(1, std::atoi(argv[1])) : 201;
    auto model = std::make_shared<FirnModel>();
    model->name = "benchmark firn (generic values, not a site)";
    model->index = std::make_shared<ExponentialProfile>(1.78, 1.35, 40.0);
    const ClosedFormSolver solver(model);

    // Random legs: ends between the surface and 500 m, ξ uniform below n at the shallower end.
    std::mt19937_64 rng(12345);
    std::uniform_real_distribution<double> depth(0.0, 500.0), unit(0.0, 1.0);
    std::vector<ClosedFormSolver::LegQuery> legs(4096);
    for (auto& leg : legs) {
        leg.z_a = -depth(rng);
        leg.z_b = -depth(rng);
        leg.ray_parameter = unit(rng) * model->index->index(std::max(leg.z_a, leg.z_b));
    }
    std::vector<ClosedFormSolver::DistanceTime> out(legs.size());
    double sink = 0.0;

    const double t_single = median_ns_per_call(repetitions, legs.size(), [&] {
        for (std::size_t i = 0; i < legs.size(); ++i) {
            const auto r = solver.distance_and_time(legs[i].ray_parameter, legs[i].z_a, legs[i].z_b);
            sink += r.distance_m + r.time_s;
        }
    });
    const double t_batch = median_ns_per_call(repetitions, legs.size(), [&] {
        solver.distance_and_time(legs, out);
        sink += out[legs.size() / 2].distance_m;
    });
    const double t_distance = median_ns_per_call(repetitions, legs.size(), [&] {
        for (const auto& leg : legs) sink += solver.leg_distance(leg.ray_parameter, leg.z_a, leg.z_b).distance_m;
    });
    const double t_segment = median_ns_per_call(repetitions, legs.size(), [&] {
        for (const auto& leg : legs) sink += solver.segment(leg.ray_parameter, leg.z_a, leg.z_b).time_s;
    });
    const double t_turning = median_ns_per_call(repetitions, legs.size(), [&] {
        for (const auto& leg : legs) {
            const double z = std::min(leg.z_a, leg.z_b);
            const double xi = 1.35 + 0.999 * (model->index->index(z) - 1.35) * unit(rng);
            sink += solver.distance_to_turning(xi, z).distance_m;
        }
    });

    std::printf("closed-form legs, %zu random legs (0-500 m), median of %d repetitions\n", legs.size(), repetitions);
    std::printf("  distance_and_time (one call)      %7.1f ns\n", t_single);
    std::printf("  distance_and_time (batch, per leg) %6.1f ns\n", t_batch);
    std::printf("  leg_distance (x and dx/dxi)       %7.1f ns\n", t_distance);
    std::printf("  segment (everything)              %7.1f ns\n", t_segment);
    std::printf("  distance_to_turning (incl. rng)   %7.1f ns\n", t_turning);
    std::printf("(checksum %.6g)\n", sink);
    return 0;
}
