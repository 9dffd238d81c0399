// Benchmark of the numeric ray tracer and the numeric solver: one 2 km ray through exponential
// firn at the default tolerances, and one NumericSolver::segment() (plain and with a turning end).
// Prints the median time per call over many batches, and the accuracy of a 2 km ray against the
// linear-velocity-gradient closed form (Shearer, Introduction to Seismology).
#include <algorithm>
#include <chrono>
#include <cmath>
#include <cstdio>
#include <functional>
#include <memory>
#include <vector>

#include "core/constants.hpp"
#include "solver/numeric_solver.hpp"
#include "trace/ray_tracer.hpp"

using namespace firnray;

namespace {

double median_us(const std::function<void()>& call, int batches = 41, int per_batch = 200) {
    std::vector<double> times;
    for (int b = 0; b < batches; ++b) {
        const auto t0 = std::chrono::steady_clock::now();
        for (int i = 0; i < per_batch; ++i) call();
        const auto t1 = std::chrono::steady_clock::now();
        times.push_back(std::chrono::duration<double, std::micro>(t1 - t0).count() / per_batch);
    }
    std::nth_element(times.begin(), times.begin() + times.size() / 2, times.end());
    return times[times.size() / 2];
}

class LinearVelocityProfile final : public IndexProfile {
public:
    LinearVelocityProfile(double v_surface, double g) : v_surface_(v_surface), g_(g) {}
    double velocity(double z) const { return v_surface_ + g_ * std::min(z, 0.0); }
    double index(double z) const override { return speed_of_light / velocity(z); }
    double gradient(double z) const override { return -speed_of_light * g_ / (velocity(z) * velocity(z)); }
    std::string kind() const override { return "test"; }
    std::string describe() const override { return "linear velocity gradient"; }

private:
    double v_surface_, g_;
};

std::shared_ptr<FirnModel> model_of(std::shared_ptr<const IndexProfile> profile) {
    auto model = std::make_shared<FirnModel>();
    model->name = "bench";
    model->index = std::move(profile);
    return model;
}

}  // namespace

int main() {
    volatile double sink = 0.0;
    const auto exponential = model_of(std::make_shared<ExponentialProfile>(1.78, 1.35, 40.0));
    TraceOptions options;
    options.max_length_m = 2000.0;
    const RayTracer tracer(exponential, options);
    const RayLaunch launch{0.0, -200.0, deg_to_rad(100.0)};
    const RayTrace one = tracer.trace(launch);
    const double ray_us = median_us([&] { sink = sink + tracer.trace(launch).branches[0].end.x_m; });
    std::printf("2 km ray, exponential firn (n 1.78/1.35, 40 m), launch z = -200 m at 100 deg, default tolerances "
                "(rel %g, abs %g m): %zu steps, %.2f us median\n",
                options.tolerances.relative, options.tolerances.absolute, one.branches[0].steps, ray_us);

    const RayLaunch reflecting{0.0, -60.0, deg_to_rad(30.0)};
    const double reflect_us = median_us([&] { sink = sink + tracer.trace(reflecting).branches.size(); });
    std::printf("2 km ray with a surface reflection and a transmitted air branch: %.2f us median\n", reflect_us);

    const NumericSolver solver(exponential);
    const double seg_us = median_us([&] { sink = sink + solver.segment(1.5, -500.0, -30.0).distance_m; });
    std::printf("segment(xi 1.5, z -500 -> -30 m) with d(distance)/d(xi): %.2f us median\n", seg_us);
    const double z_t = *solver.turning_z(1.6, -500.0);
    const double turn_us = median_us([&] { sink = sink + solver.segment(1.6, -500.0, z_t).distance_m; });
    std::printf("segment(xi 1.6, z -500 m -> turning point %.3f m): %.2f us median\n", z_t, turn_us);
    const double tz_us = median_us([&] { sink = sink + *solver.turning_z(1.6, -500.0); });
    std::printf("turning_z(xi 1.6, from z -500 m): %.2f us median\n", tz_us);

    // Accuracy of a 2 km ray at the default tolerances against the linear-gradient closed form.
    const double c = speed_of_light;
    const double v_surface = c / 1.35, g = (c / 1.35 - c / 1.78) / 2000.0;
    const auto linear = std::make_shared<LinearVelocityProfile>(v_surface, g);
    const RayTracer linear_tracer(model_of(linear), options);
    double worst_position = 0.0, worst_time = 0.0;
    for (double zenith_deg : {78.0, 100.0, 130.0, 160.0}) {
        const RayLaunch l{0.0, -300.0, deg_to_rad(zenith_deg)};
        EveryStepRecorder recorder;
        const RayBranch b = linear_tracer.trace(l, recorder).branches[0];
        const double xi = linear->index(l.z_m) * std::sin(l.zenith_rad);
        const double z_c = -v_surface / g, radius = c / (g * xi);
        const double x_c = l.x_m + (l.z_m - z_c) * std::cos(l.zenith_rad) / std::sin(l.zenith_rad);
        for (const RayPoint& p : b.points) {
            worst_position = std::max(worst_position, std::abs(std::hypot(p.x_m - x_c, p.z_m - z_c) - radius));
            const double d = std::hypot(p.x_m - l.x_m, p.z_m - l.z_m);
            if (d < 1.0) continue;
            const double expected = std::acosh(1.0 + g * g * d * d / (2.0 * linear->velocity(l.z_m) * linear->velocity(p.z_m))) / g;
            worst_time = std::max(worst_time, std::abs(p.time_s - expected));
        }
    }
    std::printf("2 km rays in a linear velocity gradient, default tolerances: worst distance from the exact "
                "circle %.2e m, worst time error %.2e ps\n",
                worst_position, worst_time * 1e12);
    return sink == 12345.0 ? 1 : 0;
}
