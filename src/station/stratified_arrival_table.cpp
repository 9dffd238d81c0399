#include "station/stratified_arrival_table.hpp"

#include <algorithm>
#include <cmath>
#include <complex>
#include <limits>

#include <fmt/format.h>

#include "core/constants.hpp"
#include "core/errors.hpp"
#include "core/parallel.hpp"
#include "core/text.hpp"
#include "paths/amplitude.hpp"
#include "trace/bracketed_root.hpp"
#include "trace/fresnel.hpp"

namespace firnray {

namespace {

constexpr double infinity = std::numeric_limits<double>::infinity();
constexpr double not_a_number = std::numeric_limits<double>::quiet_NaN();
constexpr int samples_per_range_minimum = 24;
// Extra samples per range between v = 0 and the first uniform step, halving v each time.
constexpr int divergent_end_samples = 20;
// Folds whose extremum lies less than this beyond the sampled one are not refined (see build_row).
constexpr double fold_refinement_threshold_m = 1e-6;

// Where the regula falsi of solve_between and solve_in_tail stops when X − R does not come within
// its tolerance: a bracket of 1e-15 relative in u, or of 1e-9 in ln u next to a local minimum of n,
// where n − ξ (∝ u²) is then resolved to 2e-9 relative and X to about 1e-8 m. Where that offset is
// below about 1e-21 X itself carries noise (centimetres to a metre: the turning depth, nanometres
// from the minimum, is resolved only to a rounding error of z), which no finer bracket resolves.
double bracket_resolution(bool logarithmic, double lo, double hi) {
    return logarithmic ? 1e-9 : 1e-15 * std::max(std::abs(lo), std::abs(hi));
}

bool is_upper_end(const PathFamily& family, int j) { return family.starts_upward == (j % 2 == 0); }

// The kind of a family in an interval, as find_stratified_paths names it.
StratifiedPathKind kind_of(const PathFamily& family, const AccessibleInterval& interval) {
    if (family.ends == 0) return StratifiedPathKind::direct;
    const bool meets_lower = family.ends >= 2 || !family.starts_upward;
    if (meets_lower && interval.lower_kind == LowerEndKind::bottom) return StratifiedPathKind::bottom;
    if (family.ends >= 2) return StratifiedPathKind::ducted;
    if (!family.starts_upward) return StratifiedPathKind::refracted_below;
    return interval.upper_kind == UpperEndKind::turning ? StratifiedPathKind::refracted : StratifiedPathKind::reflected;
}

// Whether a family exists in an interval for a source and a receiver: a lower end must bound it
// (and be wanted, for the bottom), and a reflection at the point where the path starts or ends
// is no reflection.
bool family_exists(const PathFamily& family, const AccessibleInterval& interval, double z_source, double z_receiver,
                   bool bottom_paths) {
    if (family.ends == 0) return true;
    const bool meets_lower = family.ends >= 2 || !family.starts_upward;
    if (meets_lower && interval.lower_kind == LowerEndKind::unbounded) return false;
    if (meets_lower && interval.lower_kind == LowerEndKind::bottom && !bottom_paths) return false;
    auto at_fixed_end = [&](bool upper, double z) {
        return upper ? interval.upper_kind == UpperEndKind::surface && z == interval.upper_z
                     : interval.lower_kind == LowerEndKind::bottom && z == interval.lower_z;
    };
    return !at_fixed_end(family.starts_upward, z_source) && !at_fixed_end(is_upper_end(family, family.ends - 1), z_receiver);
}

void count_reflections(const PathFamily& family, const AccessibleInterval& interval, int& surface, int& bottom) {
    surface = bottom = 0;
    for (int j = 0; j < family.ends; ++j) {
        if (is_upper_end(family, j)) surface += interval.upper_kind == UpperEndKind::surface;
        else bottom += interval.lower_kind == LowerEndKind::bottom;
    }
}

ArrivalKind arrival_kind(StratifiedPathKind kind) {
    switch (kind) {
        case StratifiedPathKind::direct: return ArrivalKind::direct;
        case StratifiedPathKind::refracted: return ArrivalKind::refracted;
        case StratifiedPathKind::reflected: return ArrivalKind::reflected;
        case StratifiedPathKind::bottom: return ArrivalKind::bottom;
        case StratifiedPathKind::refracted_below: return ArrivalKind::refracted_below;
        case StratifiedPathKind::ducted: return ArrivalKind::ducted;
    }
    return ArrivalKind::direct;
}

}  // namespace

StratifiedArrivalTable::StratifiedArrivalTable(const FirnModel& model, const StratifiedProfile& profile,
                                               double receiver_z, std::vector<double> source_z,
                                               const StratifiedTableOptions& options)
    : model_(&model), profile_(&profile), receiver_z_(receiver_z), source_z_(std::move(source_z)) {
    const double floor = profile.floor_z();
    auto check_depth = [&](double z, const char* what) {
        if (!(z <= 0.0 && z >= floor))
            throw DataInputError(fmt::format("the {} must be in the ice, between {} m and the surface, not at z = {} m",
                                             what, number_for_message(floor), number_for_message(z)));
    };
    check_depth(receiver_z_, "receiver");
    for (double z : source_z_) check_depth(z, "source");
    if (options.ray_parameters < 16) throw DataInputError("at least 16 ray parameters are needed for a table");
    if (options.max_bounces < 0 || options.max_bounces > 64)
        throw DataInputError(fmt::format("max_bounces must be between 0 and 64 (got {})", options.max_bounces),
                             {"", 0, "max-bounces"});
    max_bounces_ = options.max_bounces;
    bottom_paths_ = options.bottom_paths;
    n_surface_ = profile.index(0.0);

    levels_ = source_z_;
    levels_.push_back(receiver_z_);
    std::sort(levels_.begin(), levels_.end(), std::greater<>());
    levels_.erase(std::unique(levels_.begin(), levels_.end()), levels_.end());
    auto level_of = [&](double z) {
        return static_cast<std::size_t>(std::lower_bound(levels_.begin(), levels_.end(), z, std::greater<>()) -
                                        levels_.begin());
    };
    receiver_level_ = level_of(receiver_z_);

    families_.push_back({true, 0});
    for (int ends = 1; ends <= max_bounces_; ++ends)
        for (bool upward : {true, false}) families_.push_back({upward, ends});

    // The ranges of ξ: cut at every n where an accessible interval can change its kinds of ends
    // (each local minimum of n and flat stretch, the surface, the bottom or floor), below the
    // largest n of a level.
    double top = 0.0, top_z = 0.0;
    for (double z : levels_) {
        const double n = profile.index(z);
        if (n > top) top = n, top_z = z;
    }
    std::vector<std::pair<double, double>> cuts{{top, top_z}};  // (ξ, anchor z)
    auto consider = [&](double z) {
        const double n = profile.index(z);
        if (n < top && n > 0.0) cuts.emplace_back(n, z);
    };
    for (double z : profile.stationary_z()) consider(z);
    consider(0.0);
    consider(profile.bottom_z() ? *profile.bottom_z() : profile.floor_z());
    std::sort(cuts.begin(), cuts.end(), [](const auto& a, const auto& b) { return a.first > b.first; });
    cuts.erase(std::unique(cuts.begin(), cuts.end(), [](const auto& a, const auto& b) { return a.first == b.first; }),
               cuts.end());
    const int per_range = std::max(samples_per_range_minimum,
                                   options.ray_parameters / static_cast<int>(cuts.size()));
    for (std::size_t i = 0; i < cuts.size(); ++i) {
        Range range;
        range.high = cuts[i].first;
        range.low = i + 1 < cuts.size() ? cuts[i + 1].first : 0.0;
        range.anchor_z = cuts[i].second;
        range.low_anchored = i + 1 < cuts.size();
        if (range.low_anchored) range.low_anchor_z = cuts[i + 1].second;
        range.first = samples_.size();
        range.count = static_cast<std::size_t>(per_range);
        const double span = range.high - range.low;
        // Uniform in v, with geometric steps toward v = 0 and v = 1 (offsets down to ~1e-12 of the first
        // step): where the anchor is a local minimum of n, X diverges like ln(1/v) there, and
        // these samples carry the families out to distances far beyond any map.
        std::vector<double> offsets{0.0};
        const double first_step = 1.0 / (per_range - 1);
        for (int j = divergent_end_samples; j >= 1; --j) {
            const double v = first_step * std::ldexp(1.0, -j);
            offsets.push_back(span * v * v);
        }
        for (int k = 1; k + 1 < per_range; ++k) {
            const double v = static_cast<double>(k) / (per_range - 1);
            offsets.push_back(span * v * v);
        }
        // The same toward v = 1, where the range meets the next cut (a local minimum of n too) from
        // above: there X diverges like ln(1/(ξ − n_min)), so the steps go on until ξ − n_min
        // (computed directly, not as 1 − v, which would stop at 1e-16 of v) reaches a few rounding
        // errors of ξ; the tails of build_row go on from there. Where the low end is n at a depth,
        // these samples are offsets from n there (negative: ξ above it), which resolves ξ − n_min
        // to full precision, as next to v = 0.
        const std::size_t toward_low = offsets.size();
        const double resolution = 32.0 * std::numeric_limits<double>::epsilon() * range.high;
        for (int j = 1; j <= 64; ++j) {
            const double w = first_step * std::ldexp(1.0, -j);  // 1 − v
            const double above_low = span * w * (2.0 - w);      // span (1 − v²)
            if (j > divergent_end_samples && above_low < resolution) break;
            offsets.push_back(range.low_anchored ? -above_low : span - above_low);
        }
        offsets.push_back(range.low_anchored ? 0.0 : span);
        range.count = offsets.size();
        for (std::size_t j = 0; j < offsets.size(); ++j) {
            SampleLevel sample;
            sample.offset = offsets[j];
            const bool from_low = range.low_anchored && j >= toward_low;
            sample.anchor_z = from_low ? range.low_anchor_z : range.anchor_z;
            sample.ray_parameter = (from_low ? range.low : range.high) - sample.offset;
            sample.range = ranges_.size();
            samples_.push_back(sample);
        }
        ranges_.push_back(range);
    }

    // Cumulative legs per ξ sample, from each interval's upper end down through its levels.
    const std::size_t samples = samples_.size(), levels = levels_.size();
    interval_of_.assign(levels * samples, -1);
    distance_.assign(levels * samples, not_a_number);
    time_.assign(levels * samples, not_a_number);
    attenuation_.assign(levels * samples, not_a_number);
    length_.assign(levels * samples, not_a_number);
    intervals_.assign(samples, {});
    const AttenuationProfile* attenuation = model.attenuation.get();
    parallel_for(samples, options.threads, options.control, [&](std::size_t k) {
        const SampleLevel& sample = samples_[k];
        const RayLevel level = RayLevel::anchored_at(profile, sample.anchor_z, sample.offset);
        std::vector<IntervalLegs>& found = intervals_[k];
        std::size_t l = 0;
        for (const AccessibleInterval& interval : profile.intervals(level)) {
            IntervalLegs legs;
            legs.interval = interval;
            legs.has_lower = interval.lower_kind != LowerEndKind::unbounded;
            const auto id = static_cast<std::int32_t>(found.size());
            LegEndpoint previous{interval.upper_z,
                                 interval.upper_kind == UpperEndKind::turning ? LegEnd::turning : LegEnd::fixed};
            double x = 0.0, t = 0.0, a = 0.0, s = 0.0;
            auto accumulate = [&](LegEndpoint next) {
                if (next.z == previous.z) return;
                const LegIntegrals leg = leg_integrals(profile, level, previous, next, true, false, attenuation);
                x += leg.distance_m;
                t += leg.optical_path_m / speed_of_light;
                a += leg.attenuation_exponent;
                s += leg.length_m;
                previous = next;
            };
            while (l < levels && levels_[l] > interval.upper_z) ++l;
            for (; l < levels && levels_[l] >= interval.lower_z; ++l) {
                const double z = levels_[l];
                if (!(profile.gap(level, z) > 0.0)) continue;  // a level at a turning end: see the row's end point
                accumulate({z, LegEnd::fixed});
                const std::size_t at = l * samples + k;
                interval_of_[at] = id;
                distance_[at] = x, time_[at] = t, attenuation_[at] = a, length_[at] = s;
            }
            if (legs.has_lower)
                accumulate({interval.lower_z,
                            interval.lower_kind == LowerEndKind::turning ? LegEnd::turning : LegEnd::fixed});
            legs.distance = x, legs.time = t, legs.attenuation = a, legs.length = s;
            found.push_back(legs);
        }
    });

    rows_.resize(source_z_.size());
    for (std::size_t j = 0; j < rows_.size(); ++j) rows_[j].source_level = level_of(source_z_[j]);
    parallel_for(rows_.size(), options.threads, options.control, [&](std::size_t j) { build_row(j); });
}

double StratifiedArrivalTable::memory_estimate_bytes(const StratifiedProfile& profile, std::size_t source_rows,
                                                    const StratifiedTableOptions& options) {
    // As the constructor: a range per stationary point of n, the top, the surface and the floor;
    // per range the uniform samples, the geometric ones toward v = 0 and at most 64 toward v = 1.
    const double ranges = static_cast<double>(profile.stationary_z().size()) + 3.0;
    const double per_range = std::max<double>(samples_per_range_minimum, options.ray_parameters / ranges);
    const double samples = ranges * (per_range + divergent_end_samples + 64.0 + 1.0);
    const double levels = static_cast<double>(source_rows) + 1.0;
    const double families = 1.0 + 2.0 * std::max(0, options.max_bounces);
    // Per level and sample: the interval index and four cumulative legs.
    const double legs = levels * samples * (sizeof(std::int32_t) + 4 * sizeof(double));
    // Per sample: its level and about one accessible interval per duct, plus the outer one.
    const double per_sample = samples * (sizeof(SampleLevel) + (ranges / 2.0 + 1.0) * sizeof(IntervalLegs));
    // Per row: the end points of every family, and a run and a refined fold or tail per family
    // and range at most, each with its bracketing points; and the exact samples of the tails next
    // to minima, 4 per family and range (a tail holds at most about 20, but only ends that are the
    // pair's cuts have tails: on the 200-point log of bench_stratified_maps at most 24 tails and
    // 340 samples in a row, for 9 families and 30 ranges).
    const double per_row = static_cast<double>(source_rows) *
                           (sizeof(Row) + families * end_samples * sizeof(Point) +
                            families * ranges *
                                (sizeof(Run) + sizeof(Exact) + 2 * sizeof(double) * 2 + 4 * sizeof(Exact::TailSample)));
    return legs + per_sample + per_row;
}

StratifiedArrivalTable::Point StratifiedArrivalTable::table_point(const Row& row, int family_index,
                                                                  std::size_t k) const {
    Point p;
    const Reach reach = table_reach(row, family_index, k);
    if (!reach.exists) return p;
    const std::size_t samples = samples_.size();
    const std::size_t s = row.source_level * samples + k, r = receiver_level_ * samples + k;
    const IntervalLegs& legs = intervals_[k][static_cast<std::size_t>(interval_of_[s])];
    const PathFamily& family = families_[static_cast<std::size_t>(family_index)];
    p.distance = reach.distance;
    if (family.ends == 0) {
        p.time = std::abs(time_[s] - time_[r]);
        p.attenuation = std::abs(attenuation_[s] - attenuation_[r]);
        p.length = std::abs(length_[s] - length_[r]);
    } else {
        auto leg = [&](std::size_t at, bool upper, const std::vector<double>& cumulative, double total) {
            return upper ? cumulative[at] : total - cumulative[at];
        };
        const bool last_upper = is_upper_end(family, family.ends - 1);
        const double traversals = family.ends - 1;
        p.time = leg(s, family.starts_upward, time_, legs.time) + leg(r, last_upper, time_, legs.time) +
                 traversals * legs.time;
        p.attenuation = leg(s, family.starts_upward, attenuation_, legs.attenuation) +
                        leg(r, last_upper, attenuation_, legs.attenuation) + traversals * legs.attenuation;
        p.length = leg(s, family.starts_upward, length_, legs.length) + leg(r, last_upper, length_, legs.length) +
                   traversals * legs.length;
    }
    p.valid = reach.valid;
    p.ray_parameter = samples_[k].ray_parameter;
    p.anchor_z = samples_[k].anchor_z;
    p.offset = samples_[k].offset;
    p.kind = kind_of(family, legs.interval);
    count_reflections(family, legs.interval, p.surface_reflections, p.bottom_reflections);
    return p;
}

StratifiedArrivalTable::Reach StratifiedArrivalTable::table_reach(const Row& row, int family_index,
                                                                  std::size_t k) const {
    Reach out;
    const std::size_t samples = samples_.size();
    const std::size_t s = row.source_level * samples + k, r = receiver_level_ * samples + k;
    const std::int32_t id = interval_of_[s];
    if (id < 0 || id != interval_of_[r]) return out;
    const IntervalLegs& legs = intervals_[k][static_cast<std::size_t>(id)];
    const PathFamily& family = families_[static_cast<std::size_t>(family_index)];
    const double z_source = source_z_[&row - rows_.data()];
    if (!family_exists(family, legs.interval, z_source, receiver_z_, bottom_paths_)) return out;
    out.exists = true;
    if (family.ends == 0) {
        out.distance = std::abs(distance_[s] - distance_[r]);
    } else {
        // First leg from the source to its first end, last leg from the last end to the receiver,
        // and a full traversal of the interval between any two ends.
        auto leg = [&](std::size_t at, bool upper) { return upper ? distance_[at] : legs.distance - distance_[at]; };
        out.distance = leg(s, family.starts_upward) + leg(r, is_upper_end(family, family.ends - 1)) +
                       (family.ends - 1) * legs.distance;
    }
    out.valid = !std::isnan(out.distance);
    return out;
}

StratifiedArrivalTable::Reach StratifiedArrivalTable::reach_at(const Row& row, int family, std::size_t range,
                                                              std::size_t position) const {
    if (position < end_samples) {
        const Point p = point_at(row, family, range, position);
        return {p.valid, p.valid, p.distance};
    }
    const std::size_t skipped = row.has_end && row.limit_range == range ? row.skipped : 0;
    return table_reach(row, family, ranges_[range].first + skipped + position - end_samples);
}

StratifiedArrivalTable::Point StratifiedArrivalTable::point_at(const Row& row, int family, std::size_t range,
                                                               std::size_t position) const {
    if (position < end_samples) {
        if (row.has_end && row.limit_range == range) return row.end_points[static_cast<std::size_t>(family)][position];
        return {};
    }
    const std::size_t skipped = row.has_end && row.limit_range == range ? row.skipped : 0;
    return table_point(row, family, ranges_[range].first + skipped + position - end_samples);
}

StratifiedArrivalTable::Point StratifiedArrivalTable::exact_point(const Row& row, int family_index, double anchor_z,
                                                                  double offset) const {
    Point p;
    const PathFamily& family = families_[static_cast<std::size_t>(family_index)];
    const double z_source = source_z_[&row - rows_.data()];
    try {
        const RayLevel level = RayLevel::anchored_at(*profile_, anchor_z, offset);
        const auto legs = family_legs(*profile_, level, family, z_source, receiver_z_, true, model_->attenuation.get());
        if (!legs || !family_exists(family, legs->interval, z_source, receiver_z_, bottom_paths_)) return p;
        p.valid = !std::isnan(legs->total.distance_m);
        p.distance = legs->total.distance_m;
        p.time = legs->total.optical_path_m / speed_of_light;
        p.attenuation = legs->total.attenuation_exponent;
        p.length = legs->total.length_m;
        p.ray_parameter = level.ray_parameter;
        p.anchor_z = anchor_z;
        p.offset = offset;
        p.kind = kind_of(family, legs->interval);
        count_reflections(family, legs->interval, p.surface_reflections, p.bottom_reflections);
    } catch (const NumericalError&) {
        p.valid = false;  // a ray the quadrature cannot resolve: no path from this ξ
    }
    return p;
}

double StratifiedArrivalTable::signed_offset(double anchor_z, const Point& p) const {
    if (anchor_z == p.anchor_z) return p.offset;
    return profile_->index_difference(anchor_z, p.anchor_z) + p.offset;
}

double StratifiedArrivalTable::offset_from(double anchor_z, const Point& p) const {
    return std::max(0.0, signed_offset(anchor_z, p));
}

double StratifiedArrivalTable::closest_offset(const Row& row, double anchor_z, double side) const {
    // The pair finder seeks roots next to an end of one of its ranges of ξ that is n at a depth
    // down to |ξ − n| = 1e-24 of that range (path_families.cpp, cut_limit_offset); its ranges for
    // this pair are cut at row.pair_cuts. The map stops where it does, so that the two agree on
    // which positions such a ray reaches.
    const double n = profile_->index(anchor_z);
    const auto& cuts = row.pair_cuts;
    std::size_t i = 0;
    for (std::size_t j = 1; j < cuts.size(); ++j)
        if (std::abs(cuts[j] - n) < std::abs(cuts[i] - n)) i = j;
    double span = 0.0;
    if (!cuts.empty() && std::abs(cuts[i] - n) <= 4.0 * std::numeric_limits<double>::epsilon() * n) {
        if (side > 0.0) span = cuts[i] - (i + 1 < cuts.size() ? cuts[i + 1] : 0.0);
        else if (i > 0) span = cuts[i - 1] - cuts[i];
    }
    // Not an end of the pair's ranges (X does not diverge there for this pair, as a rule): the
    // map's own range of ξ next to it.
    if (!(span > 0.0))
        for (const Range& range : ranges_) {
            const double range_span = range.high - range.low;
            if (side > 0.0 && range.anchor_z == anchor_z) span = range_span;
            if (side < 0.0 && range.low_anchored && range.low_anchor_z == anchor_z) span = range_span;
        }
    if (!(span > 0.0)) span = n;
    return stratified_cut_limit * span;
}

StratifiedArrivalTable::Point StratifiedArrivalTable::solve_between(const Row& row, int family, double anchor_z,
                                                                    double side, double u_low, double u_high,
                                                                    double distance_m, bool increasing_in_u,
                                                                    bool logarithmic) const {
    // Regula falsi (Illinois) on X − R in u = √|n(anchor) − ξ|, or in ln u when the bracket
    // reaches the anchor itself (a divergent end, where X grows like ln(1/u)); points where X is
    // not finite count as beyond R (they lie toward the divergent end).
    auto to_u = [&](double t) { return logarithmic ? std::exp(t) : t; };
    const double orientation = increasing_in_u ? 1.0 : -1.0;
    auto evaluate = [&](double t, Point& p) {
        const double u = to_u(t);
        p = exact_point(row, family, anchor_z, side * u * u);
        if (!p.valid || !std::isfinite(p.distance)) return infinity;
        return orientation * (p.distance - distance_m);
    };
    double lo = logarithmic ? std::log(u_low) : u_low, hi = logarithmic ? std::log(u_high) : u_high;
    Point p_lo, p_hi, p;
    double f_lo = evaluate(lo, p_lo), f_hi = evaluate(hi, p_hi);
    if (!increasing_in_u) {  // orient the bracket so that f rises from lo to hi
        std::swap(lo, hi), std::swap(f_lo, f_hi), std::swap(p_lo, p_hi);
    }
    if (f_lo >= 0.0) return f_lo == 0.0 ? p_lo : Point{};
    if (!(f_hi >= 0.0)) return {};
    const double tolerance = 1e-7 * (1.0 + distance_m);
    int retained = 0;  // +1: lo kept twice in a row, −1: hi kept twice
    for (int i = 0; i < 100; ++i) {
        double t = std::isfinite(f_hi) ? (lo * f_hi - hi * f_lo) / (f_hi - f_lo) : 0.5 * (lo + hi);
        if (!(t > std::min(lo, hi) && t < std::max(lo, hi))) t = 0.5 * (lo + hi);
        const double f = evaluate(t, p);
        if (std::abs(f) <= tolerance) return p;
        if (f < 0.0) {
            lo = t, f_lo = f, p_lo = p;
            if (retained == -1 && std::isfinite(f_hi)) f_hi *= 0.5;
            retained = -1;
        } else {
            hi = t, f_hi = f, p_hi = p;
            if (retained == 1) f_lo *= 0.5;
            retained = 1;
        }
        if (std::abs(hi - lo) <= bracket_resolution(logarithmic, lo, hi)) break;
    }
    return std::abs(f_lo) <= std::abs(f_hi) ? p_lo : p_hi;
}

void StratifiedArrivalTable::sample_tail(const Row& row, Exact& tail, const Point& reference) const {
    // As solve_between: in ln u down to u_floor when the divergent end is the anchor itself (the
    // anchored levels resolve n − ξ there far below a rounding error of ξ), else in u toward u_b,
    // with the distance to the divergent end shrinking by 8 per sample (X grows like the
    // logarithm of that distance next to a minimum of n).
    const double u_a = tail.u_a, u_b = tail.u_b;
    const double u_closest = std::sqrt(64.0 * std::numeric_limits<double>::epsilon() * std::max(1.0, row.limit));
    tail.logarithmic = std::min(u_a, u_b) <= u_closest;
    if (tail.logarithmic) tail.u_floor = std::min(std::sqrt(closest_offset(row, tail.anchor_z, tail.side)), u_a);
    const double u_last = tail.logarithmic ? tail.u_floor : u_b;
    const double resolution = 4.0 * std::numeric_limits<double>::epsilon() * std::max(u_a, u_b);
    auto keep = [&](double u, const Point& p) {
        if (tail.tail_samples.empty()) tail.first = p;
        tail.tail_samples.push_back({u, p.distance, p.time, p.attenuation, p.length});
    };
    double previous = -infinity;
    for (int k = 0; k < 64; ++k) {
        const double step = std::ldexp(1.0, -3 * k);
        const double u = tail.logarithmic ? std::max(u_last, u_a * step) : u_b - (u_b - u_a) * step;
        if (!tail.logarithmic && std::abs(u_b - u) <= resolution) {
            // Every double left between the last sample and u_b (a handful): the most X reaches
            // there, all that solve_between could find beyond the samples.
            double reach = previous;
            const double from = tail.tail_samples.empty() ? u_a : tail.tail_samples.back().u;
            int left = 0;
            for (double v = std::nextafter(from, u_b); v != u_b && left < 16; v = std::nextafter(v, u_b), ++left) {
                const Point p = exact_point(row, tail.family, tail.anchor_z, tail.side * v * v);
                if (p.valid && std::isfinite(p.distance)) reach = std::max(reach, p.distance);
            }
            if (left < 16 && !tail.tail_samples.empty()) tail.beyond_samples_max_m = reach;
            break;
        }
        const Point p = exact_point(row, tail.family, tail.anchor_z, tail.side * u * u);
        // Next to a double root X grows by the same amount per factor of u, so a logarithmic
        // tail whose second sample is no farther than its first does not diverge at all (a family
        // whose interval changes its kind of end at the cut, say, away from the pair): no tail.
        if (tail.logarithmic && tail.tail_samples.size() == 1 && p.valid && std::isfinite(p.distance) &&
            p.distance <= previous) {
            tail.tail_samples.clear();
            break;
        }
        if (!p.valid || !std::isfinite(p.distance) || !(p.distance > previous)) {
            // Next to a local minimum of n the turning depth is itself a double: where n − ξ is
            // below about 1e-26 it is resolved to a rounding error of z, and X jumps to +∞ there.
            // The pair finder finds no root beyond that edge either (a jump is no root): close in
            // on it in ln u (12 halvings leave X a few millimetres short of it) and end the tail.
            if (tail.logarithmic && !tail.tail_samples.empty()) {
                double good = tail.tail_samples.back().u, bad = u;
                for (int i = 0; i < 12; ++i) {
                    const double middle = std::sqrt(good * bad);
                    const Point m = exact_point(row, tail.family, tail.anchor_z, tail.side * middle * middle);
                    if (m.valid && std::isfinite(m.distance) && m.distance > previous) {
                        keep(middle, m);
                        previous = m.distance;
                        good = middle;
                    } else {
                        bad = middle;
                    }
                }
                tail.sampled_to_end = true;
            }
            // Elsewhere, beyond the last sample cells fall back to the whole bracket.
            break;
        }
        keep(u, p);
        previous = p.distance;
        if (tail.logarithmic && u == u_last) {
            tail.sampled_to_end = true;
            break;
        }
    }
    if (!tail.logarithmic) return;
    // Next to a double root X = A + B·s, s = −ln|n − ξ|, so a cell between two samples is
    // interpolated (add_tail_arrival) rather than solved, once the tail is seen to be that line:
    // the slope B of its first segment and over the whole tail within 5 % of the slope from the
    // point before the tail (`reference`, on the same side of the end; else of the first segment).
    // Next to a flat stretch of n (X like 1/u) the slopes differ by factors of 8 and cells are
    // solved exactly.
    //
    // Where |n − ξ| is below about 1e-21 the computed X carries noise, centimetres to a metre: the
    // turning depth, nanometres from the minimum, is resolved only to a rounding error of z. The
    // noise is not in the ray (X of the exact ray is the line), and T carries the same shift as X
    // (dT = ξ/c·dX at a turning point, where the ray is horizontal), so the samples stay on the
    // line T(X) while X − R, solved for exactly there, would be decided by that noise: those
    // segments are interpolated too, with the slope of the first segment.
    auto& samples = tail.tail_samples;
    if (samples.size() < 2) return;
    auto s_of = [](double u) { return -2.0 * std::log(u); };
    auto slope_between = [&](double u_0, double x_0, double u_1, double x_1) {
        const double ds = s_of(u_1) - s_of(u_0);
        return ds > 0.0 ? (x_1 - x_0) / ds : not_a_number;
    };
    const double first = slope_between(samples[0].u, samples[0].distance_m, samples[1].u, samples[1].distance_m);
    const double whole =
        slope_between(samples.front().u, samples.front().distance_m, samples.back().u, samples.back().distance_m);
    double expected = not_a_number;
    if (reference.valid && std::isfinite(reference.distance)) {
        const double offset = tail.side * signed_offset(tail.anchor_z, reference);
        if (offset > 0.0)
            expected = slope_between(std::sqrt(offset), reference.distance, samples[0].u, samples[0].distance_m);
    }
    if (!(expected > 0.0)) expected = samples.size() >= 3 ? first : not_a_number;
    auto agrees = [&](double slope) { return std::abs(slope - expected) <= 0.05 * expected; };
    if (!(expected > 0.0) || !agrees(first) || !agrees(whole)) return;
    for (std::size_t k = 0; k + 1 < samples.size(); ++k) samples[k].slope = first;
}

StratifiedArrivalTable::Point StratifiedArrivalTable::solve_in_tail(const Row& row, const Exact& tail, std::size_t k,
                                                                    double distance_m) const {
    // Regula falsi (Illinois) between samples k and k + 1, X − R < 0 at k and > 0 at k + 1, in
    // ln u or u as sample_tail placed them.
    const Exact::TailSample& a = tail.tail_samples[k];
    const Exact::TailSample& b = tail.tail_samples[k + 1];
    auto to_t = [&](double u) { return tail.logarithmic ? std::log(u) : u; };
    auto to_u = [&](double t) { return tail.logarithmic ? std::exp(t) : t; };
    double lo = to_t(a.u), hi = to_t(b.u), f_lo = a.distance_m - distance_m, f_hi = b.distance_m - distance_m;
    Point p, p_lo, p_hi;
    // Next to a local minimum of n a tenth of the residual add_exact_arrival accepts (X may carry
    // noise far above 1e-7 there, see sample_tail).
    const double tolerance = (tail.logarithmic ? 1e-6 : 1e-7) * (1.0 + distance_m);
    int retained = 0;  // +1: lo kept twice in a row, −1: hi kept twice
    for (int i = 0; i < 100; ++i) {
        double t = (lo * f_hi - hi * f_lo) / (f_hi - f_lo);
        if (!(t > std::min(lo, hi) && t < std::max(lo, hi))) t = 0.5 * (lo + hi);
        const double u = to_u(t);
        p = exact_point(row, tail.family, tail.anchor_z, tail.side * u * u);
        const double f = p.valid && std::isfinite(p.distance) ? p.distance - distance_m : infinity;
        if (std::abs(f) <= tolerance) return p;
        if (f < 0.0) {
            lo = t, f_lo = f, p_lo = p;
            if (retained == -1) f_hi *= 0.5;
            retained = -1;
        } else {
            if (!std::isfinite(f)) return {};  // not a monotone stretch after all
            hi = t, f_hi = f, p_hi = p;
            if (retained == 1) f_lo *= 0.5;
            retained = 1;
        }
        if (std::abs(hi - lo) <= bracket_resolution(tail.logarithmic, lo, hi)) break;
    }
    if (!p_lo.valid) p_lo = exact_point(row, tail.family, tail.anchor_z, tail.side * a.u * a.u);
    if (!p_hi.valid) p_hi = exact_point(row, tail.family, tail.anchor_z, tail.side * b.u * b.u);
    return std::abs(f_lo) <= std::abs(f_hi) ? p_lo : p_hi;
}

void StratifiedArrivalTable::build_row(std::size_t index) {
    Row& row = rows_[index];
    const double z_source = source_z_[index];
    const double z_low = std::min(z_source, receiver_z_), z_high = std::max(z_source, receiver_z_);
    const auto [limit, limit_z] = profile_->minimum_index(z_low, z_high);
    row.limit = limit;
    row.limit_z = limit_z;
    row.limit_inside = limit_z > z_low && limit_z < z_high;
    // The pair finder's cuts for this pair (ray_parameter_cuts), once each.
    for (const RayParameterCut& cut : ray_parameter_cuts(*profile_, z_low, z_high))
        if (row.pair_cuts.empty() || cut.ray_parameter != row.pair_cuts.back()) row.pair_cuts.push_back(cut.ray_parameter);
    for (std::size_t r = 0; r < ranges_.size(); ++r)
        if (limit <= ranges_[r].high && limit > ranges_[r].low) {
            row.limit_range = r;
            row.has_end = true;
            while (row.skipped < ranges_[r].count && samples_[ranges_[r].first + row.skipped].ray_parameter >= limit)
                ++row.skipped;
        }
    const int families = static_cast<int>(families_.size());
    row.end_points.assign(families_.size(), std::vector<Point>(end_samples));
    if (row.has_end) {
        // From the limit to the first table sample below it, evenly in u = √(limit − ξ).
        const std::size_t first = ranges_[row.limit_range].first + row.skipped;
        const bool has_sample = row.skipped < ranges_[row.limit_range].count;
        double u_first = 0.0;
        if (has_sample) {
            Point sample;
            sample.anchor_z = samples_[first].anchor_z;
            sample.offset = samples_[first].offset;
            u_first = std::sqrt(offset_from(limit_z, sample));
        }
        // At ξ = limit exactly the ray is horizontal at an end (or grazes a minimum of n between
        // them) and the accessible interval only touches that end: start a little below, at a few
        // rounding errors of ξ or, where the first table sample is closer than that (the limit is
        // a local minimum of n between the ends, a cut of the ranges whose samples come within
        // 1e-15 of it), a quarter of the geometric step below those (the anchored levels resolve
        // n − ξ there). A tail of build_row goes on toward a local minimum from there.
        const double u_geometric = u_first / end_uniform_samples * std::pow(4.0, -static_cast<int>(end_geometric_samples));
        const double u_closest = has_sample ? std::min(std::sqrt(64.0 * std::numeric_limits<double>::epsilon() * limit),
                                                       0.25 * u_geometric)
                                            : std::sqrt(64.0 * std::numeric_limits<double>::epsilon() * limit);
        // Uniform in u, and geometric below the first step: X is smooth in u next to a turning end
        // and grows like ln(1/u) next to a minimum of n between the ends.
        row.end_u.push_back(u_closest);
        for (int k = static_cast<int>(end_geometric_samples); k >= 1; --k)
            row.end_u.push_back(std::max(u_closest, u_first / end_uniform_samples * std::pow(4.0, -k)));
        for (std::size_t i = 1; i < end_uniform_samples; ++i)
            row.end_u.push_back(std::max(u_closest, u_first * static_cast<double>(i) / end_uniform_samples));
        for (int f = 0; f < families; ++f) {
            // Only families that exist next to the limit.
            if (!has_sample || !table_point(row, f, first).valid) continue;
            for (std::size_t i = 0; i < end_samples; ++i)
                row.end_points[f][i] = exact_point(row, f, limit_z, row.end_u[i] * row.end_u[i]);
        }
    }

    std::vector<std::pair<double, double>> visible;
    auto u_of = [](double offset) { return std::sqrt(std::max(0.0, offset)); };
    for (int f = 0; f < families; ++f) {
        if (f == 0 && z_source == receiver_z_) continue;  // at equal depths no path is monotone in z
        for (std::size_t r = 0; r < ranges_.size(); ++r) {
            const std::size_t positions =
                ranges_[r].count + end_samples - (row.has_end && row.limit_range == r ? row.skipped : 0);
            // Validity and distance of every position; whole points only where a fold or a tail needs them.
            std::vector<Reach> points(positions);
            for (std::size_t p = 0; p < positions; ++p) points[p] = reach_at(row, f, r, p);
            auto finite = [&](std::size_t p) { return points[p].valid && std::isfinite(points[p].distance); };
            // Monotone runs of finite points.
            std::size_t p = 0;
            while (p < positions) {
                if (!finite(p) || p + 1 >= positions || !finite(p + 1)) {
                    ++p;
                    continue;
                }
                Run run{f, r, p, p + 1, points[p + 1].distance >= points[p].distance};
                while (run.last + 1 < positions && finite(run.last + 1) &&
                       (points[run.last + 1].distance >= points[run.last].distance) == run.increasing)
                    ++run.last;
                run.low_m = std::min(points[run.first].distance, points[run.last].distance);
                run.high_m = std::max(points[run.first].distance, points[run.last].distance);
                row.runs.push_back(run);
                visible.emplace_back(run.low_m, run.high_m);
                // A fold at the run's last point when the next run turns back.
                const std::size_t e = run.last;
                if (e + 1 < positions && finite(e + 1)) {
                    const Point before = point_at(row, f, r, e - 1);
                    const Point after = point_at(row, f, r, e + 1);
                    Exact fold;
                    fold.family = f;
                    fold.range = r;
                    fold.a = e - 1;
                    fold.b = e + 1;
                    fold.maximum = run.increasing;
                    fold.sampled_m = points[e].distance;
                    // The end points' anchor for a fold among them, else the range's top (the
                    // samples next to its low end are offsets from n there, of the other sign).
                    fold.anchor_z = e - 1 < end_samples ? before.anchor_z : ranges_[r].anchor_z;
                    const double u_a = u_of(offset_from(fold.anchor_z, before)),
                                 u_b = u_of(offset_from(fold.anchor_z, after));
                    // The parabola through the three samples estimates how far the true extremum
                    // lies beyond the sampled one; a fold that cannot reach a micrometre further is
                    // left to the interpolation (refining it costs dozens of exact evaluations).
                    const double curvature = 0.5 * (after.distance + before.distance - 2.0 * points[e].distance);
                    const double slope = 0.5 * (after.distance - before.distance);
                    const double excess = curvature != 0.0 ? std::abs(slope * slope / (4.0 * curvature)) : 0.0;
                    if (!(excess > fold_refinement_threshold_m)) {
                        p = run.last;
                        continue;
                    }
                    const double sign = fold.maximum ? -1.0 : 1.0;
                    auto objective = [&](double u) {
                        const Point q = exact_point(row, f, fold.anchor_z, u * u);
                        return q.valid && std::isfinite(q.distance) ? sign * q.distance : sign * fold.sampled_m;
                    };
                    const auto [u_best, value] =
                        brent_minimum("the fold of a ray family", objective, std::min(u_a, u_b), std::max(u_a, u_b), 30);
                    fold.u_extremum = u_best;
                    fold.exact_m = sign * value;
                    if (fold.maximum ? fold.exact_m > fold.sampled_m : fold.exact_m < fold.sampled_m) {
                        visible.emplace_back(std::min(fold.sampled_m, fold.exact_m), std::max(fold.sampled_m, fold.exact_m));
                        row.exact.push_back(fold);
                    }
                }
                p = run.last;
            }
            // Divergent ends: a finite point next to one where X is infinite, or next to the row's
            // end point when that is not a path (a local minimum of n between the ends). Each tail
            // is taken in u = √|n(anchor) − ξ| from the divergent point's anchor (n there is the
            // end's ξ where the divergence is a double root), on the side of the finite point.
            auto add_tail = [&](std::size_t q, std::size_t b, double anchor_z, double u_b) {
                // The position on the other side of q, farther from the divergent end.
                const std::size_t away = b > q ? q - 1 : q + 1;
                const Point reference = away < positions && away != b ? point_at(row, f, r, away) : Point{};
                Exact tail;
                tail.family = f;
                tail.range = r;
                tail.a = q;
                tail.b = b;
                tail.tail = true;
                tail.sampled_m = points[q].distance;
                tail.exact_m = infinity;
                tail.anchor_z = anchor_z;
                const double offset = signed_offset(anchor_z, point_at(row, f, r, q));
                tail.side = offset < 0.0 ? -1.0 : 1.0;
                tail.u_a = std::sqrt(std::abs(offset));
                tail.u_b = u_b;
                sample_tail(row, tail, reference);
                if (tail.logarithmic && tail.tail_samples.empty()) return;  // no divergence after all
                row.exact.push_back(tail);
                visible.emplace_back(tail.sampled_m, infinity);
            };
            for (std::size_t q = 0; q < positions; ++q) {
                if (!finite(q)) continue;
                for (const std::size_t b : {q - 1, q + 1}) {
                    if (b >= positions) continue;
                    // At a cut itself (ξ = n at a stationary point of n) the legs may have no
                    // distance at all (a turning point on a flat stretch): an end too where X grows
                    // toward it, as the pair finder takes it.
                    const bool at_cut = b >= end_samples && points[b].exists && !finite(b) &&
                                        point_at(row, f, r, b).offset == 0.0;
                    const std::size_t before_q = b > q ? q - 1 : q + 1;
                    const bool grows_to_cut = at_cut && before_q < positions && finite(before_q) &&
                                              points[q].distance > points[before_q].distance;
                    const bool diverges = (points[b].valid && std::isinf(points[b].distance)) || grows_to_cut;
                    const bool limit_end = b < end_samples && b < q && row.has_end && row.limit_range == r && !points[b].valid;
                    if (!diverges && !limit_end) continue;
                    if (limit_end) {
                        add_tail(q, b, row.limit_z, row.end_u[b]);
                    } else {
                        const Point divergent = point_at(row, f, r, b);
                        const Point finite_point = point_at(row, f, r, q);
                        const double side = signed_offset(divergent.anchor_z, finite_point) < 0.0 ? -1.0 : 1.0;
                        add_tail(q, b, divergent.anchor_z, std::sqrt(std::max(0.0, side * signed_offset(divergent.anchor_z, divergent))));
                    }
                }
            }
            // The row's end point itself, when the limit is a local minimum of n between the ends:
            // it lies a few rounding errors of ξ from the limit, and X goes on growing beyond it,
            // toward the limit, far below a rounding error of ξ.
            if (row.has_end && row.limit_range == r && row.limit_inside && positions > 1 && finite(0) && finite(1) &&
                points[0].distance > points[1].distance)
                add_tail(0, 0, row.limit_z, 0.0);
        }
    }
    std::sort(visible.begin(), visible.end());
    for (const auto& span : visible) {
        if (!row.visible.empty() && span.first <= row.visible.back().second)
            row.visible.back().second = std::max(row.visible.back().second, span.second);
        else
            row.visible.push_back(span);
    }
    row.max_reach_m = row.visible.empty() ? not_a_number : row.visible.back().second;
}

void StratifiedArrivalTable::add_arrival(const Row& row, const Point& a, const Point& b, double distance_m,
                                         std::vector<MapArrival>& out) const {
    const InterpolatedArrival at = interpolate_arrival({a.distance, a.time, a.ray_parameter, a.attenuation, a.length},
                                                       {b.distance, b.time, b.ray_parameter, b.attenuation, b.length},
                                                       distance_m);
    add_interpolated(row, a, at, distance_m, out);
}

void StratifiedArrivalTable::add_tail_arrival(const Row& row, const Exact& tail, std::size_t k, double distance_m,
                                              std::vector<MapArrival>& out) const {
    // X = A + B·s with s = −ln ρ, ρ = |n(anchor) − ξ| = u², B the sample's slope (sample_tail). The time is the cubic Hermite in distance with dT/dX = ξ/c at both ends, as on
    // the runs: ξ changes by less than ρ at the first sample (below 1e-13) along the tail, so T is
    // linear in X to far better than a femtosecond. ξ and dX/dξ = side·B/ρ (for the spreading)
    // come from the line in s.
    const Exact::TailSample& a = tail.tail_samples[k];
    const Exact::TailSample& b = tail.tail_samples[k + 1];
    const double n_anchor = profile_->index(tail.anchor_z);
    const double rho_a = a.u * a.u, rho_b = b.u * b.u;
    const double s_a = -std::log(rho_a);
    const double slope = a.slope;
    const double rho = std::exp(-(s_a + (distance_m - a.distance_m) / slope));
    const double xi_a = n_anchor - tail.side * rho_a, xi_b = n_anchor - tail.side * rho_b;
    InterpolatedArrival at = interpolate_arrival({a.distance_m, a.time_s, xi_a, a.attenuation, a.length_m},
                                                 {b.distance_m, b.time_s, xi_b, b.attenuation, b.length_m}, distance_m);
    at.ray_parameter = n_anchor - tail.side * rho;
    at.distance_derivative = tail.side * slope / rho;
    add_interpolated(row, tail.first, at, distance_m, out);
}

void StratifiedArrivalTable::add_interpolated(const Row& row, const Point& a, const InterpolatedArrival& at,
                                              double distance_m, std::vector<MapArrival>& out) const {
    const double xi = at.ray_parameter, attenuation = at.attenuation, length = at.length_m;

    MapArrival arrival;
    arrival.time_s = at.time_s;
    arrival.ray_parameter = xi;
    arrival.kind = arrival_kind(a.kind);
    // Refracted and reflected meet at ξ = n(0) (a ray grazing the surface): name an arrival
    // interpolated next to that edge after the side its ξ falls on, as find_stratified_paths does.
    if (arrival.kind == ArrivalKind::refracted && xi < n_surface_) arrival.kind = ArrivalKind::reflected;
    else if (arrival.kind == ArrivalKind::reflected && xi >= n_surface_) arrival.kind = ArrivalKind::refracted;
    int surface_reflections = a.surface_reflections;
    if (a.kind == StratifiedPathKind::refracted && arrival.kind == ArrivalKind::reflected) surface_reflections = 1;
    if (a.kind == StratifiedPathKind::reflected && arrival.kind == ArrivalKind::refracted) surface_reflections = 0;
    std::complex<double> interface_s{1.0, 0.0}, interface_p{1.0, 0.0};
    if (surface_reflections > 0) {
        const auto f = fresnel(n_surface_, model_->n_air, cos_from_ray_parameter(n_surface_, std::min(xi, n_surface_)));
        interface_s = std::pow(f.r_s, surface_reflections);
        interface_p = std::pow(f.r_p, surface_reflections);
    }
    if (a.bottom_reflections > 0 && model_->bottom) {
        const double factor = std::pow(std::sqrt(model_->bottom->power_reflectivity), a.bottom_reflections);
        interface_s *= factor;
        interface_p *= factor;
    }
    RayTube tube;
    tube.n_source = profile_->index(source_z_[&row - rows_.data()]);
    tube.n_receiver = profile_->index(receiver_z_);
    tube.horizontal_distance_m = distance_m;
    tube.ray_parameter = xi;
    tube.distance_derivative = std::abs(at.distance_derivative);
    tube.derivative_cosines = tube.distance_derivative * cos_from_ray_parameter(tube.n_source, std::min(xi, tube.n_source)) *
                              cos_from_ray_parameter(tube.n_receiver, std::min(xi, tube.n_receiver));
    tube.length_m = length;
    const PathAmplitude amplitude = path_amplitude(interface_s, interface_p, 1.0, attenuation, tube);
    arrival.caustic = amplitude.caustic;
    arrival.amplitude_per_m = mean_field_magnitude(amplitude);
    out.push_back(arrival);
}

void StratifiedArrivalTable::add_exact_arrival(const Row& row, int family, const Point& root, double anchor_z,
                                               double side, double distance_m, std::vector<MapArrival>& out) const {
    if (!root.valid || !std::isfinite(root.distance)) return;
    // A jump of X across R (ξ not resolved by a double there) is not a root; the bound is the pair
    // finder's, which leaves room for the noise of X next to a local minimum of n (above).
    if (std::abs(root.distance - distance_m) > stratified_root_residual * (1.0 + distance_m)) return;
    Point corrected = root;
    // First-order correction for the root's residual: dT/dR = ξ/c along a family.
    corrected.time += root.ray_parameter * (distance_m - root.distance) / speed_of_light;
    corrected.distance = distance_m;
    // A neighbour a little farther from the anchor's n, on the root's side, for dX/dξ.
    const double offset = side * std::max(0.0, side * signed_offset(anchor_z, root));
    Point neighbour = exact_point(row, family, anchor_z, offset * (1.0 + 1e-7) + side * 1e-15);
    if (!neighbour.valid || !std::isfinite(neighbour.distance) || neighbour.distance == root.distance) neighbour = corrected;
    std::vector<MapArrival> one;
    add_arrival(row, corrected, neighbour, distance_m, one);
    // The time and ray parameter are those of the root itself.
    one.front().time_s = corrected.time;
    one.front().ray_parameter = root.ray_parameter;
    out.push_back(one.front());
}

void StratifiedArrivalTable::arrivals(std::size_t index, double distance_m, std::vector<MapArrival>& out) const {
    out.clear();
    const Row& row = rows_[index];
    if (!(distance_m <= row.max_reach_m)) return;
    for (const Run& run : row.runs) {
        if (distance_m < run.low_m || distance_m >= run.high_m) continue;
        auto at = [&](std::size_t p) { return point_at(row, run.family, run.range, p); };
        std::size_t lo = run.first, hi = run.last;
        while (hi - lo > 1) {
            const std::size_t mid = (lo + hi) / 2;
            if ((reach_at(row, run.family, run.range, mid).distance <= distance_m) == run.increasing) lo = mid;
            else hi = mid;
        }
        const Point a = at(lo), b = at(hi);
        // The end point (ξ = the limit) sits on the edge of the family: name the path after the other.
        if (lo == 0 && row.has_end && row.limit_range == run.range) {
            Point named = a;
            named.kind = b.kind;
            named.surface_reflections = b.surface_reflections;
            named.bottom_reflections = b.bottom_reflections;
            add_arrival(row, named, b, distance_m, out);
        } else {
            add_arrival(row, a, b, distance_m, out);
        }
    }
    for (const Exact& exact : row.exact) {
        if (exact.tail) {
            if (distance_m <= exact.sampled_m) continue;
            const auto& samples = exact.tail_samples;
            // Between two of the tail's samples: a narrow bracket.
            if (samples.size() >= 2 && distance_m > samples.front().distance_m && distance_m < samples.back().distance_m) {
                const auto above = std::upper_bound(samples.begin(), samples.end(), distance_m,
                                                    [](double d, const Exact::TailSample& s) { return d < s.distance_m; });
                const auto k = static_cast<std::size_t>(above - samples.begin()) - 1;
                if (samples[k].slope > 0.0) {
                    add_tail_arrival(row, exact, k, distance_m, out);
                    continue;
                }
                add_exact_arrival(row, exact.family, solve_in_tail(row, exact, k, distance_m), exact.anchor_z, exact.side,
                                  distance_m, out);
                continue;
            }
            // Beyond a logarithmic tail's last sample (at u_floor or the edge) there is no root to
            // find; within the pair finder's residual of it the last sample itself is one, as there.
            if (exact.sampled_to_end && distance_m > samples.back().distance_m) {
                const Exact::TailSample& last = samples.back();
                if (distance_m - last.distance_m <= stratified_root_residual * (1.0 + distance_m))
                    add_exact_arrival(row, exact.family, exact_point(row, exact.family, exact.anchor_z, exact.side * last.u * last.u),
                                      exact.anchor_z, exact.side, distance_m, out);
                continue;
            }
            // Nor beyond the other tails' last samples when every u left there is known to stay
            // short of R by more than what add_exact_arrival accepts.
            if (distance_m - stratified_root_residual * (1.0 + distance_m) > exact.beyond_samples_max_m) continue;
            // Beyond the last sample the bracket starts there; a logarithmic one ends at u_floor.
            const double u_b = exact.logarithmic ? exact.u_floor : exact.u_b;
            const bool increasing = u_b > exact.u_a;
            const double u_start =
                samples.size() >= 2 && distance_m >= samples.back().distance_m ? samples.back().u : exact.u_a;
            const Point root = solve_between(row, exact.family, exact.anchor_z, exact.side, std::min(u_start, u_b),
                                             std::max(u_start, u_b), distance_m, increasing, exact.logarithmic);
            add_exact_arrival(row, exact.family, root, exact.anchor_z, exact.side, distance_m, out);
            continue;
        }
        const Point a = point_at(row, exact.family, exact.range, exact.a);
        const Point b = point_at(row, exact.family, exact.range, exact.b);
        const double u_a = std::sqrt(offset_from(exact.anchor_z, a));
        const bool inside = exact.maximum ? distance_m > exact.sampled_m && distance_m <= exact.exact_m
                                          : distance_m < exact.sampled_m && distance_m >= exact.exact_m;
        if (!inside) continue;
        const double u_b = std::sqrt(offset_from(exact.anchor_z, b));
        const double u_e = exact.u_extremum;
        // On each side of the extremum X is monotone in u: toward the extremum it rises (a
        // maximum) or falls (a minimum).
        for (const double u_end : {u_a, u_b}) {
            const bool toward_extremum_up = u_end < u_e;  // u grows from the end to the extremum
            const bool increasing = toward_extremum_up == exact.maximum;
            const Point root = solve_between(row, exact.family, exact.anchor_z, 1.0, std::min(u_end, u_e),
                                             std::max(u_end, u_e), distance_m, increasing);
            add_exact_arrival(row, exact.family, root, exact.anchor_z, 1.0, distance_m, out);
        }
    }
    std::sort(out.begin(), out.end(), [](const MapArrival& a, const MapArrival& b) { return a.time_s < b.time_s; });
}

}  // namespace firnray
