// A RaySolver for a homogeneous medium written straight from the definition (straight lines,
// T = n·d/c), used as an independent reference where the model is a ConstantProfile.
#pragma once

#include <cmath>
#include <memory>

#include "core/constants.hpp"
#include "core/errors.hpp"
#include "solver/ray_solver.hpp"

namespace firnray::test {

class StraightLineSolver final : public RaySolver {
public:
    explicit StraightLineSolver(std::shared_ptr<const FirnModel> model) : RaySolver(std::move(model)) {}
    std::string name() const override { return "straight-line reference"; }
    Segment segment(double xi, double z_a, double z_b) const override {
        const double n = model_->index->index(0.0);
        const double dz = std::abs(z_a - z_b);
        if (xi >= n) throw NumericalError("horizontal ray in a homogeneous medium never changes depth");
        const double tan_theta = xi / std::sqrt(n * n - xi * xi);
        Segment s;
        s.distance_m = dz * tan_theta;
        s.length_m = std::hypot(dz, s.distance_m);
        s.time_s = n * s.length_m / speed_of_light;
        s.distance_derivative = dz * n * n / std::pow(n * n - xi * xi, 1.5);
        return s;
    }
    std::optional<double> turning_z(double, double) const override { return std::nullopt; }
};

inline std::shared_ptr<const FirnModel> homogeneous_model(double n) {
    auto model = std::make_shared<FirnModel>();
    model->name = "homogeneous";
    model->origin = "test";
    model->index = std::make_shared<ConstantProfile>(n);
    return model;
}

}  // namespace firnray::test
