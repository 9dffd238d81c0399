#include "trace/ray_tracer.hpp"

#include <algorithm>
#include <array>
#include <cmath>

#include <fmt/format.h>

#include "core/constants.hpp"
#include "core/errors.hpp"
#include "trace/bracketed_root.hpp"
#include "trace/fresnel.hpp"
#include "trace/ray_integration.hpp"

namespace firnray {

std::string to_string(BranchKind kind) {
    switch (kind) {
        case BranchKind::ice: return "ice";
        case BranchKind::ice_transmitted: return "ice-transmitted";
        case BranchKind::air: return "air";
        case BranchKind::air_transmitted: return "air-transmitted";
    }
    return "unknown";
}

std::string to_string(EventType type) {
    switch (type) {
        case EventType::surface_reflection_in_ice: return "surface-reflection-in-ice";
        case EventType::surface_reflection_in_air: return "surface-reflection-in-air";
        case EventType::bottom_reflection: return "bottom-reflection";
        case EventType::turning_point: return "turning-point";
    }
    return "unknown";
}

std::string to_string(EndReason reason) {
    switch (reason) {
        case EndReason::max_distance: return "max-distance";
        case EndReason::max_length: return "max-length";
        case EndReason::floor: return "floor";
        case EndReason::ceiling: return "ceiling";
        case EndReason::interaction_limit: return "interaction-limit";
    }
    return "unknown";
}

// ---------------------------------------------------------------------------------------------
// Recorders

namespace {

bool same_point(const std::vector<RayPoint>& points, const RayPoint& p) {
    if (points.empty()) return false;
    const RayPoint& q = points.back();
    return std::abs(q.length_m - p.length_m) <= 1e-9 * (1.0 + std::abs(p.length_m)) && q.x_m == p.x_m &&
           q.z_m == p.z_m;
}

void push_unique(std::vector<RayPoint>& points, const RayPoint& p) {
    if (!same_point(points, p)) points.push_back(p);
}

}  // namespace

void EveryStepRecorder::start(const RayPoint& p, std::vector<RayPoint>& points) { points.push_back(p); }
void EveryStepRecorder::step(const StepView& view, std::vector<RayPoint>& points) {
    if (view.end() > view.begin()) push_unique(points, view.at(view.end()));
}
void EveryStepRecorder::event(const RayPoint& p, std::vector<RayPoint>& points) { push_unique(points, p); }
void EveryStepRecorder::finish(const RayPoint& p, std::vector<RayPoint>& points) { push_unique(points, p); }

FixedSpacingRecorder::FixedSpacingRecorder(double spacing_m) : spacing_m_(spacing_m) {
    if (!(std::isfinite(spacing_m) && spacing_m > 0.0))
        throw DataInputError(fmt::format("the point spacing must be a positive length in metres (got {})", spacing_m),
                             {"", 0, "spacing_m"});
}
void FixedSpacingRecorder::start(const RayPoint& p, std::vector<RayPoint>& points) {
    points.push_back(p);
    next_length_m_ = p.length_m + spacing_m_;
}
void FixedSpacingRecorder::step(const StepView& view, std::vector<RayPoint>& points) {
    const double a = view.begin(), b = view.end();
    if (!(b > a)) return;
    const RayPoint pa = view.at(a), pb = view.at(b);
    while (next_length_m_ <= pb.length_m) {
        const double target = next_length_m_;
        next_length_m_ += spacing_m_;
        if (target < pa.length_m) continue;
        auto f = [&](double sigma) { return view.at(sigma).length_m - target; };
        const double fa = pa.length_m - target, fb = pb.length_m - target;
        double sigma = b;
        if (fa == 0.0) {
            sigma = a;
        } else if (fb != 0.0) {
            sigma = toms748_root("a point at a fixed spacing along the ray", f, a, b, fa, fb, 40, 60);
        }
        push_unique(points, view.at(sigma));
    }
}
void FixedSpacingRecorder::event(const RayPoint& p, std::vector<RayPoint>& points) { push_unique(points, p); }
void FixedSpacingRecorder::finish(const RayPoint& p, std::vector<RayPoint>& points) { push_unique(points, p); }

void EndpointRecorder::start(const RayPoint& p, std::vector<RayPoint>& points) { points.push_back(p); }
void EndpointRecorder::event(const RayPoint& p, std::vector<RayPoint>& points) { push_unique(points, p); }
void EndpointRecorder::finish(const RayPoint& p, std::vector<RayPoint>& points) { push_unique(points, p); }

// ---------------------------------------------------------------------------------------------
// Options

void TraceOptions::validate() const {
    tolerances.validate();
    if (!(max_distance_m > 0.0))
        throw DataInputError(fmt::format("must be a positive distance in metres (got {})", max_distance_m),
                             {"", 0, "max_distance_m"});
    if (!(std::isfinite(max_length_m) && max_length_m > 0.0))
        throw DataInputError(fmt::format("must be a positive finite length in metres (got {})", max_length_m),
                             {"", 0, "max_length_m"});
    if (std::isnan(floor_z_m) || floor_z_m > 0.0)
        throw DataInputError(fmt::format("must be at or below the surface, z <= 0 (got {})", floor_z_m),
                             {"", 0, "floor_z_m"});
    if (std::isnan(ceiling_z_m) || ceiling_z_m < 0.0)
        throw DataInputError(fmt::format("must be at or above the surface, z >= 0 (got {})", ceiling_z_m),
                             {"", 0, "ceiling_z_m"});
    if (max_surface_interactions < 0)
        throw DataInputError("must not be negative", {"", 0, "max_surface_interactions"});
    if (max_branches < 1) throw DataInputError("must be at least 1", {"", 0, "max_branches"});
}

// ---------------------------------------------------------------------------------------------
// Tracing

namespace {

using namespace ray_state;

RayPoint point_of(const RayState& y) {
    return RayPoint{y[x], y[z], y[optical_path] / speed_of_light, y[length]};
}

double zenith_of(const RayState& y) { return std::atan2(y[px], y[pz]); }

class IceStepView final : public StepView {
public:
    IceStepView(const RayStepper<RayState>& stepper, double a, double b) : stepper_(stepper), a_(a), b_(b) {}
    // A step cut at an event ends exactly at the event's (refined) point.
    IceStepView(const RayStepper<RayState>& stepper, double a, double b, const RayPoint& end_point)
        : stepper_(stepper), a_(a), b_(b), end_point_(end_point), has_end_point_(true) {}
    double begin() const override { return a_; }
    double end() const override { return b_; }
    RayPoint at(double sigma) const override {
        if (has_end_point_ && sigma >= b_) return end_point_;
        return point_of(stepper_.at(sigma));
    }

private:
    const RayStepper<RayState>& stepper_;
    double a_, b_;
    RayPoint end_point_;
    bool has_end_point_ = false;
};

// A straight leg in the air; σ is the arc length along it.
class AirStepView final : public StepView {
public:
    AirStepView(const RayPoint& start, double sin_zenith, double cos_zenith, double n_air, double leg_m)
        : start_(start), sin_(sin_zenith), cos_(cos_zenith), n_air_(n_air), leg_(leg_m) {}
    double begin() const override { return 0.0; }
    double end() const override { return leg_; }
    RayPoint at(double sigma) const override {
        return RayPoint{start_.x_m + sigma * sin_, start_.z_m + sigma * cos_,
                        start_.time_s + n_air_ * sigma / speed_of_light, start_.length_m + sigma};
    }

private:
    RayPoint start_;
    double sin_, cos_, n_air_, leg_;
};

enum Crossing : std::size_t { cross_surface, cross_turning, cross_distance, cross_length, cross_bottom, cross_floor };

class BranchTracer {
public:
    BranchTracer(const FirnModel& model, const TraceOptions& options, PointRecorder& recorder, RayTrace& trace)
        : model_(model), options_(options), recorder_(recorder), trace_(trace), x0_(trace.launch.x_m) {}

    void run(std::size_t index) {
        if (trace_.branches[index].kind == BranchKind::ice || trace_.branches[index].kind == BranchKind::ice_transmitted)
            trace_ice(index);
        else
            trace_air(index);
    }

private:
    RayBranch& branch(std::size_t i) { return trace_.branches[i]; }

    // Starts a transmitted branch if the limit allows; returns its index or -1.
    int spawn(std::size_t parent, BranchKind kind, const RayPoint& where, double zenith, double ray_parameter,
              std::complex<double> amp_s, std::complex<double> amp_p, double attenuation) {
        if (trace_.branches.size() >= static_cast<std::size_t>(options_.max_branches)) {
            trace_.truncated = true;
            return -1;
        }
        RayBranch child;
        child.kind = kind;
        child.parent = static_cast<int>(parent);
        child.ray_parameter = ray_parameter;
        child.start = where;
        child.start_zenith_rad = zenith;
        child.amplitude_s = amp_s;
        child.amplitude_p = amp_p;
        child.attenuation_exponent = attenuation;
        trace_.branches.push_back(std::move(child));
        return static_cast<int>(trace_.branches.size() - 1);
    }

    bool interaction_allowed() {
        if (interactions_ >= options_.max_surface_interactions) {
            trace_.truncated = true;
            return false;
        }
        ++interactions_;
        return true;
    }

    void finish(std::size_t index, const RayPoint& p, double zenith, EndReason reason) {
        RayBranch& b = branch(index);
        b.end = p;
        b.end_zenith_rad = zenith;
        b.end_reason = reason;
        if (reason == EndReason::interaction_limit) trace_.truncated = true;
        recorder_.finish(p, b.points);
    }

    void trace_ice(std::size_t index) {
        const IndexProfile& profile = *model_.index;
        const RayBranch start_branch = branch(index);  // copy: the vector may grow
        const double n_start = profile.index(start_branch.start.z_m);
        RayState y{};
        y[x] = start_branch.start.x_m;
        y[z] = start_branch.start.z_m;
        y[px] = n_start * std::sin(start_branch.start_zenith_rad);
        y[pz] = n_start * std::cos(start_branch.start_zenith_rad);
        y[optical_path] = start_branch.start.time_s * speed_of_light;
        y[length] = start_branch.start.length_m;
        y[attenuation] = start_branch.attenuation_exponent;
        const double xi0 = y[px];
        branch(index).ray_parameter = xi0;
        recorder_.start(start_branch.start, branch(index).points);

        const double heading = y[px] >= 0.0 ? 1.0 : -1.0;
        const bool has_bottom = model_.bottom.has_value();
        const double bottom_z = has_bottom ? model_.bottom->z_m : 0.0;
        const bool has_floor = std::isfinite(options_.floor_z_m) && (!has_bottom || options_.floor_z_m > bottom_z);
        const bool has_distance = std::isfinite(options_.max_distance_m);

        // The limits may already be met at the start (a transmitted branch at the end of its budget).
        if (y[length] >= options_.max_length_m)
            return finish(index, point_of(y), zenith_of(y), EndReason::max_length);
        if (has_distance && heading * (y[x] - x0_) >= options_.max_distance_m)
            return finish(index, point_of(y), zenith_of(y), EndReason::max_distance);
        if (has_floor && y[z] <= options_.floor_z_m) return finish(index, point_of(y), zenith_of(y), EndReason::floor);

        IceBranchObserver observer(*this, index, heading, has_distance, has_bottom, has_floor);
        IntegratedRay<RayState> ray(model_, options_.tolerances, y, BetweenSteps::monitored);
        integrate_ray(ray, observer);
        branch(index).steps = ray.steps();
        branch(index).drift = ray.drift();
    }

    // What a branch in the ice records and does at its events, for the driver (ray_integration.hpp).
    class IceBranchObserver {
    public:
        IceBranchObserver(BranchTracer& tracer, std::size_t index, double heading, bool has_distance,
                          bool has_bottom, bool has_floor)
            : tracer_(tracer), index_(index) {
            const TraceOptions& options = tracer.options_;
            const double xi0 = tracer.branch(index).ray_parameter;
            add(cross_surface, {z, 0.0, +1});
            add(cross_turning, {pz, 0.0, -1});
            if (has_distance && xi0 != 0.0)
                add(cross_distance, {x, tracer.x0_ + heading * options.max_distance_m, xi0 > 0.0 ? +1 : -1});
            add(cross_length, {length, options.max_length_m, +1});
            if (has_bottom) add(cross_bottom, {z, tracer.model_.bottom->z_m, -1});
            if (has_floor) add(cross_floor, {z, options.floor_z_m, -1});
        }

        std::span<const LevelCrossing> crossings(const IntegratedRay<RayState>&) const {
            return {all_.data(), count_};
        }

        bool on_step(IntegratedRay<RayState>& ray, double from, const RayState&) {
            const RayStepper<RayState>& stepper = ray.stepper();
            tracer_.recorder_.step(IceStepView(stepper, from, stepper.end_sigma()), tracer_.branch(index_).points);
            return true;
        }

        AfterEvent on_event(IntegratedRay<RayState>& ray, std::size_t which, double from, double sigma, RayState& ye) {
            using Action = AfterEvent::Action;
            const RayPoint where = point_of(ye);
            tracer_.recorder_.step(IceStepView(ray.stepper(), from, sigma, where), tracer_.branch(index_).points);
            RayBranch& branch = tracer_.branch(index_);
            branch.attenuation_exponent = ye[attenuation];
            auto end = [&](EndReason reason) {
                tracer_.finish(index_, where, zenith_of(ye), reason);
                return AfterEvent{Action::stop};
            };
            switch (kinds_[which]) {
                case cross_turning: {
                    RayEvent e{EventType::turning_point, where, zenith_of(ye), zenith_of(ye)};
                    branch.events.push_back(e);
                    tracer_.recorder_.event(where, branch.points);
                    return AfterEvent{Action::look_further};
                }
                case cross_surface: {
                    if (!tracer_.interaction_allowed()) return end(EndReason::interaction_limit);
                    const FirnModel& model = tracer_.model_;
                    const double p = std::hypot(ye[px], ye[pz]);
                    const double n1 = model.index->index(0.0), n2 = model.n_air;
                    const FresnelCoefficients f = fresnel(n1, n2, ye[pz] / p);
                    RayEvent e{EventType::surface_reflection_in_ice, where, zenith_of(ye), 0.0, f.r_s, f.r_p};
                    const auto before_s = branch.amplitude_s, before_p = branch.amplitude_p;
                    if (!f.total_reflection) {
                        const double sin_t = (ye[px] / p) * n1 / n2;
                        const double zenith_t = std::atan2(sin_t, f.transmitted_zenith_cos);
                        e.child_branch = tracer_.spawn(index_, BranchKind::air_transmitted, where, zenith_t, n2 * sin_t,
                                                       before_s * f.t_s, before_p * f.t_p, ye[attenuation]);
                    }
                    RayBranch& reflected = tracer_.branch(index_);  // spawn may have grown the vector
                    ye[pz] = -ye[pz];
                    e.zenith_after_rad = zenith_of(ye);
                    reflected.amplitude_s = before_s * f.r_s;
                    reflected.amplitude_p = before_p * f.r_p;
                    reflected.events.push_back(e);
                    tracer_.recorder_.event(where, reflected.points);
                    return AfterEvent{Action::reflect};
                }
                case cross_bottom: {
                    const double factor = std::sqrt(std::clamp(tracer_.model_.bottom->power_reflectivity, 0.0, 1.0));
                    RayEvent e{EventType::bottom_reflection, where, zenith_of(ye), 0.0, factor, factor};
                    ye[pz] = -ye[pz];
                    e.zenith_after_rad = zenith_of(ye);
                    branch.amplitude_s *= factor;
                    branch.amplitude_p *= factor;
                    branch.events.push_back(e);
                    tracer_.recorder_.event(where, branch.points);
                    return AfterEvent{Action::reflect};
                }
                case cross_distance: return end(EndReason::max_distance);
                case cross_length: return end(EndReason::max_length);
                case cross_floor: return end(EndReason::floor);
            }
            return end(EndReason::max_length);
        }

    private:
        void add(Crossing kind, LevelCrossing c) {
            kinds_[count_] = kind;
            all_[count_++] = c;
        }

        BranchTracer& tracer_;
        std::size_t index_;
        std::array<LevelCrossing, 6> all_{};
        std::array<Crossing, 6> kinds_{};
        std::size_t count_ = 0;
    };

    void trace_air(std::size_t index) {
        const double n_air = model_.n_air;
        const double inf = std::numeric_limits<double>::infinity();
        RayPoint at = branch(index).start;
        double zenith = branch(index).start_zenith_rad;
        branch(index).ray_parameter = n_air * std::sin(zenith);
        recorder_.start(at, branch(index).points);
        for (;;) {
            const double s = std::sin(zenith), c = std::cos(zenith);
            double leg = inf;
            EndReason reason = EndReason::max_length;
            bool to_surface = false;
            auto consider = [&](double candidate, EndReason r, bool surface) {
                candidate = std::max(candidate, 0.0);
                if (candidate < leg) {
                    leg = candidate;
                    reason = r;
                    to_surface = surface;
                }
            };
            consider(options_.max_length_m - at.length_m, EndReason::max_length, false);
            if (std::isfinite(options_.max_distance_m) && s != 0.0)
                consider((options_.max_distance_m - std::copysign(1.0, s) * (at.x_m - x0_)) / std::abs(s),
                         EndReason::max_distance, false);
            if (c > 0.0 && std::isfinite(options_.ceiling_z_m))
                consider((options_.ceiling_z_m - at.z_m) / c, EndReason::ceiling, false);
            if (c < 0.0) consider(at.z_m / -c, EndReason::max_length, true);

            const AirStepView view(at, s, c, n_air, leg);
            recorder_.step(view, branch(index).points);
            RayPoint next = view.at(leg);
            if (!to_surface) {
                if (reason == EndReason::max_distance) next.x_m = x0_ + std::copysign(options_.max_distance_m, s);
                if (reason == EndReason::ceiling) next.z_m = options_.ceiling_z_m;
                return finish(index, next, zenith, reason);
            }
            next.z_m = 0.0;
            if (!interaction_allowed()) return finish(index, next, zenith, EndReason::interaction_limit);
            const double n_ice = model_.index->index(0.0);
            const FresnelCoefficients f = fresnel(n_air, n_ice, -c);
            RayEvent e{EventType::surface_reflection_in_air, next, zenith, std::atan2(s, -c), f.r_s, f.r_p};
            const auto before_s = branch(index).amplitude_s, before_p = branch(index).amplitude_p;
            const double sin_t = s * n_air / n_ice;
            e.child_branch = spawn(index, BranchKind::ice_transmitted, next,
                                   std::atan2(sin_t, -f.transmitted_zenith_cos), n_air * s, before_s * f.t_s,
                                   before_p * f.t_p, branch(index).attenuation_exponent);
            branch(index).amplitude_s = before_s * f.r_s;
            branch(index).amplitude_p = before_p * f.r_p;
            branch(index).events.push_back(e);
            recorder_.event(next, branch(index).points);
            at = next;
            zenith = e.zenith_after_rad;
        }
    }

    const FirnModel& model_;
    const TraceOptions& options_;
    PointRecorder& recorder_;
    RayTrace& trace_;
    double x0_;
    int interactions_ = 0;
};

}  // namespace

RayTracer::RayTracer(std::shared_ptr<const FirnModel> model, TraceOptions options)
    : model_(std::move(model)), options_(options) {
    if (!model_ || !model_->index) throw DataInputError("the ray tracer needs a model with an index profile");
    options_.validate();
}

RayTrace RayTracer::trace(const RayLaunch& launch) const {
    EndpointRecorder recorder;
    return trace(launch, recorder);
}

RayTrace RayTracer::trace(const RayLaunch& launch, PointRecorder& recorder) const {
    if (!std::isfinite(launch.x_m) || !std::isfinite(launch.z_m) || !std::isfinite(launch.zenith_rad))
        throw DataInputError("the launch point and zenith angle must be finite numbers", {"", 0, "launch"});
    if (model_->bottom && launch.z_m < model_->bottom->z_m)
        throw DataInputError(fmt::format("the launch point z = {} m lies below the bottom at z = {} m", launch.z_m,
                                         model_->bottom->z_m),
                             {"", 0, "launch"});

    RayTrace trace;
    trace.launch = launch;
    trace.branches.reserve(static_cast<std::size_t>(options_.max_branches));
    RayBranch root;
    // On the surface, "heading up" must be more than the rounding of cos(π/2) in radians.
    const bool in_air = launch.z_m > 0.0 || (launch.z_m == 0.0 && std::cos(launch.zenith_rad) > 1e-12);
    root.kind = in_air ? BranchKind::air : BranchKind::ice;
    root.start = RayPoint{launch.x_m, launch.z_m, 0.0, 0.0};
    root.start_zenith_rad = launch.zenith_rad;
    trace.branches.push_back(std::move(root));

    BranchTracer tracer(*model_, options_, recorder, trace);
    for (std::size_t i = 0; i < trace.branches.size(); ++i) tracer.run(i);
    return trace;
}

}  // namespace firnray
