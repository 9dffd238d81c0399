#include "locate/travel_time_table.hpp"

#include <algorithm>
#include <cmath>
#include <cstdint>
#include <map>
#include <optional>

#include <fmt/format.h>

#include "core/constants.hpp"
#include "core/errors.hpp"
#include "core/parallel.hpp"
#include "station/map_tables.hpp"

namespace firnray {

namespace {

// The cubic term of a Hermite polynomial between two nodes (ns) above which the pair is left to
// find_paths: it measures the third derivative of T along the interval, which grows without
// bound next to a fold of the paths (a caustic), where the interpolation would be poor. Away from
// folds the interpolation error is a small fraction of this term: with 0.1 ns the times agree
// with find_paths within 0.01 ns (tests/locate/test_travel_time_table.cpp).
constexpr double max_cubic_term_ns = 0.1;

// The source depths of one receiver depth, highest first: from the receiver's depth up to the
// surface and down to the deepest depth, spaced by a fraction of the vertical distance from it.
std::vector<double> source_ladder(double receiver_z, double deepest_z, const TravelTimeTableOptions& options) {
    const auto spacing = [&](double distance) {
        return std::clamp(options.spacing_fraction * distance, options.min_spacing_m, options.max_spacing_m);
    };
    std::vector<double> levels;
    const double start = std::clamp(receiver_z, deepest_z, 0.0);
    for (double z = start; z < 0.0; z += spacing(z - receiver_z)) levels.push_back(z);
    levels.push_back(0.0);
    for (double z = start - spacing(0.0); z > deepest_z; z -= spacing(receiver_z - z)) levels.push_back(z);
    levels.push_back(deepest_z);
    std::sort(levels.begin(), levels.end(), std::greater<>());
    levels.erase(std::unique(levels.begin(), levels.end()), levels.end());
    return levels;
}

std::optional<PathKind> path_kind(ArrivalKind kind) {
    switch (kind) {
        case ArrivalKind::direct: return PathKind::direct;
        case ArrivalKind::refracted: return PathKind::refracted;
        case ArrivalKind::reflected: return PathKind::reflected;
        case ArrivalKind::bottom: return PathKind::bottom;
        case ArrivalKind::refracted_below: return PathKind::refracted_below;
        case ArrivalKind::ducted: return std::nullopt;  // may leave the source either way
    }
    return std::nullopt;
}

// ∂T/∂z of the source (s/m) for a path of this kind leaving a source at source_z, where the index
// is n: minus the vertical slowness along the launch direction (Fermat's principle, as
// compute_delays). Rays that leave upward (direct to a receiver above, refracted, reflected) get
// −√(n² − ξ²)/c, rays that leave downward +√(n² − ξ²)/c.
double vertical_slope(PathKind kind, double ray_parameter, double n, double source_z, double receiver_z) {
    const double vertical = std::sqrt(std::max(n * n - ray_parameter * ray_parameter, 0.0)) / speed_of_light;
    const bool upward =
        kind == PathKind::refracted || kind == PathKind::reflected || (kind == PathKind::direct && source_z < receiver_z);
    return upward ? -vertical : vertical;
}

}  // namespace

// The grid of one receiver depth: per source depth (level) and horizontal distance (node) the
// arrivals of the map tables there, sorted by time.
struct TravelTimeTable::Ladder {
    double receiver_z = 0.0;
    std::vector<double> levels;     // highest first
    std::vector<double> distances;  // increasing, from 0
    struct Arrival {
        double time_ns = 0.0, ray_parameter = 0.0;
        ArrivalKind kind = ArrivalKind::direct;
    };
    // Per level: first[node] .. first[node + 1] index its arrivals in `arrivals`.
    std::vector<std::vector<std::uint32_t>> first;
    std::vector<std::vector<Arrival>> arrivals;
};

namespace {

// Horizontal distances from 0 to max_distance_m, spaced like the depths.
std::vector<double> distance_ladder(const TravelTimeTableOptions& options) {
    std::vector<double> distances;
    for (double x = 0.0; x < options.max_distance_m;
         x += std::clamp(options.spacing_fraction * x, options.min_spacing_m, options.max_distance_spacing_m))
        distances.push_back(x);
    distances.push_back(options.max_distance_m);
    return distances;
}

// One path at one level, interpolated in distance between two nodes: its time (ns), ray
// parameter and kind; false next to a fold.
struct LevelValue {
    double time_ns = 0.0, ray_parameter = 0.0;
    ArrivalKind kind = ArrivalKind::direct;
};

}  // namespace

TravelTimeTable::~TravelTimeTable() = default;

TravelTimeTable::TravelTimeTable(const RaySolver& solver, std::span<const Receiver> receivers,
                                 const TravelTimeTableOptions& options)
    : solver_(solver), receivers_(receivers.begin(), receivers.end()), options_(options) {
    const auto fail = [](const char* field, const char* why) {
        throw DataInputError(fmt::format("travel-time table: {}", why), {"", 0, field});
    };
    if (!(std::isfinite(options_.deepest_m) && options_.deepest_m > 0.0)) fail("deepest_m", "must be above 0 m");
    if (!(std::isfinite(options_.max_distance_m) && options_.max_distance_m > 0.0))
        fail("max_distance_m", "must be above 0 m");
    if (!(options_.spacing_fraction > 0.0 && options_.spacing_fraction < 1.0))
        fail("spacing_fraction", "must be between 0 and 1");
    if (!(options_.min_spacing_m > 0.0 && options_.max_spacing_m >= options_.min_spacing_m &&
          options_.max_distance_spacing_m >= options_.min_spacing_m && std::isfinite(options_.max_spacing_m) &&
          std::isfinite(options_.max_distance_spacing_m)))
        fail("min_spacing_m", "spacings must be finite and above 0 m, the largest not below the smallest");
    if (!(options_.near_receiver_m >= 0.0)) fail("near_receiver_m", "must be >= 0 m");

    const FirnModel& model = solver.model();
    double deepest_z = -options_.deepest_m;
    // Sources stay above a reflecting bottom: the tables are not defined below it.
    if (model.bottom) deepest_z = std::max(deepest_z, model.bottom->z_m + 1.0);

    MapTableOptions table_options;
    table_options.ray_parameters = options_.ray_parameters;
    table_options.max_bounces = options_.paths.max_bounces;
    table_options.bottom_paths = options_.paths.bottom_paths;
    table_options.threads = options_.threads;
    table_options.control.cancel = options_.control.cancel;
    const std::vector<double> distances = distance_ladder(options_);

    std::map<double, std::shared_ptr<const Ladder>> by_depth;
    ladder_of_.resize(receivers_.size());
    for (std::size_t c = 0; c < receivers_.size(); ++c) {
        const double receiver_z = receivers_[c].z_m;
        if (!(receiver_z <= 0.0) || receiver_z <= deepest_z) continue;  // in the air or below the grid
        if (auto it = by_depth.find(receiver_z); it != by_depth.end()) {
            ladder_of_[c] = it->second;
            continue;
        }
        auto ladder = std::make_shared<Ladder>();
        ladder->receiver_z = receiver_z;
        ladder->levels = source_ladder(receiver_z, deepest_z, options_);
        ladder->distances = distances;
        // Above deep_table_limit_m the fast table is exact on a profile growing with depth;
        // MapTables chooses per part, so the shallow levels keep it when the deep ones cannot.
        std::size_t split = 0;
        while (split < ladder->levels.size() && -ladder->levels[split] <= deep_table_limit_m) ++split;
        const double receiver[] = {receiver_z};
        const std::size_t level_count = ladder->levels.size();
        ladder->first.resize(level_count);
        ladder->arrivals.resize(level_count);
        try {
            for (const auto& part : {std::pair{std::size_t{0}, split}, std::pair{split, level_count}}) {
                const std::size_t begin = part.first, end = part.second;  // named, so that the lambda may capture them
                if (begin == end) continue;
                const MapTables tables(solver, receiver,
                                       std::vector<double>(ladder->levels.begin() + static_cast<std::ptrdiff_t>(begin),
                                                           ladder->levels.begin() + static_cast<std::ptrdiff_t>(end)),
                                       table_options);
                const ReceiverDepthTable& table = tables.at(receiver_z);
                parallel_for(end - begin, options_.threads, options_.control, [&](std::size_t row) {
                    std::vector<MapArrival> found;
                    auto& first = ladder->first[begin + row];
                    auto& arrivals = ladder->arrivals[begin + row];
                    first.reserve(distances.size() + 1);
                    for (const double distance : distances) {
                        first.push_back(static_cast<std::uint32_t>(arrivals.size()));
                        table.arrivals(row, distance, found);
                        for (const MapArrival& a : found) arrivals.push_back({a.time_s * 1e9, a.ray_parameter, a.kind});
                    }
                    first.push_back(static_cast<std::uint32_t>(arrivals.size()));
                });
            }
        } catch (const NumericalError&) {
            continue;  // no table for this depth: its channels use find_paths
        } catch (const InputError&) {
            continue;
        }
        by_depth[receiver_z] = ladder;
        ladder_of_[c] = std::move(ladder);
    }
}

std::span<const double> TravelTimeTable::source_levels(std::size_t receiver) const {
    if (receiver >= ladder_of_.size() || !ladder_of_[receiver]) return {};
    return ladder_of_[receiver]->levels;
}

std::span<const double> TravelTimeTable::distances(std::size_t receiver) const {
    if (receiver >= ladder_of_.size() || !ladder_of_[receiver]) return {};
    return ladder_of_[receiver]->distances;
}

namespace {

// The bracketing pair of a sorted ladder: lower index i with ladder[i] and ladder[i + 1] around
// the value (comp: the ladder's order).
template <class Compare>
std::size_t bracket(const std::vector<double>& ladder, double value, Compare comp) {
    const auto after = std::upper_bound(ladder.begin(), ladder.end(), value, comp);
    const auto i = static_cast<std::size_t>(after - ladder.begin());
    return std::clamp<std::size_t>(i, 1, ladder.size() - 1) - 1;
}

}  // namespace

bool TravelTimeTable::paths(std::size_t receiver, const Point& source, std::vector<TabulatedPath>& out) const {
    out.clear();
    if (receiver >= ladder_of_.size() || !ladder_of_[receiver]) return false;
    const Ladder& ladder = *ladder_of_[receiver];
    const Receiver& r = receivers_[receiver];
    const double dx = source.x - r.x_m, dy = source.y - r.y_m;
    const double distance = std::hypot(dx, dy);
    if (!(source.z <= 0.0 && source.z >= ladder.levels.back() && distance <= ladder.distances.back())) return false;
    if (std::hypot(distance, source.z - r.z_m) < options_.near_receiver_m) return false;

    const std::size_t upper = bracket(ladder.levels, source.z, std::greater<>());
    const std::size_t node = bracket(ladder.distances, distance, std::less<>());
    const double x_a = ladder.distances[node], x_b = ladder.distances[node + 1];
    const double w = (distance - x_a) / (x_b - x_a), w2 = w * w, w3 = w2 * w;
    const double hx = x_b - x_a;
    const double slowness_ns = 1e9 / speed_of_light;  // ns/m per unit ξ

    // Every path at one level, interpolated in distance between the two nodes (same count at
    // both, paired in time order); false where a path appears or vanishes, or next to a fold.
    thread_local std::vector<LevelValue> at_a, at_b;
    const auto level_values = [&](std::size_t level, std::vector<LevelValue>& values) {
        values.clear();
        const auto& first = ladder.first[level];
        const auto& arrivals = ladder.arrivals[level];
        const std::size_t begin_a = first[node], count_a = first[node + 1] - begin_a;
        const std::size_t begin_b = first[node + 1], count_b = first[node + 2] - begin_b;
        if (count_a != count_b) return false;
        for (std::size_t k = 0; k < count_a; ++k) {
            const auto& a = arrivals[begin_a + k];
            const auto& b = arrivals[begin_b + k];
            const double m_a = a.ray_parameter * slowness_ns, m_b = b.ray_parameter * slowness_ns;
            const double cubic = 2.0 * (a.time_ns - b.time_ns) + hx * (m_a + m_b);
            if (!(std::abs(cubic) <= max_cubic_term_ns)) return false;
            LevelValue v;
            v.time_ns = (2 * w3 - 3 * w2 + 1) * a.time_ns + (w3 - 2 * w2 + w) * hx * m_a + (-2 * w3 + 3 * w2) * b.time_ns +
                        (w3 - w2) * hx * m_b;
            // ξ = c ∂T/∂r of the same polynomial, so that T and its gradient agree.
            v.ray_parameter = ((6 * w2 - 6 * w) * (a.time_ns - b.time_ns) / hx + (3 * w2 - 4 * w + 1) * m_a +
                               (3 * w2 - 2 * w) * m_b) /
                              slowness_ns;
            v.kind = w < 0.5 ? a.kind : b.kind;
            values.push_back(v);
        }
        return true;
    };
    if (!level_values(upper, at_a) || !level_values(upper + 1, at_b) || at_a.size() != at_b.size()) return false;

    const double z_a = ladder.levels[upper], z_b = ladder.levels[upper + 1];
    const double n_a = solver_.model().index_at(z_a), n_b = solver_.model().index_at(z_b);
    const double h = z_b - z_a;  // negative
    const double s = (source.z - z_a) / h, s2 = s * s, s3 = s2 * s;
    const double h00 = 2 * s3 - 3 * s2 + 1, h10 = s3 - 2 * s2 + s, h01 = -2 * s3 + 3 * s2, h11 = s3 - s2;
    const double d00 = 6 * s2 - 6 * s, d10 = 3 * s2 - 4 * s + 1, d01 = -6 * s2 + 6 * s, d11 = 3 * s2 - 2 * s;
    for (std::size_t k = 0; k < at_a.size(); ++k) {
        const LevelValue& a = at_a[k];
        const LevelValue& b = at_b[k];
        const auto kind_a = path_kind(a.kind), kind_b = path_kind(b.kind);
        if (!kind_a || !kind_b) return false;
        // Paths of the two depths are paired in time order; their kinds may differ where one
        // family passes into the next (direct into refracted, refracted into reflected), across
        // which T is smooth.
        const double m_a = vertical_slope(*kind_a, a.ray_parameter, n_a, z_a, r.z_m) * 1e9;  // ns/m
        const double m_b = vertical_slope(*kind_b, b.ray_parameter, n_b, z_b, r.z_m) * 1e9;
        const double cubic = 2.0 * (a.time_ns - b.time_ns) + h * (m_a + m_b);
        if (!(std::abs(cubic) <= max_cubic_term_ns)) return false;  // next to a fold
        TabulatedPath p;
        p.kind = s < 0.5 ? *kind_a : *kind_b;
        p.time_s = (h00 * a.time_ns + h10 * h * m_a + h01 * b.time_ns + h11 * h * m_b) * 1e-9;
        p.ray_parameter = a.ray_parameter + s * (b.ray_parameter - a.ray_parameter);
        const double horizontal = p.ray_parameter / speed_of_light;
        p.gradient.dx = distance > 0.0 ? horizontal * dx / distance : 0.0;
        p.gradient.dy = distance > 0.0 ? horizontal * dy / distance : 0.0;
        p.gradient.dz = (d00 * a.time_ns + d10 * h * m_a + d01 * b.time_ns + d11 * h * m_b) / h * 1e-9;
        out.push_back(p);
    }
    // Interpolated times of two paths may cross where the table's own order would swap them.
    std::sort(out.begin(), out.end(), [](const TabulatedPath& x, const TabulatedPath& y) { return x.time_s < y.time_s; });
    return true;
}

}  // namespace firnray
