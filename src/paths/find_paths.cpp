#include "paths/find_paths.hpp"

#include <algorithm>
#include <cmath>
#include <cstdint>
#include <limits>
#include <optional>

#include <fmt/format.h>

#include "core/constants.hpp"
#include "core/errors.hpp"
#include "model/index_profile.hpp"
#include "model/model_limits.hpp"
#include "paths/amplitude.hpp"
#include "solver/path_families.hpp"
#include "solver/stratified_intervals.hpp"
#include "trace/bracketed_root.hpp"
#include "trace/fresnel.hpp"

namespace firnray {

const char* to_string(PathKind kind) {
    switch (kind) {
        case PathKind::direct: return "direct";
        case PathKind::refracted: return "refracted";
        case PathKind::reflected: return "reflected";
        case PathKind::transmitted: return "transmitted";
        case PathKind::bottom: return "bottom";
        case PathKind::refracted_below: return "refracted-below";
        case PathKind::ducted: return "ducted";
    }
    return "?";
}

const char* to_string(PathEventKind kind) {
    switch (kind) {
        case PathEventKind::turning: return "turning";
        case PathEventKind::surface_reflection: return "surface reflection";
        case PathEventKind::bottom_reflection: return "bottom reflection";
        case PathEventKind::surface_crossing: return "surface crossing";
    }
    return "?";
}

namespace {

constexpr double infinity = std::numeric_limits<double>::infinity();
// An end counts as horizontal when n − ξ there is below this fraction of n. The leg that ends
// there has ∂r/∂ξ ~ 1/cos θ, and the spreading takes the analytic limit of |∂r/∂ξ|·cos θ, which
// is 1/|dn/dz|: its error grows like the angle from horizontal (~1e-5 at the threshold), while the
// direct product loses accuracy like ε·n/(n − ξ) (~1e-6 at the threshold).
constexpr double horizontal_tolerance = 1e-10;
double cos_from(double n, double xi) { return cos_from_ray_parameter(n, xi); }

// The largest distance by which a path found may miss the receiver (its time is corrected for
// it to first order; its length is not).
double root_residual(double r) { return 1e-6 * std::max(r, 1.0); }

// A path must be no shorter than the straight line between its ends (less what the root may
// miss by) and no faster than light in the fastest medium it crosses, with finite numbers
// everywhere and a field that is finite exactly when it is not a caustic. Anything else is a
// numerical failure, reported instead of written out.
void check_sane(const ConnectedPath& p, const Point& source, const Point& receiver, double n_min, double residual) {
    const double straight = std::hypot(p.horizontal_distance_m, receiver.z - source.z);
    auto fail = [&](const char* what) {
        throw NumericalError(fmt::format("the {} path of ray parameter {} from z = {} m to r = {} m, z = {} m came out "
                                         "{} (length {} m, time {} ns)",
                                         to_string(p.kind), p.ray_parameter, source.z, p.horizontal_distance_m,
                                         receiver.z, what, p.length_m, p.time_s * 1e9));
    };
    for (const double v : {p.time_s, p.length_m, p.ray_parameter, p.launch_zenith_rad, p.arrival_zenith_rad,
                           p.attenuation_exponent, p.amplitude.flux_factor, p.amplitude.attenuation_factor})
        if (!std::isfinite(v)) fail("with a number that is not finite");
    if (std::isnan(p.amplitude.spreading_distance_m)) fail("with a spreading distance that is not a number");
    const bool finite_field = std::isfinite(std::abs(p.amplitude.field_s)) && std::isfinite(std::abs(p.amplitude.field_p));
    if (finite_field == p.amplitude.caustic) fail("with a field that is not finite outside a caustic");
    constexpr double rounding = 1e-9;
    if (p.length_m < straight * (1.0 - rounding) - residual)
        fail("shorter than the straight line between its ends");
    if (p.time_s * speed_of_light < straight * n_min * (1.0 - rounding))
        fail("faster than light in the fastest medium it crosses");
}

// Zenith of an upward direction with n sin θ = ξ; a downward one is π minus it.
double upward_zenith(double n, double xi) { return std::atan2(xi, std::sqrt(std::max(0.0, (n - xi) * (n + xi)))); }

// The points a family of paths is built from, in order from the source to the receiver. An upper
// apex is where a path, having risen, turns back down: a turning point when ξ > n_surface (the
// refracted range) or a surface reflection when ξ <= n_surface (the reflected range); the same
// family covers both ranges. A crossing is where a path passes through the surface.
enum class NodeKind : unsigned char { ice_end, air_end, upper_apex, bottom_reflection, crossing };
struct Node {
    NodeKind kind;
    double z;  // ends, bottom reflection, crossing (0); an upper apex lies where ξ puts it
};

// The horizontal distance of a family is a sum of legs of three sorts, equal legs merged: between
// two fixed depths, from a depth up to the turning point of ξ (which moves with ξ), and in the air.
enum class TermKind : unsigned char { fixed, to_turning_point, air };
struct Term {
    TermKind kind;
    double z_a, z_b;  // fixed: the two depths; to_turning_point: the depth below the turning point; air: height
    int count;
};

// A sequence of nodes from the source to the receiver, all rays of which share the apex pattern.
struct Family {
    std::vector<Node> nodes;
    int upper_apexes = 0, bottom_reflections = 0;
    bool crossing = false;
};

struct FamilyValue {
    double distance, derivative;  // r(ξ) and ∂r/∂ξ
};

class PathFinder {
public:
    PathFinder(const RaySolver& solver, const Point& source, const Point& receiver, const PathOptions& options)
        : solver_(solver), model_(solver.model()), source_(source), receiver_(receiver), options_(options) {}

    std::vector<ConnectedPath> run();

private:
    void ice_pair();
    void stratified_pair();
    void transmitted_pair();
    void air_pair();

    std::vector<Term> terms(const Family& family, bool refracted) const;
    FamilyValue evaluate(const std::vector<Term>& terms, double xi) const;
    bool upper_apex_next_to_end(const Family& family, double z) const;

    void solve_monotone(const Family& family, const std::vector<Term>& terms, double xi_low, double xi_high,
                        bool include_high, bool unbounded_high);
    void solve_scan(const Family& family, const std::vector<Term>& terms, double xi_low, double xi_high,
                    bool include_high);
    void solve_transmitted(const Family& family, const std::vector<Term>& terms);
    void add_path(const Family& family, double xi, bool refracted);
    void add_horizontal_path(double z);

    double index_at_end(const Point& p) const { return p.z > 0.0 ? model_.n_air : model_.index->index(p.z); }
    // The smallest index on the path's way, for profiles whose index grows with depth: at its ends,
    // at the surface and its turning point, and n_air when it reaches the air.
    double fastest_index(const ConnectedPath& p) const {
        double n = std::min({index_at_end(source_), index_at_end(receiver_), n_surface_});
        if (p.turning_z_m) n = std::min(n, model_.index->index(*p.turning_z_m));
        if (p.crosses_surface || source_.z > 0.0 || receiver_.z > 0.0) n = std::min(n, n_air_);
        return n;
    }

    // The smallest index over the depths a path spans (its ends, turns and reflections): on a
    // profile with inversions the fastest medium may lie between them.
    double lowest_index_spanned(const ConnectedPath& p) const {
        double z_low = std::min(source_.z, receiver_.z), z_high = std::max(source_.z, receiver_.z);
        for (const PathEvent& e : p.events) {
            z_low = std::min(z_low, e.z_m);
            z_high = std::max(z_high, e.z_m);
        }
        return solver_.stratified_profile().minimum_index(z_low, z_high).first;
    }

    const RaySolver& solver_;
    const FirnModel& model_;
    bool stratified_ = false;  // the pair went through the stratified path finder
    Point source_, receiver_;
    PathOptions options_;
    double r_ = 0.0, azimuth_ = 0.0;
    double n_surface_ = 1.0, n_air_ = 1.0;
    double z_high_ = 0.0, n_high_ = 1.0;  // the shallower ice end and n there
    std::optional<double> bottom_z_;
    std::vector<ConnectedPath> paths_;
};

std::vector<ConnectedPath> PathFinder::run() {
    for (const double v : {source_.x, source_.y, source_.z, receiver_.x, receiver_.y, receiver_.z})
        if (!std::isfinite(v)) throw DataInputError("source and receiver coordinates must be finite numbers");
    if (options_.max_bounces < 0 || options_.max_bounces > 32)
        throw DataInputError(fmt::format("max_bounces must be between 0 and 32 (got {})", options_.max_bounces),
                             {"", 0, "max_bounces"});
    if (options_.scan_samples < 4 || options_.scan_samples > 10000)
        throw DataInputError(fmt::format("scan_samples must be between 4 and 10000 (got {})", options_.scan_samples),
                             {"", 0, "scan_samples"});
    const double dx = receiver_.x - source_.x, dy = receiver_.y - source_.y;
    r_ = std::hypot(dx, dy);
    azimuth_ = r_ > 0.0 ? std::atan2(dy, dx) : 0.0;
    if (r_ == 0.0 && source_.z == receiver_.z) throw DataInputError("the source and the receiver are at the same point");
    n_surface_ = model_.index->index(0.0);
    n_air_ = model_.n_air;
    if (model_.bottom && options_.bottom_paths) {
        bottom_z_ = model_.bottom->z_m;
        for (const Point* p : {&source_, &receiver_})
            if (p->z < *bottom_z_)
                throw DataInputError(fmt::format("z = {} m lies below the bottom of the model at z = {} m", p->z, *bottom_z_));
    }
    const bool source_in_air = source_.z > 0.0, receiver_in_air = receiver_.z > 0.0;
    try {
        if (!source_in_air && !receiver_in_air) {
            if (uses_stratified_paths(solver_, source_, receiver_)) stratified_pair();
            else ice_pair();
        }
        else if (source_in_air && receiver_in_air) air_pair();
        else transmitted_pair();
    } catch (const DataInputError& e) {
        // The inputs were checked above: a solver refusing what the path finder asked of it is
        // a numerical failure here, not the user's.
        throw NumericalError(fmt::format("the path finder asked the solver for something it refused: {}", e.what()));
    }
    std::sort(paths_.begin(), paths_.end(), [](const ConnectedPath& a, const ConnectedPath& b) { return a.time_s < b.time_s; });
    for (const ConnectedPath& p : paths_) {
        if (stratified_)
            check_sane(p, source_, receiver_, lowest_index_spanned(p), stratified_root_residual * (1.0 + r_));
        else
            check_sane(p, source_, receiver_, fastest_index(p), root_residual(r_));
    }
    return std::move(paths_);
}

bool PathFinder::upper_apex_next_to_end(const Family& family, double z) const {
    const auto& nodes = family.nodes;
    for (std::size_t i = 0; i + 1 < nodes.size(); ++i) {
        const Node &a = nodes[i], &b = nodes[i + 1];
        if ((a.kind == NodeKind::upper_apex && b.kind == NodeKind::ice_end && b.z == z) ||
            (b.kind == NodeKind::upper_apex && a.kind == NodeKind::ice_end && a.z == z))
            return true;
    }
    return false;
}

std::vector<Term> PathFinder::terms(const Family& family, bool refracted) const {
    std::vector<Term> out;
    auto add = [&](TermKind kind, double a, double b) {
        if (kind == TermKind::fixed && a > b) std::swap(a, b);
        for (Term& t : out)
            if (t.kind == kind && t.z_a == a && t.z_b == b) {
                ++t.count;
                return;
            }
        out.push_back({kind, a, b, 1});
    };
    const auto& nodes = family.nodes;
    for (std::size_t i = 0; i + 1 < nodes.size(); ++i) {
        const Node &a = nodes[i], &b = nodes[i + 1];
        if (a.kind == NodeKind::air_end || b.kind == NodeKind::air_end) {
            add(TermKind::air, a.kind == NodeKind::air_end ? a.z : b.z, 0.0);
        } else if (a.kind == NodeKind::upper_apex || b.kind == NodeKind::upper_apex) {
            const double other = a.kind == NodeKind::upper_apex ? b.z : a.z;
            if (refracted) add(TermKind::to_turning_point, other, 0.0);
            else add(TermKind::fixed, other, 0.0);
        } else {
            add(TermKind::fixed, a.z, b.z);
        }
    }
    return out;
}

FamilyValue PathFinder::evaluate(const std::vector<Term>& terms, double xi) const {
    FamilyValue v{0.0, 0.0};
    for (const Term& t : terms) {
        LegDistance leg;
        switch (t.kind) {
            case TermKind::fixed: leg = solver_.leg_distance(xi, t.z_a, t.z_b); break;
            case TermKind::to_turning_point: leg = solver_.distance_to_turning(xi, t.z_a); break;
            case TermKind::air: {
                const double q2 = (n_air_ - xi) * (n_air_ + xi);
                const double q = std::sqrt(q2);
                leg = {t.z_a * xi / q, t.z_a * n_air_ * n_air_ / (q2 * q)};
                break;
            }
        }
        v.distance += t.count * leg.distance_m;
        v.derivative += t.count * leg.derivative;
    }
    // A NaN would reach the root finder, which turns it into a NaN ray parameter.
    if (std::isnan(v.distance))
        throw NumericalError(fmt::format("the horizontal distance of a ray family is not a number at ray parameter {} "
                                         "(the solver fails on this profile at these depths)",
                                         xi));
    return v;
}

// The root of r(ξ(v)) − R on v in [a, b], f(a) and f(b) of opposite signs.
template <class F>
double bracketed_root(F f, double a, double b, double fa, double fb) {
    return toms748_root("the ray parameter of a path", f, a, b, fa, fb, 50, 200);
}

// A family whose distance grows with ξ (every leg has fixed ends): at most one root. ξ runs as
// ξ_high − (ξ_high − ξ_low)(1 − v)², which straightens the square-root behaviour at ξ_high.
void PathFinder::solve_monotone(const Family& family, const std::vector<Term>& terms, double xi_low, double xi_high,
                                bool include_high, bool unbounded_high) {
    auto xi_of = [&](double v) {
        const double w = 1.0 - v;
        return v >= 1.0 ? xi_high : xi_high - (xi_high - xi_low) * w * w;
    };
    auto f = [&](double v) { return evaluate(terms, xi_of(v)).distance - r_; };
    const double f0 = f(0.0);
    if (f0 > 0.0) return;
    if (f0 == 0.0) {
        add_path(family, xi_low, false);
        return;
    }
    double v1 = 1.0, f1 = 0.0;
    if (unbounded_high) {
        // The distance grows without bound towards ξ_high (n constant there): step towards it.
        bool found = false;
        for (double gap = 0.5; gap > 1e-300 && xi_of(1.0 - gap) < xi_high; gap *= 0.5) {
            v1 = 1.0 - gap;
            f1 = f(v1);
            if (f1 >= 0.0) {
                found = true;
                break;
            }
        }
        if (!found) return;
    } else {
        f1 = f(1.0);
        if (f1 < 0.0) return;
        if (f1 == 0.0) {
            if (include_high) add_path(family, xi_high, false);
            return;
        }
    }
    if (f1 == 0.0) {
        add_path(family, xi_of(v1), false);
        return;
    }
    add_path(family, xi_of(bracketed_root(f, 0.0, v1, f0, f1)), false);
}

// A family with turning points, whose distance need not be monotone: sample it, and with the
// slope at each sample bracket every root, including pairs of roots on either side of an
// extremum that falls between samples. ξ runs from n_surface (v = 0, excluded: that ray grazes
// the surface and belongs to the reflected range) to n at the shallower end (v = 1).
void PathFinder::solve_scan(const Family& family, const std::vector<Term>& terms, double xi_low, double xi_high,
                            bool include_high) {
    const double span = xi_high - xi_low;
    auto xi_of = [&](double v) {
        const double w = 1.0 - v;
        return v >= 1.0 ? xi_high : xi_high - span * w * w;
    };
    // Slope dr/dv at v = 1: legs from the shallower end up to the turning point shrink like
    // √(2ξ (n − ξ))/|dn/dz| (a circle of radius n/|dn/dz|), fixed legs ending there grow alike.
    int shrinking = 0, growing = 0;
    for (const Term& t : terms) {
        if (t.kind == TermKind::to_turning_point && t.z_a == z_high_) shrinking += t.count;
        if (t.kind == TermKind::fixed && (t.z_a == z_high_ || t.z_b == z_high_)) growing += t.count;
    }
    const double gradient = std::abs(model_.index->gradient(z_high_));
    const double end_rate = gradient > 0.0 ? std::sqrt(2.0 * xi_high * span) / gradient : infinity;
    const double end_slope = growing == shrinking ? 0.0 : (growing - shrinking) * end_rate;

    struct Sample {
        double v, f, g;  // r − R and dr/dv
    };
    auto sample = [&](double v) -> Sample {
        if (v >= 1.0) return {1.0, evaluate(terms, xi_high).distance - r_, end_slope};
        const FamilyValue value = evaluate(terms, xi_of(v));
        double g = value.derivative * 2.0 * span * (1.0 - v);
        if (!std::isfinite(g)) {  // solver without a derivative here: differences in v
            const double h = 1e-6 * std::min(1.0, 1.0 - v);
            const double lo = std::max(0.0, v - h), hi = v + h;
            g = (evaluate(terms, xi_of(hi)).distance - evaluate(terms, xi_of(lo)).distance) / (hi - lo);
        }
        return {v, value.distance - r_, g};
    };
    auto f = [&](double v) { return evaluate(terms, xi_of(v)).distance - r_; };
    auto g = [&](double v) { return sample(v).g; };
    auto sign = [](double x) { return x > 0.0 ? 1 : (x < 0.0 ? -1 : 0); };

    std::vector<double> roots;
    // Roots strictly inside (a, b), given the samples at both ends.
    auto interval = [&](auto&& self, const Sample& a, const Sample& b, int depth) -> void {
        const int sa = sign(a.f), sb = sign(b.f);
        if (sa == 0 || sb == 0) return;  // a root exactly at a sample is taken separately
        if (sa != sb) {
            roots.push_back(bracketed_root(f, a.v, b.v, a.f, b.f));
            return;
        }
        if (sign(a.g) * sign(b.g) < 0) {
            // One extremum inside; it may reach across zero (a maximum below, a minimum above).
            const bool maximum = a.g > 0.0;
            if ((maximum && sa < 0) || (!maximum && sa > 0)) {
                const double ve = bracketed_root(g, a.v, b.v, a.g, b.g);
                const double fe = f(ve);
                if (sign(fe) == -sa) {
                    roots.push_back(bracketed_root(f, a.v, ve, a.f, fe));
                    roots.push_back(bracketed_root(f, ve, b.v, fe, b.f));
                } else if (fe == 0.0) {
                    roots.push_back(ve);
                }
            }
            return;
        }
        // Same slope sign at both ends but a change that contradicts it: more than one extremum
        // in between. Split.
        if (depth < 10 && sign(a.g) != 0 && sign(b.f - a.f) != sign(a.g)) {
            const Sample m = sample(0.5 * (a.v + b.v));
            if (m.f == 0.0) roots.push_back(m.v);
            self(self, a, m, depth + 1);
            self(self, m, b, depth + 1);
        }
    };

    const int n = options_.scan_samples;
    // With n constant at the shallower end (an end below the deepest point of a table) the legs
    // from there up to the turning point grow without bound as ξ → n_high instead of shrinking:
    // the last sample is then taken where r has passed R, found by stepping towards v = 1 (as for
    // the monotone families), and never at rays so nearly horizontal that n − ξ is lost in rounding.
    double v_last = 1.0;
    if (shrinking > 0 && gradient == 0.0) {
        constexpr double smallest_gap = 1e-10;  // relative n − ξ: a solver's turning tolerance is far below
        v_last = 1.0 - 0.5 / n;
        for (double gap = 0.5 / n;; gap *= 0.5) {
            v_last = 1.0 - gap;
            if (f(v_last) >= 0.0) break;
            if (xi_high - xi_of(1.0 - 0.5 * gap) < smallest_gap * xi_high) break;
        }
    }
    Sample previous = sample(0.0);
    for (int i = 1; i <= n; ++i) {
        const Sample current = sample(i == n ? v_last : static_cast<double>(i) / n);
        if (current.f == 0.0 && (i < n || include_high)) roots.push_back(current.v);
        interval(interval, previous, current, 0);
        previous = current;
    }
    for (const double v : roots)
        if (v > 0.0 && (v < 1.0 || include_high)) add_path(family, xi_of(v), true);
}

void PathFinder::ice_pair() {
    const double zs = source_.z, zr = receiver_.z;
    z_high_ = std::max(zs, zr);
    n_high_ = model_.index->index(z_high_);
    const int max_apexes = options_.max_bounces;

    if (zs == zr && model_.index->gradient(zs) == 0.0) add_horizontal_path(zs);

    for (int apexes = 0; apexes <= max_apexes; ++apexes) {
        for (const NodeKind first : {NodeKind::upper_apex, NodeKind::bottom_reflection}) {
            if (apexes == 0 && first == NodeKind::bottom_reflection) continue;
            Family family;
            family.nodes.push_back({NodeKind::ice_end, zs});
            NodeKind next = first;
            bool possible = true;
            for (int k = 0; k < apexes; ++k) {
                if (next == NodeKind::bottom_reflection) {
                    if (!bottom_z_) possible = false;
                    family.nodes.push_back({NodeKind::bottom_reflection, bottom_z_.value_or(0.0)});
                    ++family.bottom_reflections;
                    next = NodeKind::upper_apex;
                } else {
                    family.nodes.push_back({NodeKind::upper_apex, 0.0});
                    ++family.upper_apexes;
                    next = NodeKind::bottom_reflection;
                }
            }
            family.nodes.push_back({NodeKind::ice_end, zr});
            if (!possible) continue;
            if (apexes == 0 && zs == zr) continue;  // no depth to cover: only rays that go up and back
            // Degenerate apexes: a reflection at the point where an end already is.
            bool degenerate = false;
            for (std::size_t i = 0; i + 1 < family.nodes.size(); ++i) {
                const Node &a = family.nodes[i], &b = family.nodes[i + 1];
                for (const auto& [apex, end] : {std::pair{a, b}, std::pair{b, a}}) {
                    if (end.kind != NodeKind::ice_end) continue;
                    if (apex.kind == NodeKind::upper_apex && end.z == 0.0) degenerate = true;
                    if (apex.kind == NodeKind::bottom_reflection && end.z == apex.z) degenerate = true;
                }
            }
            if (degenerate) continue;

            if (family.upper_apexes == 0) {
                const bool unbounded = model_.index->gradient(z_high_) == 0.0;
                solve_monotone(family, terms(family, false), 0.0, n_high_, true, unbounded);
                continue;
            }
            const double reflected_high = std::min(n_surface_, n_high_);
            const bool unbounded = model_.index->gradient(0.0) == 0.0;
            solve_monotone(family, terms(family, false), 0.0, reflected_high, true, unbounded);
            if (n_high_ > n_surface_) {
                // At ξ = n_high a turning point next to the shallower end coincides with it: that
                // ray is counted in the family without that apex.
                const bool include_high = !upper_apex_next_to_end(family, z_high_);
                solve_scan(family, terms(family, true), n_surface_, n_high_, include_high);
            }
        }
    }
}

// Both ends in the ice, through solver/path_families.hpp: every family of every range of ξ,
// turned into ConnectedPath with the amplitude of paths/amplitude.hpp.
void PathFinder::stratified_pair() {
    stratified_ = true;
    const StratifiedProfile& profile = solver_.stratified_profile();
    for (const Point* p : {&source_, &receiver_})
        if (p->z < profile.floor_z())
            throw DataInputError(fmt::format("z = {} m lies below the deepest depth the paths are found to ({} m)", p->z,
                                             profile.floor_z()));
    StratifiedPathOptions options;
    options.max_bounces = options_.max_bounces;
    options.bottom_paths = options_.bottom_paths;
    options.scan_samples = options_.scan_samples;
    options.attenuation = model_.attenuation;
    const auto found = find_stratified_paths(profile, source_.z, receiver_.z, r_, options);
    const double n_source = model_.index->index(source_.z), n_receiver = model_.index->index(receiver_.z);
    for (const StratifiedPath& s : found) {
        ConnectedPath p;
        switch (s.kind) {
            case StratifiedPathKind::direct: p.kind = PathKind::direct; break;
            case StratifiedPathKind::refracted: p.kind = PathKind::refracted; break;
            case StratifiedPathKind::reflected: p.kind = PathKind::reflected; break;
            case StratifiedPathKind::bottom: p.kind = PathKind::bottom; break;
            case StratifiedPathKind::refracted_below: p.kind = PathKind::refracted_below; break;
            case StratifiedPathKind::ducted: p.kind = PathKind::ducted; break;
        }
        const double xi = s.ray_parameter;
        p.time_s = s.time_s;
        p.ray_parameter = xi;
        p.launch_zenith_rad = s.launch_zenith_rad;
        p.arrival_zenith_rad = s.arrival_zenith_rad;
        p.length_m = s.length_m;
        p.horizontal_distance_m = r_;
        p.azimuth_rad = azimuth_;
        p.attenuation_exponent = s.attenuation_exponent;
        std::complex<double> interface_s{1.0, 0.0}, interface_p{1.0, 0.0};
        for (const PathTurn& turn : s.turns) {
            switch (turn.kind) {
                case PathTurnKind::turning:
                    ++p.turning_points;
                    if (!p.turning_z_m) p.turning_z_m = turn.z_m;
                    p.events.push_back({PathEventKind::turning, turn.offset_m, turn.z_m});
                    break;
                case PathTurnKind::surface_reflection: {
                    ++p.surface_bounces;
                    p.events.push_back({PathEventKind::surface_reflection, turn.offset_m, 0.0});
                    const FresnelCoefficients f = fresnel(n_surface_, n_air_, cos_from(n_surface_, xi));
                    interface_s *= f.r_s;
                    interface_p *= f.r_p;
                    break;
                }
                case PathTurnKind::bottom_reflection: {
                    ++p.bottom_bounces;
                    p.events.push_back({PathEventKind::bottom_reflection, turn.offset_m, turn.z_m});
                    const double field = std::sqrt(model_.bottom->power_reflectivity);
                    interface_s *= field;
                    interface_p *= field;
                    break;
                }
            }
        }
        // ∂r/∂θ0 = ∂r/∂ξ·n0·cos θ0; where the path is horizontal at the source (∂r/∂ξ infinite) it
        // is the finite |∂r/∂ξ|·cos θ0·cos θr over cos θr, and infinite where it is horizontal at
        // the receiver only.
        const double launch_cos = std::cos(p.launch_zenith_rad), cos_receiver = cos_from(n_receiver, xi);
        p.distance_derivative = s.distance_derivative;
        if (std::isfinite(s.distance_derivative)) {
            p.distance_per_launch_angle = s.distance_derivative * n_source * launch_cos;
        } else {
            const double sign = launch_cos >= 0.0 ? 1.0 : -1.0;
            p.distance_per_launch_angle =
                cos_receiver > 0.0 ? sign * s.derivative_cosines / cos_receiver * n_source : infinity;
        }
        RayTube tube;
        tube.n_source = n_source;
        tube.n_receiver = n_receiver;
        tube.horizontal_distance_m = r_;
        tube.ray_parameter = xi;
        tube.derivative_cosines = s.derivative_cosines;
        tube.distance_derivative = s.distance_derivative;
        tube.length_m = p.length_m;
        p.amplitude = path_amplitude(interface_s, interface_p, 1.0, p.attenuation_exponent, tube);
        paths_.push_back(std::move(p));
    }
}

void PathFinder::transmitted_pair() {
    const bool source_in_air = source_.z > 0.0;
    const Point& ice = source_in_air ? receiver_ : source_;
    const Point& air = source_in_air ? source_ : receiver_;
    z_high_ = ice.z;
    n_high_ = model_.index->index(ice.z);
    for (int apexes = 0; apexes <= options_.max_bounces; ++apexes) {
        if (apexes > 0 && !bottom_z_) break;
        // From the ice end to the surface crossing the ray must arrive from below: the last
        // apex before the crossing is a bottom reflection, and apexes alternate before it.
        Family family;
        family.nodes.push_back({NodeKind::ice_end, ice.z});
        NodeKind next = apexes % 2 == 1 ? NodeKind::bottom_reflection : NodeKind::upper_apex;
        for (int k = 0; k < apexes; ++k) {
            if (next == NodeKind::bottom_reflection) {
                family.nodes.push_back({NodeKind::bottom_reflection, *bottom_z_});
                ++family.bottom_reflections;
                next = NodeKind::upper_apex;
            } else {
                family.nodes.push_back({NodeKind::upper_apex, 0.0});
                ++family.upper_apexes;
                next = NodeKind::bottom_reflection;
            }
        }
        family.nodes.push_back({NodeKind::crossing, 0.0});
        family.nodes.push_back({NodeKind::air_end, air.z});
        family.crossing = true;
        const Node& first_apex = family.nodes[1];
        if (first_apex.kind == NodeKind::upper_apex && ice.z == 0.0) continue;
        if (first_apex.kind == NodeKind::bottom_reflection && ice.z == first_apex.z) continue;
        if (source_in_air) std::reverse(family.nodes.begin(), family.nodes.end());
        solve_transmitted(family, terms(family, false));
    }
}

// Through the surface: the ray parameter is at most n_air (the air leg becomes horizontal) and
// n_surface. In the air-zenith variable ξ = n_air sin θ the distance grows monotonically, and
// θ = atan(R / h) already takes the air leg alone to R, which brackets the root.
void PathFinder::solve_transmitted(const Family& family, const std::vector<Term>& terms) {
    const double height = std::max(source_.z, receiver_.z);
    double theta_high = std::atan2(r_, height);
    if (n_air_ > n_surface_) theta_high = std::min(theta_high, std::asin(n_surface_ / n_air_));
    // Where sin θ rounds to 1 the air leg is horizontal and its distance infinite: the largest
    // double instead keeps TOMS748's interpolation finite (the root is then unresolvable, which
    // add_path reports).
    auto f = [&](double theta) {
        const double distance = evaluate(terms, n_air_ * std::sin(theta)).distance;
        return std::isinf(distance) ? std::numeric_limits<double>::max() : distance - r_;
    };
    if (r_ == 0.0) {
        add_path(family, 0.0, false);
        return;
    }
    const double f1 = f(theta_high);
    // An ice end on the surface has no ice leg: the air leg alone reaches R at θ_high, and f1 is
    // zero up to the rounding of tan(atan2(R, h)); that is the path, not a miss.
    if (f1 < 0.0 && -f1 > root_residual(r_)) return;
    const double theta = f1 <= 0.0 ? theta_high : bracketed_root(f, 0.0, theta_high, -r_, f1);
    add_path(family, n_air_ * std::sin(theta), false);
}

void PathFinder::air_pair() {
    const double n = n_air_;
    {  // the straight line
        const double dz = receiver_.z - source_.z, d = std::hypot(r_, dz);
        ConnectedPath p;
        p.kind = PathKind::direct;
        p.ray_parameter = n * r_ / d;
        p.time_s = n * d / speed_of_light;
        p.length_m = d;
        p.horizontal_distance_m = r_;
        p.azimuth_rad = azimuth_;
        p.launch_zenith_rad = p.arrival_zenith_rad = std::atan2(r_, dz);
        const double q = n * std::abs(dz) / d;  // √(n² − ξ²)
        p.distance_derivative = dz != 0.0 ? std::abs(dz) * n * n / (q * q * q) : infinity;
        p.distance_per_launch_angle = dz != 0.0 ? d * d / dz : infinity;
        p.amplitude.spreading_distance_m = d;
        p.amplitude.field_s = p.amplitude.field_p = 1.0 / d;
        paths_.push_back(p);
    }
    {  // off the surface, from the image of the source
        const double depth_sum = source_.z + receiver_.z, d = std::hypot(r_, depth_sum);
        const double cos_i = depth_sum / d;
        ConnectedPath p;
        p.kind = PathKind::reflected;
        p.ray_parameter = n * r_ / d;
        p.time_s = n * d / speed_of_light;
        p.length_m = d;
        p.horizontal_distance_m = r_;
        p.azimuth_rad = azimuth_;
        p.launch_zenith_rad = pi - std::atan2(r_, depth_sum);
        p.arrival_zenith_rad = std::atan2(r_, depth_sum);
        p.surface_bounces = 1;
        p.events.push_back({PathEventKind::surface_reflection, r_ * source_.z / depth_sum, 0.0});
        const double q = n * cos_i;
        p.distance_derivative = depth_sum * n * n / (q * q * q);
        p.distance_per_launch_angle = -d * d / depth_sum;
        const FresnelCoefficients f = fresnel(n, n_surface_, cos_i);
        p.amplitude.interface_s = f.r_s;
        p.amplitude.interface_p = f.r_p;
        p.amplitude.spreading_distance_m = d;
        p.amplitude.field_s = f.r_s / d;
        p.amplitude.field_p = f.r_p / d;
        paths_.push_back(p);
    }
}

// Two ends at one depth where dn/dz = 0 (a homogeneous layer): the horizontal ray stays there.
void PathFinder::add_horizontal_path(double z) {
    const double n = model_.index->index(z);
    ConnectedPath p;
    p.kind = PathKind::direct;
    p.ray_parameter = n;
    p.time_s = n * r_ / speed_of_light;
    p.length_m = r_;
    p.horizontal_distance_m = r_;
    p.azimuth_rad = azimuth_;
    p.launch_zenith_rad = p.arrival_zenith_rad = 0.5 * pi;
    p.distance_derivative = p.distance_per_launch_angle = infinity;
    if (model_.attenuation) p.attenuation_exponent = r_ / model_.attenuation->length_m(z);
    p.amplitude.attenuation_factor = std::exp(-p.attenuation_exponent);
    p.amplitude.spreading_distance_m = r_;
    p.amplitude.field_s = p.amplitude.field_p = p.amplitude.attenuation_factor / r_;
    paths_.push_back(p);
}

void PathFinder::add_path(const Family& family, double xi, bool refracted) {
    ConnectedPath p;
    p.ray_parameter = xi;
    p.horizontal_distance_m = r_;
    p.azimuth_rad = azimuth_;
    double turning_z = 0.0;
    if (refracted && family.upper_apexes > 0) {
        const auto turning = solver_.turning_z(xi, z_high_);
        if (!turning)
            throw NumericalError(fmt::format("no turning point for ray parameter {} above z = {} m", xi, z_high_));
        turning_z = *turning;
        p.turning_z_m = turning_z;
    }
    const auto& nodes = family.nodes;
    auto z_of = [&](const Node& node) { return node.kind == NodeKind::upper_apex ? turning_z : node.z; };
    auto moving_up = [&](const Node& a, const Node& b) {
        // Through the surface the ray moves from the ice end toward the air end, even when the ice
        // end lies on the surface itself (z = 0 at both nodes of that leg).
        if (a.kind == NodeKind::air_end) return false;
        if (b.kind == NodeKind::air_end) return true;
        if (b.kind == NodeKind::crossing) return true;
        if (a.kind == NodeKind::crossing) return false;
        if (b.kind == NodeKind::upper_apex || a.kind == NodeKind::bottom_reflection) return true;
        if (a.kind == NodeKind::upper_apex || b.kind == NodeKind::bottom_reflection) return false;
        return z_of(b) > z_of(a);
    };

    const double n_source = index_at_end(source_), n_receiver = index_at_end(receiver_);
    const double cos_source = cos_from(n_source, xi), cos_receiver = cos_from(n_receiver, xi);
    auto horizontal = [&](const Point& e, double n) { return e.z <= 0.0 && n - xi <= horizontal_tolerance * n; };
    const bool horizontal_at_source = horizontal(source_, n_source), horizontal_at_receiver = horizontal(receiver_, n_receiver);
    // ∂r/∂ξ·cos θ0·cos θr, leg by leg: a leg ending at a horizontal end contributes its limit
    // ±cos θ(other end)/|dn/dz| (+ for a leg with fixed ends, − for one whose turning point moves).
    double regular_derivative = 0.0, singular_part = 0.0;
    auto singular_leg = [&](bool fixed_ends, bool at_source) {
        const double gradient = std::abs(model_.index->gradient(at_source ? source_.z : receiver_.z));
        singular_part += (fixed_ends ? 1.0 : -1.0) * (at_source ? cos_receiver : cos_source) / gradient;
    };

    double offset = 0.0;
    double air_horizontal = 0.0, air_length = 0.0;  // of the air leg, when there is one
    std::complex<double> interface_s{1.0, 0.0}, interface_p{1.0, 0.0};
    double flux = 1.0;
    const double cos_ice_surface = cos_from(n_surface_, xi);
    const std::size_t last = nodes.size() - 1;
    for (std::size_t i = 0; i < last; ++i) {
        const Node &a = nodes[i], &b = nodes[i + 1];
        if (a.kind == NodeKind::air_end || b.kind == NodeKind::air_end) {
            const double height = a.kind == NodeKind::air_end ? a.z : b.z;
            const double cos_air = cos_from(n_air_, xi);
            // ξ = n_air to the last bit: a horizontal air leg, whose extent the limit below sets.
            const double leg = cos_air > 0.0 ? height / cos_air : height;
            air_horizontal = cos_air > 0.0 ? leg * xi / n_air_ : 0.0;
            air_length = leg;
            p.length_m += leg;
            p.time_s += n_air_ * leg / speed_of_light;
            offset += air_horizontal;
            regular_derivative += height / (n_air_ * cos_air * cos_air * cos_air);
        } else {
            const Segment s = solver_.segment(xi, z_of(a), z_of(b));
            p.length_m += s.length_m;
            p.time_s += s.time_s;
            p.attenuation_exponent += s.attenuation_exponent;
            offset += s.distance_m;
            const bool moving_turning_point = refracted && (a.kind == NodeKind::upper_apex || b.kind == NodeKind::upper_apex);
            const bool at_source = i == 0 && horizontal_at_source, at_receiver = i + 1 == last && horizontal_at_receiver;
            if (at_source || at_receiver) {
                if (at_source) singular_leg(!moving_turning_point, true);
                if (at_receiver) singular_leg(!moving_turning_point, false);
            } else if (moving_turning_point) {
                regular_derivative += solver_.distance_to_turning(xi, a.kind == NodeKind::upper_apex ? b.z : a.z).derivative;
            } else {
                regular_derivative += s.distance_derivative;
            }
        }
        if (i + 1 == last) break;  // b is the receiver
        switch (b.kind) {
            case NodeKind::upper_apex:
                if (refracted) {
                    ++p.turning_points;
                    p.events.push_back({PathEventKind::turning, offset, turning_z});
                } else {
                    ++p.surface_bounces;
                    p.events.push_back({PathEventKind::surface_reflection, offset, 0.0});
                    const FresnelCoefficients f = fresnel(n_surface_, n_air_, cos_ice_surface);
                    interface_s *= f.r_s;
                    interface_p *= f.r_p;
                }
                break;
            case NodeKind::bottom_reflection: {
                ++p.bottom_bounces;
                p.events.push_back({PathEventKind::bottom_reflection, offset, b.z});
                const double field = std::sqrt(model_.bottom->power_reflectivity);
                interface_s *= field;
                interface_p *= field;
                break;
            }
            case NodeKind::crossing: {
                p.crosses_surface = true;
                p.events.push_back({PathEventKind::surface_crossing, offset, 0.0});
                const bool upward = a.kind != NodeKind::air_end;
                const double n1 = upward ? n_surface_ : n_air_, n2 = upward ? n_air_ : n_surface_;
                const double cos_1 = upward ? cos_ice_surface : cos_from(n_air_, xi);
                const FresnelCoefficients f = fresnel(n1, n2, cos_1);
                interface_s *= f.t_s;
                interface_p *= f.t_p;
                flux *= cos_1 > 0.0 ? std::sqrt(n2 * f.transmitted_zenith_cos / (n1 * cos_1)) : 0.0;
                break;
            }
            default: break;
        }
    }
    // Through the surface with ξ so close to n_air that the air leg changes by more than the miss
    // between neighbouring doubles ξ, the air leg is horizontal to the precision of a double: its
    // horizontal extent is whatever the ice leg leaves of R (a source just above the surface
    // reaching far into the ice). Take that limit: the air leg as the straight line it is.
    std::optional<double> grazing_air_extent;  // set when the air leg is taken in that limit
    constexpr double epsilon = std::numeric_limits<double>::epsilon();
    const double air_gap = n_air_ - xi;  // the air leg changes by air_horizontal·ε·n_air/air_gap between neighbouring ξ
    if (family.crossing && std::abs(r_ - offset) > root_residual(r_) &&
        (air_gap <= 8.0 * epsilon * n_air_ || std::abs(r_ - offset) <= 4.0 * air_horizontal * epsilon * n_air_ / air_gap)) {
        const double height = std::max(source_.z, receiver_.z);
        const double extent = air_horizontal + (r_ - offset);
        if (extent >= 0.0) {
            const double length = std::hypot(extent, height);
            p.length_m += length - air_length;
            p.time_s += n_air_ * (length - air_length) / speed_of_light;
            offset = r_;
            grazing_air_extent = extent;
        }
    }
    // The root leaves a residual in distance; along a family dT/dr = ξ/c, so correct to first order.
    // A larger residual means that no double ξ resolves the path: a ray grazing the surface in
    // the air, where r changes by more than that between neighbouring values of ξ.
    if (!(std::abs(r_ - offset) <= root_residual(r_)))
        throw NumericalError(fmt::format("the {} path of ray parameter {} cannot be resolved in double precision: "
                                         "it reaches {} m instead of {} m (a ray grazing the surface?)",
                                         family.crossing ? "transmitted" : "ice", xi, offset, r_));
    p.time_s += xi * (r_ - offset) / speed_of_light;

    if (p.bottom_bounces > 0) p.kind = PathKind::bottom;
    else if (p.crosses_surface) p.kind = PathKind::transmitted;
    else if (p.surface_bounces > 0) p.kind = PathKind::reflected;
    else if (p.turning_points > 0) p.kind = PathKind::refracted;
    else p.kind = PathKind::direct;

    const bool launch_up = moving_up(nodes[0], nodes[1]);
    const bool arrival_up = moving_up(nodes[last - 1], nodes[last]);
    const double theta_source = upward_zenith(n_source, xi), theta_receiver = upward_zenith(n_receiver, xi);
    p.launch_zenith_rad = launch_up ? theta_source : pi - theta_source;
    p.arrival_zenith_rad = arrival_up ? theta_receiver : pi - theta_receiver;
    if (grazing_air_extent) {
        const double air_zenith = std::atan2(*grazing_air_extent, std::max(source_.z, receiver_.z));
        if (source_.z > 0.0) p.launch_zenith_rad = pi - air_zenith;
        else p.arrival_zenith_rad = air_zenith;
    }

    // Spreading: L_eff² = n0²·(r/ξ)·|∂r/∂ξ|·|cos θ0 cos θr| (Červený 2001 with ∂ξ/∂θ0 = n0 cos θ0);
    // r/ξ → ∂r/∂ξ for a vertical path.
    const bool horizontal_at_an_end = horizontal_at_source || horizontal_at_receiver;
    const double launch_cos = launch_up ? cos_source : -cos_source;
    double derivative_cosines;  // |∂r/∂ξ|·|cos θ0 cos θr|
    if (horizontal_at_an_end) {
        derivative_cosines = std::abs(regular_derivative * cos_source * cos_receiver + singular_part);
        p.distance_derivative = infinity;
        p.distance_per_launch_angle =
            horizontal_at_receiver && !horizontal_at_source ? infinity : (launch_up ? 1.0 : -1.0) * singular_part / cos_receiver * n_source;
    } else {
        derivative_cosines = std::abs(regular_derivative) * cos_source * cos_receiver;
        p.distance_derivative = regular_derivative;
        p.distance_per_launch_angle = regular_derivative * n_source * launch_cos;
    }
    RayTube tube;
    tube.n_source = n_source;
    tube.n_receiver = n_receiver;
    tube.horizontal_distance_m = r_;
    tube.ray_parameter = xi;
    tube.derivative_cosines = derivative_cosines;
    tube.distance_derivative = regular_derivative;
    tube.length_m = p.length_m;
    p.amplitude = path_amplitude(interface_s, interface_p, flux, p.attenuation_exponent, tube);
    paths_.push_back(std::move(p));
}

}  // namespace

bool uses_stratified_paths(const RaySolver& solver, const Point& source, const Point& receiver) {
    if (source.z > 0.0 || receiver.z > 0.0) return false;
    if (solver.name() == "stratified") return true;
    const IndexProfile& index = *solver.model().index;
    // Exponential and constant profiles have no inversion. The stratified analysis cuts an
    // exponential into cells of half a scale depth down to 10 km: below a scale depth of 1 m (no
    // firn has one; model files accept 0.01 m) that is too many cells, and the closed form keeps them.
    const auto* exponential = dynamic_cast<const ExponentialProfile*>(&index);
    if (exponential && exponential->scale_depth_m() < 1.0) return false;
    // Equal depths: the refracted path turns within r²·|dn/dz|/(8n) of the ends, so close that for
    // short pairs (r below a metre or so) n − ξ at the ends is lost to rounding in ξ.
    if (source.z == receiver.z) return true;
    if (!exponential && index.kind() != "constant") {
        const StratifiedProfile& profile = solver.stratified_profile();
        for (const StratifiedProfile::Run& run : profile.runs())
            if (run.direction < 0) return true;
    }
    // The near-n_deep limit: how much n still grows below the shallower end, exactly for the
    // exponential (B·e^{z/z0}), else down to the deepest depth a model may have, with a gradient
    // that is not zero where that difference is lost to rounding.
    const double z_high = std::max(source.z, receiver.z), n_high = index.index(z_high);
    double rise = 0.0;
    bool growing = false;
    if (exponential) {
        rise = (exponential->n_deep() - exponential->n_surface()) * std::exp(z_high / exponential->scale_depth_m());
        growing = rise > 0.0;
    } else {
        rise = index.index(-model_limits::deepest_depth_m) - n_high;
        growing = rise > 0.0 || index.gradient(z_high) != 0.0;
    }
    return growing && rise < near_deep_limit * n_high;
}

std::vector<ConnectedPath> find_paths(const RaySolver& solver, const Point& source, const Point& receiver,
                                      const PathOptions& options) {
    return PathFinder(solver, source, receiver, options).run();
}

}  // namespace firnray
