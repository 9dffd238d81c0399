#include "locate/travel_time_table.hpp"

#include <algorithm>
#include <cmath>
#include <map>

#include <fmt/format.h>

#include "core/constants.hpp"
#include "core/errors.hpp"
#include "station/map_tables.hpp"

namespace firnray {

namespace {

// The cubic term of the Hermite polynomial between two depths (ns) above which the pair is left
// to find_paths: it measures the third derivative of T along the depth, which grows without
// bound next to a fold of the paths (a caustic), where the interpolation would be poor. Away from
// folds the interpolation error is a small fraction of this term.
constexpr double max_cubic_term_ns = 0.02;

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

// The tables of one receiver depth: its source depths, split where the engine changes (below
// deep_table_limit_m only the stratified table is exact), each part one MapTables.
struct TravelTimeTable::Ladder {
    double receiver_z = 0.0;
    std::vector<double> levels;  // highest first
    struct Part {
        std::size_t first = 0;  // index of its first level in `levels`
        std::unique_ptr<MapTables> tables;
    };
    std::vector<Part> parts;

    void arrivals(std::size_t level, double distance_m, std::vector<MapArrival>& out) const {
        for (auto it = parts.rbegin(); it != parts.rend(); ++it)
            if (level >= it->first) {
                it->tables->at(receiver_z).arrivals(level - it->first, distance_m, out);
                return;
            }
    }
};

TravelTimeTable::~TravelTimeTable() = default;

TravelTimeTable::TravelTimeTable(const RaySolver& solver, std::span<const Receiver> receivers,
                                 const TravelTimeTableOptions& options)
    : solver_(solver), receivers_(receivers.begin(), receivers.end()), options_(options) {
    const auto fail = [](const char* field, const char* why) {
        throw DataInputError(fmt::format("travel-time table: {}", why), {"", 0, field});
    };
    if (!(std::isfinite(options_.deepest_m) && options_.deepest_m > 0.0)) fail("deepest_m", "must be above 0 m");
    if (!(options_.spacing_fraction > 0.0 && options_.spacing_fraction < 1.0))
        fail("spacing_fraction", "must be between 0 and 1");
    if (!(options_.min_spacing_m > 0.0 && options_.max_spacing_m >= options_.min_spacing_m &&
          std::isfinite(options_.max_spacing_m)))
        fail("min_spacing_m", "spacings must be above 0 m, the largest not below the smallest");
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

    std::map<double, std::shared_ptr<const Ladder>> by_depth;
    ladder_of_.resize(receivers_.size());
    for (std::size_t c = 0; c < receivers_.size(); ++c) {
        const double receiver_z = receivers_[c].z_m;
        if (!(receiver_z <= 0.0) || receiver_z <= deepest_z) continue;  // in the air or below the ladder
        if (auto it = by_depth.find(receiver_z); it != by_depth.end()) {
            ladder_of_[c] = it->second;
            continue;
        }
        auto ladder = std::make_shared<Ladder>();
        ladder->receiver_z = receiver_z;
        ladder->levels = source_ladder(receiver_z, deepest_z, options_);
        // Above deep_table_limit_m the fast table is exact on a profile growing with depth;
        // MapTables chooses per part, so the shallow levels keep it when the deep ones cannot.
        std::size_t split = 0;
        while (split < ladder->levels.size() && -ladder->levels[split] <= deep_table_limit_m) ++split;
        const double receiver[] = {receiver_z};
        try {
            for (const auto& [first, last] : {std::pair{std::size_t{0}, split}, std::pair{split, ladder->levels.size()}}) {
                if (first == last) continue;
                std::vector<double> part(ladder->levels.begin() + static_cast<std::ptrdiff_t>(first),
                                         ladder->levels.begin() + static_cast<std::ptrdiff_t>(last));
                ladder->parts.push_back({first, std::make_unique<MapTables>(solver, receiver, std::move(part), table_options)});
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

bool TravelTimeTable::paths(std::size_t receiver, const Point& source, std::vector<TabulatedPath>& out) const {
    out.clear();
    if (receiver >= ladder_of_.size() || !ladder_of_[receiver]) return false;
    const Ladder& ladder = *ladder_of_[receiver];
    const Receiver& r = receivers_[receiver];
    const double dx = source.x - r.x_m, dy = source.y - r.y_m;
    const double distance = std::hypot(dx, dy);
    if (!(source.z <= 0.0 && source.z >= ladder.levels.back())) return false;
    if (std::hypot(distance, source.z - r.z_m) < options_.near_receiver_m) return false;

    // The two tabulated depths around the source: levels[upper] >= z >= levels[upper + 1].
    const auto below = std::upper_bound(ladder.levels.begin(), ladder.levels.end(), source.z, std::greater<>());
    std::size_t lower = static_cast<std::size_t>(below - ladder.levels.begin());
    if (lower == 0) lower = 1;
    if (lower >= ladder.levels.size()) lower = ladder.levels.size() - 1;
    const std::size_t upper = lower - 1;
    const double z_a = ladder.levels[upper], z_b = ladder.levels[lower];

    thread_local std::vector<MapArrival> at_a, at_b;
    ladder.arrivals(upper, distance, at_a);
    ladder.arrivals(lower, distance, at_b);
    if (at_a.size() != at_b.size()) return false;  // a path appears or vanishes between the two depths

    const double n_a = solver_.model().index_at(z_a), n_b = solver_.model().index_at(z_b);
    const double h = z_b - z_a;  // negative
    const double s = (source.z - z_a) / h, s2 = s * s, s3 = s2 * s;
    const double h00 = 2 * s3 - 3 * s2 + 1, h10 = s3 - 2 * s2 + s, h01 = -2 * s3 + 3 * s2, h11 = s3 - s2;
    const double d00 = 6 * s2 - 6 * s, d10 = 3 * s2 - 4 * s + 1, d01 = -6 * s2 + 6 * s, d11 = 3 * s2 - 2 * s;
    for (std::size_t k = 0; k < at_a.size(); ++k) {
        const MapArrival& a = at_a[k];
        const MapArrival& b = at_b[k];
        const auto kind_a = path_kind(a.kind), kind_b = path_kind(b.kind);
        if (!kind_a || !kind_b) return false;
        // Paths of the two depths are paired in time order; their kinds may differ where one
        // family passes into the next (direct into refracted, refracted into reflected), across
        // which T is smooth. A path leaving upward at one depth and downward at the other is not
        // one smooth path.
        const double slope_a = vertical_slope(*kind_a, a.ray_parameter, n_a, z_a, r.z_m);
        const double slope_b = vertical_slope(*kind_b, b.ray_parameter, n_b, z_b, r.z_m);
        const double t_a = a.time_s * 1e9, t_b = b.time_s * 1e9;  // ns, slopes in ns/m below
        const double m_a = slope_a * 1e9, m_b = slope_b * 1e9;
        const double cubic = 2.0 * (t_a - t_b) + h * (m_a + m_b);
        if (!(std::abs(cubic) <= max_cubic_term_ns)) return false;  // next to a fold
        TabulatedPath p;
        p.kind = s < 0.5 ? *kind_a : *kind_b;
        p.time_s = (h00 * t_a + h10 * h * m_a + h01 * t_b + h11 * h * m_b) * 1e-9;
        p.ray_parameter = a.ray_parameter + s * (b.ray_parameter - a.ray_parameter);
        const double horizontal = p.ray_parameter / speed_of_light;
        p.gradient.dx = distance > 0.0 ? horizontal * dx / distance : 0.0;
        p.gradient.dy = distance > 0.0 ? horizontal * dy / distance : 0.0;
        p.gradient.dz = (d00 * t_a + d10 * h * m_a + d01 * t_b + d11 * h * m_b) / h * 1e-9;
        out.push_back(p);
    }
    // Interpolated times of two paths may cross where the table's own order would swap them.
    std::sort(out.begin(), out.end(), [](const TabulatedPath& x, const TabulatedPath& y) { return x.time_s < y.time_s; });
    return true;
}

}  // namespace firnray
