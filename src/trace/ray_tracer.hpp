// Tracing one ray through a FirnModel: numeric integration in the ice (ray_system.hpp), straight
// lines in the air, and the interactions at the surface (Fresnel reflection and transmission)
// and at an optional bottom. A ray splits into branches at the surface; the trace returns them
// all, each with its sampled points, its events, its amplitude factors and its accuracy drift.
// What is sampled along a branch is a PointRecorder's choice, not part of the integration loop.
#pragma once

#include <complex>
#include <cstddef>
#include <limits>
#include <memory>
#include <string>
#include <vector>

#include "model/firn_model.hpp"
#include "trace/ray_integration.hpp"
#include "trace/ray_stepper.hpp"

namespace firnray {

// Where a ray starts and where it heads: zenith angle of travel (0 up, π/2 horizontal toward +x,
// π down; angles in (−π, 0) travel toward −x). The start may be in the ice (z <= 0) or in the
// air (z > 0). A start exactly on the surface heading upward counts as in the air.
struct RayLaunch {
    double x_m = 0.0;
    double z_m = 0.0;
    double zenith_rad = 0.0;
};

// One sample along a branch. time and length are counted from the launch of the ray.
struct RayPoint {
    double x_m = 0.0;
    double z_m = 0.0;
    double time_s = 0.0;
    double length_m = 0.0;
};

enum class BranchKind {
    ice,              // launched in the ice
    ice_transmitted,  // entered the ice from the air
    air,              // launched in the air
    air_transmitted,  // left the ice into the air
};

enum class EventType {
    surface_reflection_in_ice,  // met the surface from below: reflected (and transmitted if ξ < n_air)
    surface_reflection_in_air,  // met the surface from above: reflected, and transmitted into the ice
    bottom_reflection,          // reflected at the model's bottom, field factor sqrt(power reflectivity)
    turning_point,              // p_z changed sign from up to down inside the ice (n = ξ there)
};

enum class EndReason {
    max_distance,       // reached the horizontal distance limit from the launch point
    max_length,         // reached the arc-length limit (counted from the launch)
    floor,              // went below the floor of the domain
    ceiling,            // rose above the ceiling in the air
    interaction_limit,  // the ray met the surface more often than allowed
};

std::string to_string(BranchKind kind);    // "ice", "ice-transmitted", "air", "air-transmitted"
std::string to_string(EventType type);     // "surface-reflection-in-ice", ...
std::string to_string(EndReason reason);   // "max-distance", "max-length", "floor", ...

struct RayEvent {
    EventType type;
    RayPoint where;
    double zenith_before_rad = 0.0;
    double zenith_after_rad = 0.0;
    // Field factor of this interaction for s and p (reflection coefficient; 1 at a turning point).
    std::complex<double> factor_s{1.0, 0.0}, factor_p{1.0, 0.0};
    int child_branch = -1;  // the transmitted branch started here, or -1
};

struct RayBranch {
    BranchKind kind = BranchKind::ice;
    int parent = -1;                 // index of the branch it was transmitted from, -1 for the launch
    double ray_parameter = 0.0;      // ξ = n sin θ (signed like sin θ)
    RayPoint start;
    double start_zenith_rad = 0.0;
    RayPoint end;
    double end_zenith_rad = 0.0;
    EndReason end_reason = EndReason::max_length;
    std::vector<RayPoint> points;    // as chosen by the recorder
    std::vector<RayEvent> events;    // in the order met
    // Product of the interface factors from the launch to the end of this branch.
    std::complex<double> amplitude_s{1.0, 0.0}, amplitude_p{1.0, 0.0};
    double attenuation_exponent = 0.0;  // ∫ ds / L_α from the launch to the end (field factor exp(−it))
    InvariantDrift drift;
    std::size_t steps = 0;           // integration steps taken (0 in the air)
};

struct RayTrace {
    RayLaunch launch;
    std::vector<RayBranch> branches;  // [0] is the launched branch; children follow their parents
    bool truncated = false;           // a branch or interaction limit stopped part of the ray
};

// The ray state anywhere on one step of a branch, σ in [begin(), end()]; length is monotone in σ.
class StepView {
public:
    virtual ~StepView() = default;
    virtual double begin() const = 0;
    virtual double end() const = 0;
    virtual RayPoint at(double sigma) const = 0;
};

// Chooses the points stored in RayBranch::points. The tracer calls start() once per branch,
// then step() for every step (cut at events), event() at each event and finish() at the end.
class PointRecorder {
public:
    virtual ~PointRecorder() = default;
    virtual void start(const RayPoint& p, std::vector<RayPoint>& points) = 0;
    virtual void step(const StepView& view, std::vector<RayPoint>& points) = 0;
    virtual void event(const RayPoint& p, std::vector<RayPoint>& points) = 0;
    virtual void finish(const RayPoint& p, std::vector<RayPoint>& points) = 0;
};

// Every integration step's end point (plus start, events and end).
class EveryStepRecorder final : public PointRecorder {
public:
    void start(const RayPoint& p, std::vector<RayPoint>& points) override;
    void step(const StepView& view, std::vector<RayPoint>& points) override;
    void event(const RayPoint& p, std::vector<RayPoint>& points) override;
    void finish(const RayPoint& p, std::vector<RayPoint>& points) override;
};

// Points at a fixed arc-length spacing along each branch (from the launch), plus the branch
// start, each event and the end, taken from the dense output.
class FixedSpacingRecorder final : public PointRecorder {
public:
    explicit FixedSpacingRecorder(double spacing_m);  // throws DataInputError unless > 0
    void start(const RayPoint& p, std::vector<RayPoint>& points) override;
    void step(const StepView& view, std::vector<RayPoint>& points) override;
    void event(const RayPoint& p, std::vector<RayPoint>& points) override;
    void finish(const RayPoint& p, std::vector<RayPoint>& points) override;

private:
    double spacing_m_;
    double next_length_m_ = 0.0;
};

// Only the start, the events and the end of each branch.
class EndpointRecorder final : public PointRecorder {
public:
    void start(const RayPoint& p, std::vector<RayPoint>& points) override;
    void step(const StepView&, std::vector<RayPoint>&) override {}
    void event(const RayPoint& p, std::vector<RayPoint>& points) override;
    void finish(const RayPoint& p, std::vector<RayPoint>& points) override;
};

struct TraceOptions {
    IntegrationTolerances tolerances;
    double max_distance_m = std::numeric_limits<double>::infinity();  // horizontal, from the launch
    double max_length_m = 10'000.0;  // arc length from the launch; must be finite
    double floor_z_m = -std::numeric_limits<double>::infinity();   // ice branches end below it
    double ceiling_z_m = std::numeric_limits<double>::infinity();  // air branches end above it
    int max_surface_interactions = 32;  // per ray, over all its branches
    int max_branches = 16;              // per ray; further transmissions are not followed

    void validate() const;  // throws DataInputError naming the bad field
};

class RayTracer {
public:
    // Throws DataInputError for bad options.
    RayTracer(std::shared_ptr<const FirnModel> model, TraceOptions options = {});

    const FirnModel& model() const { return *model_; }
    const TraceOptions& options() const { return options_; }

    // Traces with an EndpointRecorder (start, events, end of each branch).
    RayTrace trace(const RayLaunch& launch) const;
    // Traces, keeping the points `recorder` chooses. Throws DataInputError for a launch below
    // the bottom or not finite, NumericalError if the integration fails.
    RayTrace trace(const RayLaunch& launch, PointRecorder& recorder) const;

private:
    std::shared_ptr<const FirnModel> model_;
    TraceOptions options_;
};

}  // namespace firnray
