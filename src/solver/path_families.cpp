#include "solver/path_families.hpp"

#include <algorithm>
#include <array>
#include <cmath>
#include <limits>
#include <utility>
#include <vector>

#include <fmt/format.h>

#include "core/constants.hpp"
#include "core/errors.hpp"
#include "core/text.hpp"
#include "model/firn_model.hpp"

namespace firnray {

namespace {

constexpr double infinity = std::numeric_limits<double>::infinity();
constexpr double not_a_number = std::numeric_limits<double>::quiet_NaN();

bool is_upper_end(const PathFamily& family, int j) { return family.starts_upward == (j % 2 == 0); }

LegEndpoint upper_endpoint(const AccessibleInterval& interval) {
    return {interval.upper_z, interval.upper_kind == UpperEndKind::turning ? LegEnd::turning : LegEnd::fixed};
}
LegEndpoint lower_endpoint(const AccessibleInterval& interval) {
    return {interval.lower_z, interval.lower_kind == LowerEndKind::turning ? LegEnd::turning : LegEnd::fixed};
}

void add(LegIntegrals& total, const LegIntegrals& leg, double times = 1.0) {
    total.distance_m += times * leg.distance_m;
    total.optical_path_m += times * leg.optical_path_m;
    total.length_m += times * leg.length_m;
    total.distance_derivative += times * leg.distance_derivative;
    total.attenuation_exponent += times * leg.attenuation_exponent;
}

StratifiedPathKind kind_of(const PathFamily& family, const AccessibleInterval& interval) {
    if (family.ends == 0) return StratifiedPathKind::direct;
    const bool meets_lower = family.ends >= 2 || !family.starts_upward;
    if (meets_lower && interval.lower_kind == LowerEndKind::bottom) return StratifiedPathKind::bottom;
    if (family.ends >= 2) return StratifiedPathKind::ducted;
    if (!family.starts_upward) return StratifiedPathKind::refracted_below;
    return interval.upper_kind == UpperEndKind::turning ? StratifiedPathKind::refracted : StratifiedPathKind::reflected;
}

// The message is formatted only where the check fails (a pair costs a few microseconds).
template <class Message>
void require(bool ok, const char* key, const Message& message) {
    if (!ok) throw DataInputError(message(), {"", 0, key});
}

// One range of ξ in which the interval's ends keep their kinds, taken as ξ(v), v ∈ [0, 1] (see
// RangeLegs::level).
struct RayParameterRange {
    double high = 0.0, low = 0.0;
    double anchor_z = 0.0;  // n(anchor_z) = high
    // n(low_anchor_z) = low, where `low` is n at a depth (not ξ = 0).
    bool low_anchored = false;
    double low_anchor_z = 0.0;
    // The first range: `high` is the smallest n between the pair's depths, and where X is finite
    // at v = 0 itself roots are sought down to it, as closely as ξ(v) resolves it: X may tend to 0
    // there like n − ξ to a high power (a refracted path between equal depths in deep ice, where
    // n′ ~ 1e-17 per metre: X = R at n − ξ ~ 1e-31). Every other range, and the first where X is
    // not finite at v = 0 (a smooth local minimum between the ends, where the direct path grazes
    // it and X diverges), is sampled from just inside v = 0 (FamilySearch::end_v0_): at a local
    // minimum beyond the ends ξ = high exactly belongs to the range above (a ray turning at the
    // minimum instead of crossing it), and at n of the surface or the bottom both agree to far
    // below the roots' tolerance.
    bool first = false;
};

struct Sample {
    double v = 0.0;
    double f = not_a_number;      // X − R (+∞ where X diverges)
    double slope = not_a_number;  // dX/dv
};

// X − R and the slope finite at both samples.
bool finite_pair(const Sample& a, const Sample& b) {
    return std::isfinite(a.f) && std::isfinite(b.f) && std::isfinite(a.slope) && std::isfinite(b.slope);
}

// Two samples with X − R and the slope finite and each of one sign across them.
bool one_signed(const Sample& a, const Sample& b) { return finite_pair(a, b) && a.f * b.f > 0.0 && a.slope * b.slope > 0.0; }

// A bracket of v whose ends' distances d to the nearer end of the range (v for a bracket within
// [0, 1/2], else 1 − v) differ by a factor 4 or more: next to a double root X goes like log d
// there (docs/physics.md §8.3), far from a polynomial in v.
bool spans_decades(double a, double b) {
    const bool near_zero = std::max(a, b) <= 0.5;
    const double d_a = near_zero ? a : 1.0 - a, d_b = near_zero ? b : 1.0 - b;
    return d_a > 0.0 && d_b > 0.0 && std::max(d_a, d_b) >= 4.0 * std::min(d_a, d_b);
}

// For two samples with X − R of one sign: X cannot reach R in between unless its slope somewhere
// exceeds twice the largest of theirs and of the secant's, L. (With |dX/dv| <= 2L, X − R keeps
// its sign where |f_a| + |f_b| > 2L·(b − a): the two cones from the ends do not reach R. The
// secant's slope is reached somewhere in between, so a bound below it would not hold.) Also
// |X − R| at each end more than a quarter of L·(b − a), so that one end near R is never passed over.
bool beyond_reach(const Sample& a, const Sample& b) {
    const double secant = (b.f - a.f) / (b.v - a.v);
    const double reach = (b.v - a.v) * std::max({std::abs(a.slope), std::abs(b.slope), std::abs(secant)});
    return 0.5 * (std::abs(a.f) + std::abs(b.f)) > reach && std::min(std::abs(a.f), std::abs(b.f)) > 0.25 * reach;
}

// Two samples with X − R and the slope finite, X − R of one sign and beyond_reach: no root between
// them, whatever the signs of the slopes (the cones of beyond_reach hold for any X whose slope
// stays within 2L, with or without an extremum between). roots() skips the search for an
// extremum there, and the scan need not look closer.
bool out_of_reach(const Sample& a, const Sample& b) { return finite_pair(a, b) && a.f * b.f > 0.0 && beyond_reach(a, b); }

// An extremum of X between two samples that turns away from R (a minimum where X − R < 0 at both,
// or a maximum where it is > 0), with both beyond_reach.
bool turns_away_from_r(const Sample& a, const Sample& b) {
    if (!finite_pair(a, b)) return false;
    const bool minimum_below = a.f < 0.0 && b.f < 0.0 && a.slope < 0.0 && b.slope > 0.0;
    const bool maximum_above = a.f > 0.0 && b.f > 0.0 && a.slope > 0.0 && b.slope < 0.0;
    return (minimum_below || maximum_above) && beyond_reach(a, b);
}

// The legs of every family at one ray level, as sums of the pieces between the accessible
// interval's ends and the pair's ends, taken from the top down (upper end, source and receiver in
// depth order, lower end when the interval has one): each piece is integrated once, when first
// needed, and serves every family (and both legs of a family that share it).
enum LegName : int { source_receiver, source_upper, upper_receiver, source_lower, lower_receiver, traversal, leg_names };

class LegPieces {
public:
    LegPieces() = default;
    LegPieces(const StratifiedProfile& profile, const RayLevel& level, const AccessibleInterval& interval,
              double z_source, double z_receiver, bool with_time_and_length, const AttenuationProfile* attenuation)
        : profile_(&profile), level_(level), interval_(interval),
          has_lower_(interval.lower_kind != LowerEndKind::unbounded), with_time_(with_time_and_length),
          attenuation_(attenuation), z_source_(z_source) {
        points_[count_++] = upper_endpoint(interval);
        const double high = std::max(z_source, z_receiver), low = std::min(z_source, z_receiver);
        points_[count_++] = {high};
        if (low != high) points_[count_++] = {low};
        source_index_ = z_source == high ? 1 : count_ - 1;
        receiver_index_ = z_receiver == high ? 1 : count_ - 1;
        if (has_lower_) points_[count_++] = lower_endpoint(interval);
    }

    const AccessibleInterval& interval() const { return interval_; }
    bool has_lower() const { return has_lower_; }

    LegIntegrals leg(LegName name) {
        const std::size_t lower = count_ - 1;
        std::size_t a = 0, b = 0;
        switch (name) {
            case source_receiver: a = source_index_, b = receiver_index_; break;
            case source_upper: a = 0, b = source_index_; break;
            case upper_receiver: a = 0, b = receiver_index_; break;
            case source_lower: a = source_index_, b = lower; break;
            case lower_receiver: a = receiver_index_, b = lower; break;
            case traversal: a = 0, b = lower; break;
            case leg_names: break;
        }
        if (a > b) std::swap(a, b);
        LegIntegrals sum;
        for (std::size_t i = a; i < b; ++i) add(sum, piece(i));
        return sum;
    }

private:
    const LegIntegrals& piece(std::size_t i) {
        if (!computed_[i]) {
            if (!from_turning_cell(i)) {
                pieces_[i] = leg_integrals(*profile_, level_, points_[i + 1], points_[i], with_time_, true, attenuation_);
            }
            computed_[i] = true;
        }
        return pieces_[i];
    }

    // A piece from a turning end known to its cell only (interval_around with cell_only_turning):
    // from that cell's table where it serves the piece (true), else the interval solved for its
    // turning points before the piece is integrated (false).
    bool from_turning_cell(std::size_t i) {
        const bool upper = i == 0 && interval_.upper_approximate;
        const bool lower = i + 2 == count_ && has_lower_ && interval_.lower_approximate;
        if (!upper && !lower) return false;
        const LegEndpoint& turning = upper ? points_[0] : points_[count_ - 1];
        const LegEndpoint& fixed = upper ? points_[1] : points_[count_ - 2];
        if (!attenuation_) {
            if (const auto leg = leg_integrals_from_turning_cell(*profile_, level_, turning.z, fixed.z, with_time_)) {
                pieces_[i] = *leg;
                return true;
            }
        }
        interval_ = *profile_->interval_around(level_, z_source_);
        points_[0] = upper_endpoint(interval_);
        if (has_lower_) points_[count_ - 1] = lower_endpoint(interval_);
        return false;
    }

    const StratifiedProfile* profile_ = nullptr;
    RayLevel level_;
    AccessibleInterval interval_;
    bool has_lower_ = false, with_time_ = false;
    const AttenuationProfile* attenuation_ = nullptr;
    double z_source_ = 0.0;
    std::array<LegEndpoint, 4> points_{};
    std::size_t count_ = 0, source_index_ = 0, receiver_index_ = 0;
    std::array<bool, 3> computed_{};
    std::array<LegIntegrals, 3> pieces_{};  // pieces_[i]: between points_[i] and points_[i + 1]
};

// One ray level of a range's search (distance and derivative only); empty where the pair's
// interval does not hold the receiver.
using LegSet = std::optional<LegPieces>;

// A sample interval of FamilySearch::scan, between grid points i and j; `error`: the error of the
// cubic through its parent's ends at its parent's middle (NaN: none known, see cubic_settles).
struct ScanInterval {
    int i, j;
    Sample a, b;
    double error = not_a_number;
};

// The cubic Hermite interpolant of X − R between two samples with finite values and slopes, in
// t = (v − a.v)/(b.v − a.v) on [0, 1]: p(t) = c0 + c1·t + c2·t² + c3·t³, p′ = dp/dt.
struct HermiteCubic {
    double h, c0, c1, c2, c3;
    HermiteCubic(const Sample& a, const Sample& b)
        : h(b.v - a.v), c0(a.f), c1(h * a.slope), c2(-3.0 * a.f - 2.0 * h * a.slope + 3.0 * b.f - h * b.slope),
          c3(2.0 * a.f + h * a.slope - 2.0 * b.f + h * b.slope) {}
    double value(double t) const { return c0 + t * (c1 + t * (c2 + t * c3)); }
    double derivative(double t) const { return c1 + t * (2.0 * c2 + t * 3.0 * c3); }
    // The zeros of p′ strictly inside (0, 1); their count.
    int turning_points(double (&t)[2]) const {
        int count = 0;
        auto keep = [&](double x) {
            if (x > 0.0 && x < 1.0) t[count++] = x;
        };
        const double qa = 3.0 * c3, qb = 2.0 * c2, qc = c1;
        if (qa == 0.0) {
            if (qb != 0.0) keep(-qc / qb);
        } else if (const double d = qb * qb - 4.0 * qa * qc; d >= 0.0) {
            const double root = std::sqrt(d);
            keep((-qb - root) / (2.0 * qa));
            keep((-qb + root) / (2.0 * qa));
        }
        return count;
    }
};

// How far X strays from the cubic through the ends of [a, b] at a sample m between them: the
// error in X − R plus a quarter of the interval times the error in the slope (NaN where a value
// or a slope is not finite).
double cubic_error(const Sample& a, const Sample& b, const Sample& m) {
    if (!finite_pair(a, b) || !finite_pair(m, m)) return not_a_number;
    const HermiteCubic cubic(a, b);
    const double t = (m.v - a.v) / cubic.h;
    return std::abs(m.f - cubic.value(t)) + 0.25 * cubic.h * std::abs(m.slope - cubic.derivative(t) / cubic.h);
}

// Whether the cubic through a half's ends settles it, given `error`, the error of the cubic
// through its parent's ends at the parent's middle (cubic_error): a half's cubic errs about 16
// times less (the error of cubic interpolation goes like the fourth power of the interval), so
// `error` bounds it with room to spare. No root where X − R keeps its sign and the cubic's |X − R|
// stays above twice `error` all along; exactly one where X − R changes sign, the cubic is
// monotone and its slope in t stays above four times `error` (X′ = p′ + δ′, δ′ about `error` in t).
// False where no error is known.
bool cubic_settles(const Sample& a, const Sample& b, double error) {
    if (!(error >= 0.0) || !finite_pair(a, b)) return false;
    const HermiteCubic cubic(a, b);
    double turning[2];
    const int turnings = cubic.turning_points(turning);
    if (a.f * b.f > 0.0) {
        double least = std::min(std::abs(a.f), std::abs(b.f));
        for (int k = 0; k < turnings; ++k) {
            const double value = cubic.value(turning[k]);
            if (value * a.f <= 0.0) return false;
            least = std::min(least, std::abs(value));
        }
        return least > 2.0 * error;
    }
    if (!(a.f * b.f < 0.0) || turnings > 0) return false;
    // The least |p′| on [0, 1]: at an end or at the vertex of the parabola p′.
    double least = std::min(std::abs(cubic.derivative(0.0)), std::abs(cubic.derivative(1.0)));
    if (cubic.c3 != 0.0) {
        const double vertex = -cubic.c2 / (3.0 * cubic.c3);
        if (vertex > 0.0 && vertex < 1.0) least = std::min(least, std::abs(cubic.derivative(vertex)));
    }
    return least > 4.0 * error;
}

// The working lists of a pair's searches, kept from one range and family to the next so that
// they allocate only while they grow.
struct SearchBuffers {
    std::vector<std::pair<double, LegSet>> levels;  // RangeLegs: the levels of the range
    std::vector<Sample> samples;
    std::vector<ScanInterval> pending;
    std::vector<double> found;
};

class RangeLegs {
public:
    RangeLegs(const StratifiedProfile& profile, const RayParameterRange& range, double z_source, double z_receiver,
              std::vector<std::pair<double, LegSet>>& cache)
        : profile_(profile), range_(range), z_source_(z_source), z_receiver_(z_receiver),
          at_high_(RayLevel::anchored_at(profile, range.anchor_z, 0.0)),
          at_low_(range.low_anchored ? RayLevel::anchored_at(profile, range.low_anchor_z, 0.0) : at_high_), cache_(cache) {
        cache_.clear();
    }

    // ξ(v) = high − span·v², as an offset from n at the depth of `high`. Where `low` is n at a
    // depth too, v > 1/2 takes ξ = low + span·d²·(7 − 8d), d = 1 − v, as an offset from n there
    // instead: the same ξ and dξ/dv at v = 1/2, and n − ξ resolved next to either end far below a
    // rounding error of ξ (roots next to a double root at either end, where X grows like the
    // logarithm of ξ's distance to it).
    RayLevel level(double v) const {
        const double span = range_.high - range_.low;
        if (!range_.low_anchored || v <= 0.5) return at_high_.with_offset(span * v * v);
        const double d = 1.0 - v;
        return at_low_.with_offset(-span * d * d * (7.0 - 8.0 * d));
    }
    double dxi_dv(double v) const {
        const double span = range_.high - range_.low;
        if (!range_.low_anchored || v <= 0.5) return -2.0 * span * v;
        const double d = 1.0 - v;
        return -span * d * (14.0 - 24.0 * d);
    }
    // |ξ − ξ(end)| at v, and (about) the distance from the end in v (v or 1 − v) where it equals
    // `offset`, for the small offsets asked.
    double offset_from_end(double v, bool at_zero) const {
        const double span = range_.high - range_.low, d = 1.0 - v;
        if (at_zero) return span * v * v;
        return range_.low_anchored ? span * d * d * (7.0 - 8.0 * d) : span * (1.0 - v * v);
    }
    double distance_for_offset(double offset, bool at_zero) const {
        const double span = range_.high - range_.low;
        if (at_zero) return std::sqrt(offset / span);
        return range_.low_anchored ? std::sqrt(offset / (7.0 * span)) : offset / (2.0 * span);
    }

    LegSet& at(double v) {
        // The latest levels first: a search asks again for the samples it just made.
        for (auto it = cache_.rbegin(); it != cache_.rend(); ++it)
            if (it->first == v) return it->second;
        LegSet set;
        const RayLevel at_v = level(v);
        // Turning ends to their cells only (LegPieces solves for them where a piece needs it), but
        // solved where the source or the receiver lies in such a cell.
        auto interval = profile_.interval_around(at_v, z_source_, true);
        if (interval && (shares_cell(interval->upper_approximate, interval->upper_z) ||
                         shares_cell(interval->lower_approximate, interval->lower_z)))
            interval = profile_.interval_around(at_v, z_source_);
        if (interval && interval->contains(z_receiver_))
            set.emplace(profile_, at_v, *interval, z_source_, z_receiver_, false, nullptr);
        cache_.emplace_back(v, std::move(set));
        return cache_.back().second;
    }

private:
    // An approximate turning end whose cell holds the source or the receiver (boundaries included).
    bool shares_cell(bool approximate, double z) const {
        if (!approximate) return false;
        const std::size_t cell = profile_.cell_at(z);
        const double top = profile_.cell_top(cell), bottom = profile_.cell_bottom(cell);
        return (z_source_ <= top && z_source_ >= bottom) || (z_receiver_ <= top && z_receiver_ >= bottom);
    }

    const StratifiedProfile& profile_;
    RayParameterRange range_;
    double z_source_, z_receiver_;
    RayLevel at_high_, at_low_;  // ξ = high and ξ = low, anchored at their depths (at_low_ where low_anchored)
    // The levels met so far (a few dozen per range). A reference returned by at() is used before
    // the next call, which may move the elements.
    std::vector<std::pair<double, LegSet>>& cache_;
};

// X and dX/dξ of a family from the legs of one level of its range; empty when it does not exist
// there.
std::optional<std::pair<double, double>> family_distance(LegSet& set, const PathFamily& family) {
    if (!set) return std::nullopt;
    LegPieces& legs = *set;
    if (family.ends == 0) {
        const LegIntegrals direct = legs.leg(source_receiver);
        return std::pair{direct.distance_m, direct.distance_derivative};
    }
    const bool meets_lower = family.ends >= 2 || !family.starts_upward;
    if (meets_lower && !legs.has_lower()) return std::nullopt;
    const LegIntegrals first = legs.leg(family.starts_upward ? source_upper : source_lower);
    const LegIntegrals last = legs.leg(is_upper_end(family, family.ends - 1) ? upper_receiver : lower_receiver);
    double x = first.distance_m + last.distance_m, dx = first.distance_derivative + last.distance_derivative;
    if (family.ends >= 2) {
        const LegIntegrals full = legs.leg(traversal);
        x += (family.ends - 1) * full.distance_m;
        dx += (family.ends - 1) * full.distance_derivative;
    }
    return std::pair{x, dx};
}

class FamilySearch {
public:
    // fixed_ends: every leg of the family runs between depths that do not move with ξ (the pair's,
    // the surface, the bottom), so that X grows with ξ across the range (∂X/∂ξ = ∫ n²/Q³ dz > 0).
    FamilySearch(RangeLegs& legs, const RayParameterRange& range, const PathFamily& family, double distance,
                 int samples, SearchBuffers& buffers, bool fixed_ends)
        : legs_(legs), buffers_(buffers), range_(range), family_(family), distance_(distance), samples_(samples),
          fixed_ends_(fixed_ends),
          cut_limit_v_(legs.distance_for_offset(cut_limit_offset * (range.high - range.low), true)),
          cut_limit_d_(legs.distance_for_offset(cut_limit_offset * (range.high - range.low), false)),
          end_v0_(range.first ? not_a_number : cut_limit_v_),  // see roots()
          end_v1_(range.low_anchored ? 1.0 - cut_limit_d_ : not_a_number) {}

    Sample evaluate(double v) const {
        Sample s;
        s.v = v;
        const auto x = family_distance(legs_.at(v), family_);
        if (!x) return s;
        s.f = x->first - distance_;
        s.slope = x->second * legs_.dxi_dv(v);
        return s;
    }

    // Every v in [0, 1] with X(v) = R (valid until the next search on the same buffers).
    const std::vector<double>& roots() {
        if (fixed_ends_ && !range_.first && monotone_root()) return buffers_.found;
        std::vector<Sample>& samples = buffers_.samples;
        // The first range's v = 0 itself where X is finite there, else its limit sample like the
        // other ranges' (RayParameterRange::first).
        if (range_.first && !std::isfinite(evaluate(0.0).f)) end_v0_ = cut_limit_v_;
        scan(samples);
        // The end at v = 1 first: approach_end reads the samples next to an end from the front or
        // the back of the list, and each call appends its own at the back.
        approach_end(samples, false);
        approach_end(samples, true);
        std::sort(samples.begin(), samples.end(), [](const Sample& a, const Sample& b) { return a.v < b.v; });
        std::vector<double>& found = buffers_.found;
        found.clear();
        for (std::size_t i = 0; i < samples.size(); ++i) {
            const Sample& a = samples[i];
            if (a.f == 0.0) found.push_back(a.v);
            if (i + 1 == samples.size()) break;
            const Sample& b = samples[i + 1];
            if (!std::isfinite(a.f) && !std::isfinite(b.f)) continue;
            if (a.f * b.f < 0.0 || (std::isinf(a.f) && b.f < 0.0) || (std::isinf(b.f) && a.f < 0.0)) {
                found.push_back(root_between(a, b));
            } else if (finite_pair(a, b) && b.f != 0.0 && a.slope * b.slope < 0.0) {
                // An extremum inside: two roots if it reaches across R (not searched where it
                // cannot reach R).
                if (out_of_reach(a, b)) continue;
                const Sample e = extremum_between(a, b);
                if (e.f == 0.0) found.push_back(e.v);
                else if (std::isfinite(e.f) && e.f * a.f < 0.0) {
                    found.push_back(root_between(a, e));
                    found.push_back(root_between(e, b));
                }
            }
        }
        found.erase(std::remove_if(found.begin(), found.end(), [](double v) { return std::isnan(v); }), found.end());
        std::sort(found.begin(), found.end());
        found.erase(std::unique(found.begin(), found.end()), found.end());
        return found;
    }

private:
    // The root of a family with fixed ends (X monotone over the range) into buffers_.found: none
    // unless X − R changes sign between the range's two limit samples, else the one between them,
    // refined from there. False (nothing found) where X is not finite at both.
    bool monotone_root() const {
        const Sample a = evaluate(end_v0_), b = evaluate(range_.low_anchored ? end_v1_ : 1.0);
        if (!std::isfinite(a.f) || !std::isfinite(b.f)) return false;
        std::vector<double>& found = buffers_.found;
        found.clear();
        double root = not_a_number;
        if (a.f == 0.0 || b.f == 0.0) root = a.f == 0.0 ? a.v : b.v;
        else if (a.f * b.f < 0.0) root = root_between(a, b);
        if (!std::isnan(root)) found.push_back(root);
        return true;
    }

    // Samples of X − R at v = i / scan_samples, sorted by v: v = 0, 1/2 and 1 first, then the
    // middle of every interval that could hide a root, down to the finest spacing. An interval is
    // left unsplit only when nothing there comes near R: X finite at both ends, X − R of one sign
    // and X beyond reach of R there (out_of_reach; the slopes may differ in sign: an extremum
    // inside cannot reach R either); or when the cubic through its ends settles it, its error
    // known from the cubic through its parent's ends at the parent's middle (cubic_settles: no
    // root, or exactly one). Other intervals where X crosses R, diverges or ends are split to the
    // finest spacing, as are all near R (where two close roots at a fold can hide between
    // samples).
    // v = 0 and v = 1 themselves are taken just inside, far below a rounding error of ξ (the
    // anchored levels resolve n − ξ there; end_v0_, end_v1_), where the range's end is n at a
    // depth beyond the pair: X may tend to a value there (a kink of n, the surface) or diverge (a
    // smooth minimum, X ~ log), while at the end itself it may be the next range's. Only the
    // first range's v = 0 is taken exactly, where X is finite there (RayParameterRange::first),
    // and the last range's v = 1 (ξ = 0). root_between closes in on a root between a limit sample
    // and the next one in log distance. Next to a limit an interval is also left unsplit when X is
    // monotone in a variable in which it is smooth there (end_monotone): in the logarithm of the
    // distance to a double root it then holds one root if X − R changes sign across it, else none
    // (its finest spacing in v, 1/samples, would resolve nothing of the decades below it anyway).
    void scan(std::vector<Sample>& samples) const {
        const int finest = samples_;
        auto sample_at = [&](int i) {
            if (i == 0 && !std::isnan(end_v0_)) return evaluate(end_v0_);
            if (i == finest && range_.low_anchored) return evaluate(end_v1_);
            return evaluate(static_cast<double>(i) / finest);
        };
        auto far_from_r = [&](const ScanInterval& interval) {
            const Sample &a = interval.a, &b = interval.b;
            if (turns_away_from_r(a, b)) return true;
            if (const auto settled = end_monotone(a, b)) return *settled;
            return out_of_reach(a, b) || cubic_settles(a, b, interval.error);
        };
        // The coarse grid: i = 0, finest/2 (rounded down) and its multiples, and finest (at most 4
        // points: finest >= 4).
        const int half = std::max(1, finest / 2);
        std::array<int, 5> starts{};
        std::array<Sample, 5> coarse{};
        std::size_t count = 0;
        for (int i = 0; i < finest; i += half) starts[count++] = i;
        starts[count++] = finest;
        for (std::size_t k = 0; k < count; ++k) coarse[k] = sample_at(starts[k]);
        samples.clear();
        samples.push_back(coarse.front());
        std::vector<ScanInterval>& pending = buffers_.pending;
        pending.clear();
        for (std::size_t k = 0; k + 1 < count; ++k) {
            pending.push_back({starts[k], starts[k + 1], coarse[k], coarse[k + 1]});
            while (!pending.empty()) {
                const ScanInterval top = pending.back();
                pending.pop_back();
                if (top.j - top.i <= 1 || far_from_r(top)) {
                    if (top.j - top.i <= 1) {
                        const bool crossing = top.a.f * top.b.f < 0.0;
                        if ((crossing || !one_signed(top.a, top.b)) && !far_from_r(top))
                            split_crossing_below_finest(top.a, top.b, 0, samples);
                        else
                            split_below_finest(top.a, top.b, 0, samples);
                    }
                    samples.push_back(top.b);
                    continue;
                }
                const int middle = (top.i + top.j) / 2;
                const Sample m = sample_at(middle);
                const double error = cubic_error(top.a, top.b, m);
                pending.push_back({middle, top.j, m, top.b, error});  // the right half after the left
                pending.push_back({top.i, middle, top.a, m, error});
            }
        }
    }

    // For an interval [a, b] with one end at a limit sample of the range (end_v0_ or end_v1_) and
    // X finite with a slope at both: whether it can be left unsplit, judged in a variable in which
    // X is smooth next to that end, where v is not (ξ goes like v² or (1 − v)² there). Next to a
    // double root (X diverging) that is L = ln w, w = |ξ − ξ(end)|: X is close to linear in L
    // (docs/physics.md §8.3). Where X has a finite limit it is w itself. In either, where the
    // cubic through both ends' values and slopes in that variable is monotone (Fritsch and
    // Carlson's condition: with α and β the end slopes over the secant's, α, β >= 0 and
    // α² + β² <= 9), the interval holds no root if X − R keeps its sign with |X − R| beyond what
    // the larger slope covers: true. In L it holds exactly one where X − R changes sign, and
    // none where it keeps its sign, near R or not (true either way: halving in v would end at the
    // finest spacing, an interval from the limit sample that spans nearly all the decades of L
    // and is left unsplit, having resolved nothing of them). False where monotone otherwise; empty
    // where this does not apply (the rules in v decide).
    std::optional<bool> end_monotone(const Sample& a, const Sample& b) const {
        const bool at_zero = a.v == end_v0_, at_one = b.v == end_v1_;
        if (at_zero == at_one || !finite_pair(a, b)) return std::nullopt;
        const double w_a = legs_.offset_from_end(a.v, at_zero), w_b = legs_.offset_from_end(b.v, at_zero);
        // dX/dw = (dX/dv)/(dw/dv), with dw/dv = ∓dξ/dv.
        const double x_a = a.slope / (at_zero ? -legs_.dxi_dv(a.v) : legs_.dxi_dv(a.v));
        const double x_b = b.slope / (at_zero ? -legs_.dxi_dv(b.v) : legs_.dxi_dv(b.v));
        for (const bool logarithmic : {true, false}) {
            const double l_a = logarithmic ? std::log(w_a) : w_a, l_b = logarithmic ? std::log(w_b) : w_b;
            const double s_a = logarithmic ? x_a * w_a : x_a, s_b = logarithmic ? x_b * w_b : x_b;
            const double secant = (b.f - a.f) / (l_b - l_a);
            const double ra = s_a / secant, rb = s_b / secant;
            if (!(ra >= 0.0 && rb >= 0.0 && ra * ra + rb * rb <= 9.0)) continue;
            if (logarithmic) return true;
            const double reach = 2.0 * std::abs(l_b - l_a) * std::max(std::abs(s_a), std::abs(s_b));
            return a.f * b.f > 0.0 && std::min(std::abs(a.f), std::abs(b.f)) > reach;
        }
        return std::nullopt;
    }

    // An interval of the finest spacing whose end slopes have one sign and are both more than 3
    // times steeper than its secant, or of the other sign than the secant (X − R of one sign at
    // both ends, and near enough R for the larger slope to reach it): X turns twice inside (a bump
    // between two cells of a table, say), which may cross R twice with no sign change of X − R or
    // of the slope at the samples. (Next to a divergent end one slope is much steeper and the other
    // much flatter than the secant: X is monotone there.) It is halved until this no longer holds,
    // at most 8 times more; the samples are added in order of v.
    void split_below_finest(const Sample& a, const Sample& b, int depth, std::vector<Sample>& samples) const {
        if (depth >= 8 || !one_signed(a, b)) return;
        const double secant = (b.f - a.f) / (b.v - a.v);
        const double ra = a.slope / secant, rb = b.slope / secant;
        if (!(ra < 0.0 || (ra > 3.0 && rb > 3.0)) || beyond_reach(a, b)) return;
        const Sample m = evaluate(0.5 * (a.v + b.v));
        split_below_finest(a, m, depth + 1, samples);
        samples.push_back(m);
        split_below_finest(m, b, depth + 1, samples);
    }

    // An interval of the finest spacing not left whole by the rules of the scan (far_from_r) where
    // X − R changes sign, or keeps it with an end slope that is not finite or the slopes not of
    // one sign (the first range's v = 0, where a ray horizontal at an end has ∂X/∂ξ infinite):
    // X may cross R three times, or twice unseen. It is halved, and each half left whole where the
    // cubic through its ends settles it (with the error found at the middle), or it is beyond
    // reach of R or turns away from it, at most 8 times more; the samples are added in order of v.
    void split_crossing_below_finest(const Sample& a, const Sample& b, int depth, std::vector<Sample>& samples) const {
        if (depth >= 8 || !std::isfinite(a.f) || !std::isfinite(b.f)) return;
        const Sample m = evaluate(0.5 * (a.v + b.v));
        const double error = cubic_error(a, b, m);
        auto settled = [&](const Sample& x, const Sample& y) {
            return cubic_settles(x, y, error) || out_of_reach(x, y) || turns_away_from_r(x, y);
        };
        if (!settled(a, m)) split_crossing_below_finest(a, m, depth + 1, samples);
        samples.push_back(m);
        if (!settled(m, b)) split_crossing_below_finest(m, b, depth + 1, samples);
    }

    // Where X diverges (or the family ends) at v = 0 or 1, step toward it until X exceeds R with X
    // growing toward the end, so that the roots near a double root are bracketed. Next to a double
    // root X grows like the logarithm of the distance to the end (docs/physics.md §8.3), so once two
    // samples show that growth the next step goes to where the logarithm through them reaches a
    // little beyond R (a secant in log distance); otherwise the distance is halved.
    void approach_end(std::vector<Sample>& samples, bool at_zero) {
        const Sample& end = at_zero ? samples.front() : samples.back();
        const Sample& next = at_zero ? samples[1] : samples[samples.size() - 2];
        // Only where X diverges, or where the family exists next to an end that is itself degenerate;
        // and not where the scan's last sample before the end already has X above R and growing
        // toward it.
        if (std::isfinite(end.f) || (std::isnan(end.f) && !std::isfinite(next.f))) return;
        if (std::isfinite(next.f) && next.f > 0.0 && (at_zero ? next.slope < 0.0 : next.slope > 0.0)) return;
        // How close to the end: down to the cut limits where the end's ξ is n at a depth (v = 0
        // always, v = 1 with low_anchored: ξ(v) resolves n − ξ there far below a rounding error of
        // ξ), else no closer than a few rounding errors of ξ (a little more, so that rounding does
        // not put it below).
        const double spacing = 1.0 / samples_;
        const bool resolved = at_zero || range_.low_anchored;
        const double closest = closest_offset();
        auto distance_of = [&](double v) { return at_zero ? v : 1.0 - v; };
        const double nearest = resolved ? (at_zero ? cut_limit_v_ : cut_limit_d_)
                                        : (1.0 + 1e-6) * legs_.distance_for_offset(closest, at_zero);
        Sample previous = next;
        double distance = 0.5 * spacing;
        for (int j = 1; j <= 200; ++j) {
            const double v = at_zero ? distance : 1.0 - distance;
            if (v <= 0.0 || v >= 1.0) break;
            if (!resolved && legs_.offset_from_end(v, at_zero) < closest) break;
            const Sample s = evaluate(v);
            samples.push_back(s);
            const bool growing_toward_end = at_zero ? s.slope < 0.0 : s.slope > 0.0;
            if (std::isfinite(s.f) && s.f > 0.0 && growing_toward_end) break;
            double step = 0.5;  // the factor on the distance
            if (std::isfinite(s.f) && std::isfinite(previous.f) && growing_toward_end && s.f > previous.f) {
                // X = A + B·log(distance) through the two samples (B < 0), aimed at R + |f|/2 past R.
                const double log_ratio = std::log(distance_of(s.v) / distance_of(previous.v));
                const double b = (s.f - previous.f) / log_ratio;
                const double target = -s.f + 0.5 * std::abs(s.f);  // the rise still wanted
                // At most four decades at a time: where X grows faster than a logarithm (like 1/v
                // at equal depths in deep ice) the jump overshoots, and the bracket left for the
                // root stays narrow enough for a few bisections.
                if (b < 0.0 && std::isfinite(b)) step = std::clamp(std::exp(target / b), 1e-4, 0.5);
            }
            previous = s;
            const double closer = std::max(distance * step, nearest);
            if (!(closer < distance)) break;
            distance = closer;
        }
    }

    // The closest to an end of the range without a depth (ξ = 0) that ξ is taken: a few rounding
    // errors of ξ.
    double closest_offset() const { return 4.0 * std::numeric_limits<double>::epsilon() * range_.high; }
    // The first sample of a range whose v = 0 is a cut: n − ξ = span·1e-24 there (cut_limit_v_), and
    // the last where its low end has a depth: ξ − low about the same (1 − v = cut_limit_d_).
    static constexpr double cut_limit_offset = stratified_cut_limit;

    // The factor on the distance d to an end (v, or 1 − v) of a step from sample s toward it:
    // Newton's step in ln d to half of |X − R| past R (X about linear in ln d next to a double
    // root, so that the step mostly brackets the root closely), kept within [1e-4, 0.9]; 1/4 where
    // the slope does not point toward R that way.
    static double log_step(const Sample& s, bool at_zero) {
        const double d = at_zero ? s.v : 1.0 - s.v;
        const double per_log = (at_zero ? s.slope : -s.slope) * d;  // dX/d(ln d)
        const double factor = std::exp(-1.5 * s.f / per_log);
        return factor > 0.0 && factor < 1.0 ? std::clamp(factor, 1e-4, 0.9) : 0.25;
    }

    // Steps in ln d (log_step) from the bracket's sample farther from an end of the range (v = 0
    // with at_zero, else v = 1, not closer than cut_limit_d_ there) toward it until X − R changes
    // sign, narrowing [low, high]. True, with `root` set, where a step lands on X = R exactly, or
    // where the steps toward v = 1 reach its limit without a sign change (root NaN: none there);
    // false where the bracket is left to the refinement.
    bool close_in(Sample& low, Sample& high, bool at_zero, double& root) const {
        Sample& far = at_zero ? high : low;
        const Sample& end = at_zero ? low : high;
        for (int k = 0; k < 120; ++k) {
            const double d = at_zero ? log_step(far, true) * far.v
                                     : std::max(log_step(far, false) * (1.0 - far.v), cut_limit_d_);
            const double vm = at_zero ? d : 1.0 - d;
            if (!(vm > low.v && vm < high.v)) {
                if (at_zero) return false;
                root = not_a_number;
                return true;
            }
            const Sample m = finite(evaluate(vm));
            if (m.f == 0.0) {
                root = vm;
                return true;
            }
            if ((m.f < 0.0) == (end.f < 0.0)) {
                (at_zero ? low : high) = m;
                return false;
            }
            far = m;
        }
        return false;
    }

    // X − R with a divergent X taken as just above R (its slope then unknown).
    Sample finite(Sample s) const {
        if (!std::isfinite(s.f)) {
            s.f = distance_ + 1.0;
            s.slope = not_a_number;
        }
        return s;
    }

    // The root of X − R between two samples of opposite signs (NaN: none within the limits above).
    double root_between(const Sample& a, const Sample& b) const {
        Sample low = finite(a), high = finite(b);
        if (low.f == 0.0) return low.v;
        if (high.f == 0.0) return high.v;
        // A root next to v = 0 itself can lie many decades below the first sample (equal depths in
        // deep ice: n − ξ ~ 1e-19 where X = R, X ∝ v there; a double root, X ~ ln v), and so next to
        // v = 1 where X is not finite even at its limit sample (the range's low end has a depth: a
        // double root that ξ(v) resolves to far below a rounding error of ξ): close in on it first
        // (close_in), which keeps the refinement below within its iterations. From a limit sample
        // with X finite the refinement works in ln d itself.
        double root = 0.0;
        if ((low.v == 0.0 || (low.v == end_v0_ && !std::isfinite(a.f))) && close_in(low, high, true, root)) return root;
        if (b.v == end_v1_ && !std::isfinite(b.f) && close_in(low, high, false, root)) return root;
        return refine_root(low, high);
    }

    // The root of X − R between two samples of opposite signs, to two ulps of v (the tolerance
    // TOMS748 was given here before). Each evaluation already returns dX/dv, so Newton steps from
    // the better end of the bracket cost one evaluation each where TOMS748 spent about twenty per
    // root on this problem; safeguarded as in rtsafe (Numerical Recipes, common practice): a step
    // that leaves the bracket or does not at least halve the step before the last one is replaced
    // by bisection, so it never does worse than bisection. The first point is the root of the
    // cubic through the bracket's values and slopes (hermite_root) where that applies. A Newton
    // step below the resolution of v ends the search only where X − R is already within 1e-7 of R
    // (an inaccurate slope, e.g. next to a turning end, cannot stop it early); so does an X − R
    // within 1e-13 of R, a few times X's own rounding; the end with the smaller |X − R| is
    // returned, as before.
    double refine_root(Sample low, Sample high) const {
        const double eps = std::numeric_limits<double>::epsilon();
        auto close = [&](double lo, double hi) { return std::abs(hi - lo) <= 2.0 * eps * std::max(std::abs(lo), std::abs(hi)); };
        auto better = [](const Sample& x, const Sample& y) { return std::abs(x.f) <= std::abs(y.f) ? x : y; };
        double step_before_last = std::abs(high.v - low.v), last_step = step_before_last;
        // Where Newton's step is refused, the false-position point instead of the midpoint, with
        // the Illinois rule (the f of an end kept twice in a row is halved), so that it cannot
        // stall on one end; every third refusal in a row bisects (common practice).
        double f_low = low.f, f_high = high.f;
        int kept = 0, refusals = 0;  // kept: +1 low kept last time, −1 high, 0 neither
        // The first point: the root of the cubic through both ends' values and slopes, where it
        // is monotone (what the scan left in a bracket mostly is); where X goes like ln d over
        // the bracket, Newton's step in ln d from its end nearer the range's end, where the slope
        // is closest to the logarithm's (X − R about linear in ln d).
        double first_guess = spans_decades(low.v, high.v)
                                 ? log_newton(std::max(low.v, high.v) <= 0.5 ? low : high, low, high)
                                 : hermite_root(low, high);
        Sample latest = low.v == high.v ? low : high, before_latest = low;  // the last two evaluated
        for (int iteration = 0; iteration < 200 && !close(low.v, high.v); ++iteration) {
            const Sample best = better(low, high);
            // Bisection and false position in v, or in L = ln d where X goes like ln d
            // (spans_decades; d the distance to the nearer end of the range).
            const bool logarithmic = spans_decades(low.v, high.v), near_zero = std::max(low.v, high.v) <= 0.5;
            auto to_variable = [&](double x) { return logarithmic ? std::log(near_zero ? x : 1.0 - x) : x; };
            auto from_variable = [&](double l) {
                return logarithmic ? (near_zero ? std::exp(l) : 1.0 - std::exp(l)) : l;
            };
            const double l_low = to_variable(low.v), l_high = to_variable(high.v);
            double v = from_variable(0.5 * (l_low + l_high));
            if (refusals % 3 != 2 && f_high != f_low) {
                const double secant = from_variable(l_low - f_low * (l_high - l_low) / (f_high - f_low));
                if (secant > std::min(low.v, high.v) && secant < std::max(low.v, high.v)) v = secant;
            }
            ++refusals;
            double step = v - best.v;
            if (std::isfinite(best.slope) && best.slope != 0.0) {
                double newton = -best.f / best.slope;
                // Converged: X − R at the level of X's own rounding, or a Newton step below the
                // resolution of v where X − R is within the bound of the finish below.
                if (std::abs(best.f) <= 1e-13 * (1.0 + distance_) ||
                    (std::abs(newton) <= eps * std::abs(best.v) && std::abs(best.f) <= 1e-7 * (1.0 + distance_)))
                    return best.v;
                // Within 1e-3 R of R (the bound on X″·step²/2 below is what keeps the accuracy: 1e-5
                // R gave the same times to 1e-9 ns and lengths to 2e-8 m, with 1.2 % more levels),
                // with a slope that the secant from the nearest other sample confirms to 10 % (it is
                // less accurate next to a turning end), the Newton step itself ends the search
                // without another level where it leaves X − R below 1e-12 R: X″·step²/2 with X″
                // from the slopes at the two (X is far from linear in v next to v = 0, where ξ goes
                // like v²). All in L = ln d where the bracket spans decades (X
                // close to linear there, and the step taken in it). The nearest other sample: the
                // other end of the bracket, or the sample evaluated before `best` where that lies
                // closer (the iterates approach a root from one side). The time is corrected to
                // first order in X − R anyway (make_path), and so is ξ. A step that rounds to `best`
                // itself ends it too: v resolves the root no better (next to v = 1, where d = 1 − v
                // moves by 1e-16 per ulp, X can move by 1e-4 m per ulp of v), and the bracket would
                // only have shrunk to two ulps around it, a dozen levels later, to the same end.
                const Sample& other = best.v == low.v ? high : low;
                const Sample& previous = best.v == latest.v ? before_latest : latest;
                const Sample& near = std::abs(previous.v - best.v) < std::abs(other.v - best.v) &&
                                             previous.v != best.v && std::isfinite(previous.slope)
                                         ? previous
                                         : other;
                auto slope_in_variable = [&](const Sample& x) {
                    return logarithmic ? x.slope * (near_zero ? x.v : -(1.0 - x.v)) : x.slope;
                };
                const double l_best = to_variable(best.v), l_near = to_variable(near.v);
                const double best_slope = slope_in_variable(best), step_in_variable = -best.f / best_slope;
                const double finish = from_variable(l_best + step_in_variable);
                const double near_slope = (best.f - near.f) / (l_best - l_near);
                const double curvature = std::abs((best_slope - slope_in_variable(near)) / (l_best - l_near));
                if (std::abs(best.f) <= 1e-3 * distance_ && std::abs(near_slope / best_slope - 1.0) < 0.1 &&
                    0.5 * curvature * step_in_variable * step_in_variable <= 1e-12 * distance_ &&
                    (finish == best.v || (finish > std::min(low.v, high.v) && finish < std::max(low.v, high.v))))
                    return finish;
                // Where X goes like log d (spans_decades), Newton's step is taken in log d, which
                // follows that shape.
                if (logarithmic) {
                    const double d = near_zero ? best.v : 1.0 - best.v;
                    const double d_slope = near_zero ? best.slope : -best.slope;  // dX/dd
                    const double d_target = d * std::exp(-best.f / (d * d_slope));
                    if (std::isfinite(d_target)) newton = (near_zero ? d_target : 1.0 - d_target) - best.v;
                }
                const double target = best.v + newton;
                const bool inside = target > std::min(low.v, high.v) && target < std::max(low.v, high.v);
                if (inside && std::abs(newton) <= 0.5 * step_before_last) {
                    v = target;
                    step = newton;
                    refusals = 0;
                }
            }
            if (!std::isnan(first_guess)) {
                v = first_guess;
                step = v - best.v;
                first_guess = not_a_number;
            }
            step_before_last = last_step;
            last_step = std::abs(step);
            if (!(v > std::min(low.v, high.v) && v < std::max(low.v, high.v))) break;
            const Sample s = finite(evaluate(v));
            if (s.f == 0.0) return v;
            before_latest = latest;
            latest = s;
            if ((s.f < 0.0) == (low.f < 0.0)) {
                low = s;
                f_low = s.f;
                if (kept == -1) f_high *= 0.5;
                kept = -1;
            } else {
                high = s;
                f_high = s.f;
                if (kept == 1) f_low *= 0.5;
                kept = 1;
            }
        }
        return better(low, high).v;
    }

    // Newton's step in L = ln d (d the distance to the nearer end of the range) from sample s, where
    // it lands strictly inside [low, high]; NaN otherwise.
    static double log_newton(const Sample& s, const Sample& low, const Sample& high) {
        if (!std::isfinite(s.f) || !std::isfinite(s.slope) || s.slope == 0.0) return not_a_number;
        const bool near_zero = std::max(low.v, high.v) <= 0.5;
        const double d = near_zero ? s.v : 1.0 - s.v;
        const double d_target = d * std::exp(-s.f / (d * (near_zero ? s.slope : -s.slope)));
        const double v = near_zero ? d_target : 1.0 - d_target;
        return v > std::min(low.v, high.v) && v < std::max(low.v, high.v) ? v : not_a_number;
    }

    // The root of the cubic Hermite interpolant of X − R between two samples of opposite signs,
    // when both slopes are finite and of the secant's sign, inside the range and not where X goes
    // like a logarithm (spans_decades); NaN otherwise. Found by safeguarded Newton on the cubic.
    static double hermite_root(const Sample& a, const Sample& b) {
        const double h = b.v - a.v;
        if (!finite_pair(a, b)) return not_a_number;
        const double secant = (b.f - a.f) / h;
        if (!(a.slope * secant > 0.0 && b.slope * secant > 0.0) || !(a.f * b.f < 0.0)) return not_a_number;
        const double low = std::min(a.v, b.v), high = std::max(a.v, b.v);
        if (!(low > 0.0 && high < 1.0) || spans_decades(low, high)) return not_a_number;
        const HermiteCubic cubic(a, b);  // p(t) on t in [0, 1] from a to b
        double t_low = 0.0, t_high = 1.0;  // p(t_low) has a.f's sign
        double t = a.f / (a.f - b.f);
        for (int iteration = 0; iteration < 40; ++iteration) {
            const double p = cubic.value(t);
            if (p == 0.0) break;
            ((p > 0.0) == (a.f > 0.0) ? t_low : t_high) = t;
            double next = t - p / cubic.derivative(t);
            if (!(next > std::min(t_low, t_high) && next < std::max(t_low, t_high))) next = 0.5 * (t_low + t_high);
            if (std::abs(next - t) <= 1e-15) {
                t = next;
                break;
            }
            t = next;
        }
        const double v = a.v + t * h;
        return v > low && v < high ? v : not_a_number;
    }

    // The extremum of X between two samples whose slopes differ in sign (a sample there), or a
    // sample between them where X − R has the other sign than at `a` (the extremum crosses R: a
    // root on each side of it). False position on the slope with the Illinois rule and every
    // third step a bisection (common practice), to 1e-14 of v. It stops early, with the better
    // end, once the bracket left is beyond_reach (X − R of a's sign at both of its ends): the
    // extremum cannot reach R then, by the test that lets roots() skip the search altogether.
    // (Stopping once a quadratic model put the extremum clear of R was tried: it missed roots
    // where X is far from quadratic, next to a flat stretch of a table.)
    Sample extremum_between(const Sample& a, const Sample& b) const {
        auto slope_of = [](const Sample& s) { return std::isfinite(s.slope) ? s.slope : 0.0; };
        Sample low = a, high = b;
        double s_low = slope_of(a), s_high = slope_of(b);
        int kept = 0;  // +1: low kept last time, −1: high
        for (int iteration = 0; iteration < 100; ++iteration) {
            if (std::abs(high.v - low.v) <= 1e-14 * std::max(std::abs(low.v), std::abs(high.v))) break;
            double v = 0.5 * (low.v + high.v);
            if (iteration % 3 != 2 && s_high != s_low) {
                const double secant = low.v - s_low * (high.v - low.v) / (s_high - s_low);
                if (secant > std::min(low.v, high.v) && secant < std::max(low.v, high.v)) v = secant;
            }
            const Sample m = evaluate(v);
            if (!std::isfinite(m.f) || m.f * a.f <= 0.0) return m;
            const double s_m = slope_of(m);
            if (s_m == 0.0) return m;
            if ((s_m > 0.0) == (slope_of(a) > 0.0)) {
                low = m;
                s_low = s_m;
                if (kept == 1) s_high *= 0.5;
                kept = 1;
            } else {
                high = m;
                s_high = s_m;
                if (kept == -1) s_low *= 0.5;
                kept = -1;
            }
            if (beyond_reach(low, high)) return std::abs(low.f) <= std::abs(high.f) ? low : high;
        }
        return evaluate(0.5 * (low.v + high.v));
    }

    RangeLegs& legs_;
    SearchBuffers& buffers_;
    RayParameterRange range_;
    PathFamily family_;
    double distance_;
    int samples_;
    bool fixed_ends_;
    double cut_limit_v_, cut_limit_d_;
    // The range's own limits taken as its first and last samples (NaN where v = 0 or 1 itself is).
    double end_v0_, end_v1_;
};

// The ranges of ξ in [0, min n between the ends), between the cuts of ray_parameter_cuts.
std::vector<RayParameterRange> ray_parameter_ranges(const StratifiedProfile& profile, double z_low, double z_high) {
    const std::vector<RayParameterCut> cuts = ray_parameter_cuts(profile, z_low, z_high);
    std::vector<RayParameterRange> ranges;
    for (std::size_t i = 0; i < cuts.size(); ++i) {
        const bool last = i + 1 == cuts.size();
        const double low = last ? 0.0 : cuts[i + 1].ray_parameter;
        if (cuts[i].ray_parameter > low)
            ranges.push_back({cuts[i].ray_parameter, low, cuts[i].anchor_z, !last, last ? 0.0 : cuts[i + 1].anchor_z,
                              i == 0});
    }
    return ranges;
}

// Whether every end of the family in an interval with these kinds of ends is a reflection (the
// surface above, the bottom below), so that its legs run between fixed depths. Not the direct path
// (its own ranges, direct_ranges).
bool legs_have_fixed_ends(const PathFamily& family, const AccessibleInterval& interval) {
    if (family.ends == 0) return false;
    const bool meets_upper = family.ends >= 2 || family.starts_upward;
    const bool meets_lower = family.ends >= 2 || !family.starts_upward;
    return (!meets_upper || interval.upper_kind == UpperEndKind::surface) &&
           (!meets_lower || interval.lower_kind == LowerEndKind::bottom);
}

bool family_is_degenerate(const PathFamily& family, const AccessibleInterval& interval, double z_source,
                          double z_receiver, bool bottom_paths) {
    if (family.ends == 0) return false;
    const bool meets_lower = family.ends >= 2 || !family.starts_upward;
    if (meets_lower && interval.lower_kind == LowerEndKind::unbounded) return true;
    if (meets_lower && interval.lower_kind == LowerEndKind::bottom && !bottom_paths) return true;
    // A reflection at the point where the path starts or ends is no reflection.
    const bool first_upper = family.starts_upward, last_upper = is_upper_end(family, family.ends - 1);
    auto at_fixed_end = [&](bool upper, double z) {
        return upper ? interval.upper_kind == UpperEndKind::surface && z == interval.upper_z
                     : interval.lower_kind == LowerEndKind::bottom && z == interval.lower_z;
    };
    return at_fixed_end(first_upper, z_source) || at_fixed_end(last_upper, z_receiver);
}

// |cos θ| at z for a ray level, from the level's n − ξ (no cancellation near horizontal).
double cosine_at(const StratifiedProfile& profile, const RayLevel& level, double z) {
    const double n = profile.index(z), g = std::max(0.0, profile.gap(level, z));
    return std::sqrt(g * (n + level.ray_parameter)) / n;
}

// |∂X/∂ξ|·|cos θ0 cos θr|. Where the path is horizontal at an end (n = ξ there to the last bit) ∂X/∂ξ
// is infinite and the cosine zero, while the product has a finite limit (1/|dn/dz| per leg
// touching that end, times the other cosine): take it on the same family a little below ξ, where
// the error grows like the angle from horizontal (√(2·1e-13) ≈ 5e-7 relative at the first try).
double derivative_cosines(const StratifiedProfile& profile, const RayLevel& level, const PathFamily& family,
                          double distance_derivative, double z_source, double z_receiver) {
    const double direct = std::abs(distance_derivative) * cosine_at(profile, level, z_source) *
                          cosine_at(profile, level, z_receiver);
    if (std::isfinite(direct)) return direct;
    const double xi = level.ray_parameter;
    for (const double relative : {1e-13, 1e-11, 1e-9}) {
        const RayLevel nearby = level.anchored
                                    ? RayLevel::anchored_at(profile, level.anchor_z, level.offset + relative * xi)
                                    : RayLevel::plain(xi * (1.0 - relative));
        const auto legs = family_legs(profile, nearby, family, z_source, z_receiver, false);
        if (!legs) continue;
        const double product = std::abs(legs->total.distance_derivative) * cosine_at(profile, nearby, z_source) *
                               cosine_at(profile, nearby, z_receiver);
        if (std::isfinite(product)) return product;
    }
    return 0.0;
}

// The level moved by the Newton step for X − R = `residual` (R − X) with ∂X/∂ξ = `derivative`,
// where that step is finite, below 1e-9 of ξ and below half of the anchored offset; else the level
// itself.
RayLevel corrected_level(const RayLevel& level, double residual, double derivative) {
    const double step = residual / derivative;
    if (!std::isfinite(step) || step == 0.0 || !(std::abs(step) <= 1e-9 * level.ray_parameter)) return level;
    if (!level.anchored) return RayLevel::plain(level.ray_parameter + step);
    if (!(std::abs(step) <= 0.5 * std::abs(level.offset))) return level;
    return level.with_offset(level.offset - step);
}

StratifiedPath make_path(const StratifiedProfile& profile, const RayLevel& level, const PathFamily& family,
                         const FamilyLegs& legs, double z_source, double z_receiver, double distance) {
    StratifiedPath path;
    path.kind = kind_of(family, legs.interval);
    path.family = family.label();
    // First-order correction for the root's residual: dT/dR = ξ/c along a family.
    path.time_s = (legs.total.optical_path_m + level.ray_parameter * (distance - legs.total.distance_m)) / speed_of_light;
    // And ξ itself by the Newton step that the residual and ∂X/∂ξ at the root give (no further
    // integration): the search stops once that step would leave X − R below 1e-12 R, a few 1e-13
    // of ξ, which angles near the critical angle of the surface amplify tenfold. Only a step small
    // against ξ and against n − ξ at the anchor (a level next to a double root keeps its digits).
    const RayLevel at = corrected_level(level, distance - legs.total.distance_m, legs.total.distance_derivative);
    const double xi = at.ray_parameter;
    path.ray_parameter = xi;
    path.length_m = legs.total.length_m;
    path.distance_derivative = legs.total.distance_derivative;
    path.attenuation_exponent = legs.total.attenuation_exponent;
    auto zenith_up = [&](double z) {
        const double n = profile.index(z), g = std::max(0.0, profile.gap(at, z));
        return std::atan2(xi, std::sqrt(g * (n + xi)));
    };
    path.derivative_cosines = derivative_cosines(profile, at, family, legs.total.distance_derivative, z_source,
                                                 z_receiver);
    const bool launch_up = family.ends == 0 ? z_receiver > z_source : family.starts_upward;
    const bool arrive_up = family.ends == 0 ? launch_up : !is_upper_end(family, family.ends - 1);
    path.launch_zenith_rad = launch_up ? zenith_up(z_source) : pi - zenith_up(z_source);
    path.arrival_zenith_rad = arrive_up ? zenith_up(z_receiver) : pi - zenith_up(z_receiver);
    double offset = legs.first_leg_m;
    for (int j = 0; j < family.ends; ++j) {
        PathTurn turn;
        if (is_upper_end(family, j)) {
            turn.z_m = legs.interval.upper_z;
            turn.kind = legs.interval.upper_kind == UpperEndKind::turning ? PathTurnKind::turning
                                                                          : PathTurnKind::surface_reflection;
        } else {
            turn.z_m = legs.interval.lower_z;
            turn.kind = legs.interval.lower_kind == LowerEndKind::turning ? PathTurnKind::turning
                                                                          : PathTurnKind::bottom_reflection;
        }
        turn.offset_m = offset;
        path.turns.push_back(turn);
        offset += legs.traversal_m;
    }
    return path;
}

// A lower bound on the horizontal distance any ray with ray parameter ξ' >= ξ covers between the
// depths a and b, where n > ξ' on the way: dx/dz = ξ'/√(n² − ξ'²) grows with ξ' and falls with n,
// so each cell adds at least its height times that value at its largest n. The sum stops once it
// exceeds `enough` (a bound beyond it decides nothing more).
double distance_floor(const StratifiedProfile& profile, double a, double b, double xi, double enough) {
    const double top = std::max(a, b), bottom = std::min(a, b);
    double sum = 0.0;
    for (std::size_t cell = profile.cell_at(top, -1); cell < profile.cell_count() && sum <= enough; ++cell) {
        const double height = std::min(top, profile.cell_top(cell)) - std::max(bottom, profile.cell_bottom(cell));
        if (!(height > 0.0)) break;
        const double n = profile.cell_max_index(cell);
        if (n > xi) sum += height * xi / std::sqrt((n - xi) * (n + xi));
    }
    return sum;
}

// Lower bounds on X of every family with ends over a range of ξ >= xi_low whose accessible
// intervals all reach up to at least reach_up and down to at least reach_low: each leg covers at
// least the depths between its ends as far as those reaches. Each span at most once, when first
// needed, and summed no further than beyond `enough` (past which a family is left out anyway).
class FamilyDistanceFloor {
public:
    // n_least: a lower bound on n over every span (the range's top: everything between the pair
    // and the cuts met so far has a larger n).
    FamilyDistanceFloor(const StratifiedProfile& profile, double z_source, double z_receiver, double reach_up,
                        double reach_low, double xi_low, double n_least, double enough)
        : profile_(profile), xi_low_(xi_low), enough_(enough),
          slope_ceiling_(xi_low / std::sqrt((n_least - xi_low) * (n_least + xi_low))),
          spans_{{{z_source, reach_up}, {z_source, reach_low}, {z_receiver, reach_up}, {z_receiver, reach_low},
                  {reach_up, reach_low}}} {}

    // Whether the family's floor does not exceed `enough`. Not summed where even the bound from
    // above (each span's height times dx/dz at n_least) stays within `enough`.
    bool may_reach(const PathFamily& family) {
        const Span first = family.starts_upward ? source_up : source_low;
        const Span last = is_upper_end(family, family.ends - 1) ? receiver_up : receiver_low;
        auto height = [&](Span i) { return std::abs(spans_[i].first - spans_[i].second); };
        const double ceiling =
            slope_ceiling_ * (height(first) + height(last) + (family.ends - 1) * height(traversal_span));
        if (ceiling <= enough_) return true;
        double sum = span(first);
        if (sum <= enough_) sum += span(last);
        if (sum <= enough_ && family.ends >= 2) sum += (family.ends - 1) * span(traversal_span);
        return sum <= enough_;
    }

private:
    enum Span : std::size_t { source_up, source_low, receiver_up, receiver_low, traversal_span, spans };
    double span(Span i) {
        if (std::isnan(floors_[i])) floors_[i] = distance_floor(profile_, spans_[i].first, spans_[i].second, xi_low_, enough_);
        return floors_[i];
    }
    const StratifiedProfile& profile_;
    double xi_low_, enough_, slope_ceiling_;
    std::array<std::pair<double, double>, spans> spans_;  // the depths between which each is taken
    std::array<double, spans> floors_{not_a_number, not_a_number, not_a_number, not_a_number, not_a_number};
};

// The ranges (indices into `ranges`, from the highest ξ down) where the direct path's X = R may
// lie: X of the direct leg grows with ξ at fixed ends (∂X/∂ξ = ∫ n²/Q³ dz > 0) and does not care
// where the interval ends, so the range is found by bisection over X at the ranges' bounds, each
// the direct leg alone. A root within 1e-9 of a bound counts for both ranges beside it. Empty
// when the direct path cannot reach R. A bound's X is integrated only where bounds on it do not
// decide already: from below distance_floor, from above the height between the ends times dx/dz at
// the smallest n between them (the first range's top).
std::pair<std::size_t, std::size_t> direct_ranges(const StratifiedProfile& profile,
                                                  const std::vector<RayParameterRange>& ranges, double z_source,
                                                  double z_receiver, double distance) {
    const std::size_t count = ranges.size();
    if (count == 0) return {1, 0};
    // X at bound b: the top of range b (b < count), the bottom of the last (b = count).
    std::vector<double> known(count + 1, not_a_number);
    auto x_at = [&](std::size_t b) {
        if (std::isnan(known[b])) {
            const RayLevel level = b < count ? RayLevel::anchored_at(profile, ranges[b].anchor_z, 0.0)
                                             : RayLevel::plain(ranges[count - 1].low);
            const double x = leg_integrals(profile, level, {z_source}, {z_receiver}, false, false).distance_m;
            known[b] = std::isfinite(x) ? x : infinity;
        }
        return known[b];
    };
    // The first bound in [0, count] where `beyond` holds (it holds from there on), by bisection.
    auto first_bound = [&](auto beyond) {
        std::size_t low = 0, high = count + 1;
        while (low < high) {
            const std::size_t middle = (low + high) / 2;
            if (beyond(middle)) high = middle;
            else low = middle + 1;
        }
        return low;
    };
    const double tolerance = 1e-9 * distance;
    const double n_least = ranges.front().high, height = std::abs(z_source - z_receiver);
    // Whether X at bound b lies below `level` (or at it too, with `or_at`).
    auto lies_below = [&](std::size_t b, double level, bool or_at) {
        if (std::isnan(known[b])) {
            const double xi = b < count ? ranges[b].high : ranges[count - 1].low;
            if (xi < n_least) {
                const double ceiling = height * xi / std::sqrt((n_least - xi) * (n_least + xi));
                if (ceiling < level) return true;
            }
            const double floor = distance_floor(profile, z_source, z_receiver, xi, level);
            if (floor > level) return false;
        }
        return or_at ? x_at(b) <= level : x_at(b) < level;
    };
    // Range i lies between bounds i and i + 1: it may hold the root when X(i) >= R and X(i + 1) <= R.
    const std::size_t below = first_bound([&](std::size_t b) { return lies_below(b, distance - tolerance, false); });
    const std::size_t at_or_below = first_bound([&](std::size_t b) { return lies_below(b, distance + tolerance, true); });
    if (below == 0 || at_or_below > count) return {1, 0};
    return {at_or_below == 0 ? 0 : at_or_below - 1, std::min(below - 1, count - 1)};
}

bool same_path(const StratifiedPath& a, const StratifiedPath& b) {
    return std::abs(a.ray_parameter - b.ray_parameter) <= 1e-12 * std::max(1.0, a.ray_parameter) &&
           std::abs(a.time_s - b.time_s) <= 1e-15 && std::abs(a.launch_zenith_rad - b.launch_zenith_rad) <= 1e-9 &&
           std::abs(a.arrival_zenith_rad - b.arrival_zenith_rad) <= 1e-9;
}

}  // namespace

const char* to_string(StratifiedPathKind kind) {
    switch (kind) {
        case StratifiedPathKind::direct: return "direct";
        case StratifiedPathKind::refracted: return "refracted";
        case StratifiedPathKind::reflected: return "reflected";
        case StratifiedPathKind::bottom: return "bottom";
        case StratifiedPathKind::refracted_below: return "refracted-below";
        case StratifiedPathKind::ducted: return "ducted";
    }
    return "direct";
}

const char* to_string(PathTurnKind kind) {
    switch (kind) {
        case PathTurnKind::turning: return "turning";
        case PathTurnKind::surface_reflection: return "surface-reflection";
        case PathTurnKind::bottom_reflection: return "bottom-reflection";
    }
    return "turning";
}

std::vector<RayParameterCut> ray_parameter_cuts(const StratifiedProfile& profile, double z_low, double z_high) {
    const auto [top, top_z] = profile.minimum_index(z_low, z_high);
    std::vector<RayParameterCut> cuts{{top, top_z}};
    const auto& minima = profile.stationary_z();  // from the surface down
    double lowest = top;
    auto consider = [&](double z) {
        const double n = profile.index(z);
        if (n < lowest && n > 0.0) {
            cuts.push_back({n, z});
            lowest = n;
        }
    };
    for (auto it = minima.rbegin(); it != minima.rend(); ++it)
        if (*it > z_high) consider(*it);
    consider(0.0);
    lowest = top;
    for (double z : minima)
        if (z < z_low) consider(z);
    consider(profile.bottom_z() ? *profile.bottom_z() : profile.floor_z());
    std::sort(cuts.begin(), cuts.end(),
              [](const RayParameterCut& a, const RayParameterCut& b) { return a.ray_parameter > b.ray_parameter; });
    return cuts;
}

std::string PathFamily::label() const {
    if (ends == 0) return "direct";
    std::string out;
    for (int j = 0; j < ends; ++j) out += is_upper_end(*this, j) ? 'U' : 'L';
    return out;
}

std::optional<FamilyLegs> family_legs(const StratifiedProfile& profile, const RayLevel& level, const PathFamily& family,
                                      double z_source, double z_receiver, bool with_time_and_length,
                                      const AttenuationProfile* attenuation) {
    const auto interval = profile.interval_around(level, z_source);
    if (!interval || !interval->contains(z_receiver)) return std::nullopt;
    FamilyLegs out;
    out.interval = *interval;
    const LegEndpoint source{z_source, LegEnd::fixed}, receiver{z_receiver, LegEnd::fixed};
    if (family.ends == 0) {
        out.total = leg_integrals(profile, level, source, receiver, with_time_and_length, true, attenuation);
        return out;
    }
    const bool meets_lower = family.ends >= 2 || !family.starts_upward;
    if (meets_lower && interval->lower_kind == LowerEndKind::unbounded) return std::nullopt;
    // The same pieces as the search's (LegPieces), so that X here is the X it found the root of.
    LegPieces legs(profile, level, *interval, z_source, z_receiver, with_time_and_length, attenuation);
    const LegIntegrals first_leg = legs.leg(family.starts_upward ? source_upper : source_lower);
    const LegIntegrals last_leg = legs.leg(is_upper_end(family, family.ends - 1) ? upper_receiver : lower_receiver);
    add(out.total, first_leg);
    add(out.total, last_leg);
    out.first_leg_m = first_leg.distance_m;
    if (family.ends >= 2) {
        const LegIntegrals full = legs.leg(traversal);
        add(out.total, full, family.ends - 1);
        out.traversal_m = full.distance_m;
    }
    return out;
}

std::vector<StratifiedPath> find_stratified_paths(const StratifiedProfile& profile, double z_source, double z_receiver,
                                                  double horizontal_distance_m, const StratifiedPathOptions& options) {
    const double floor = profile.floor_z();
    for (const auto& end : {std::pair{z_source, "source z"}, std::pair{z_receiver, "receiver z"}}) {
        const double z = end.first;
        const char* key = end.second;
        require(std::isfinite(z) && z <= 0.0 && z >= floor, key, [&] {
            return fmt::format("the {} = {} m must be in the ice, between {} m and the surface", key,
                               number_for_message(z), number_for_message(floor));
        });
    }
    require(std::isfinite(horizontal_distance_m) && horizontal_distance_m >= 0.0, "horizontal distance", [&] {
        return fmt::format("the horizontal distance must be a finite number of metres >= 0 (got {})",
                           number_for_message(horizontal_distance_m));
    });
    require(z_source != z_receiver || horizontal_distance_m > 0.0, "receiver z",
            [] { return std::string("the source and the receiver coincide"); });
    require(options.max_bounces >= 0 && options.max_bounces <= 64, "max_bounces",
            [&] { return fmt::format("max_bounces must be between 0 and 64 (got {})", options.max_bounces); });
    require(options.scan_samples >= 4 && options.scan_samples <= 10000, "scan_samples",
            [&] { return fmt::format("scan_samples must be between 4 and 10000 (got {})", options.scan_samples); });

    const double distance = horizontal_distance_m;
    std::vector<StratifiedPath> paths;
    // Equal depths where n′ = 0: the horizontal straight line is a ray (nothing bends it). Where n
    // is constant around the pair, and at a local extremum of n (the axis of a duct at a maximum).
    if (z_source == z_receiver) {
        double n, dn, d2n;
        profile.evaluate(profile.cell_at(z_source), z_source, n, dn, d2n);
        // Constant to the last bit over the pair (deep ice of a smooth profile, where dn/dz ~ 1e-25
        // and the refracted path differs from the straight line by nothing a double holds).
        const double flat = 1e-15 * n, span = std::max(distance, 1.0);
        const bool constant = std::abs(dn) * span <= flat && std::abs(d2n) * span * span <= flat &&
                              std::abs(profile.index_difference(z_source + 1e-3, z_source)) <= flat &&
                              std::abs(profile.index_difference(std::max(z_source - 1e-3, floor), z_source)) <= flat;
        const auto& runs = profile.runs();
        bool extremum = false;
        for (std::size_t i = 0; i + 1 < runs.size(); ++i)
            if (runs[i].z_bottom == z_source && runs[i].direction * runs[i + 1].direction < 0) extremum = true;
        if (constant || extremum) {
            StratifiedPath path;
            path.family = "direct";
            path.ray_parameter = n;
            path.time_s = n * distance / speed_of_light;
            path.length_m = distance;
            path.launch_zenith_rad = path.arrival_zenith_rad = pi / 2.0;
            path.distance_derivative = infinity;
            // The vertical spread of neighbouring rays, δz = δθ·J: from δz″ = (n″/n)·δz (the
            // paraxial ray equation about a horizontal ray), J = sin(kR)/k at a maximum of n
            // (k² = −n″/n; the rays refocus on the axis every π/k), sinh(kR)/k at a minimum, R
            // where n″ = 0, with n″ the mean of the two sides of a knot. derivative_cosines = J/n
            // (so that L_eff = n·√((R/ξ)·J/n) = √(R·J), R in the homogeneous limit). At a minimum
            // the neighbouring rays leave the line like e^(kR): where sinh(kR) exceeds a double
            // (kR above about 710), the line carries no field a double holds and is left out.
            double spread = distance;
            if (extremum) {
                double n_above, dn_above, d2n_above, n_below, dn_below, d2n_below;
                profile.evaluate(profile.cell_at(z_source, 1), z_source, n_above, dn_above, d2n_above);
                profile.evaluate(profile.cell_at(z_source, -1), z_source, n_below, dn_below, d2n_below);
                const double k2 = -0.5 * (d2n_above + d2n_below) / n, k = std::sqrt(std::abs(k2)), kr = k * distance;
                if (kr > 1e-8) spread = std::abs(k2 > 0.0 ? std::sin(kr) : std::sinh(kr)) / k;
            }
            path.derivative_cosines = spread / n;
            if (options.attenuation) path.attenuation_exponent = distance / options.attenuation->length_m(z_source);
            if (std::isfinite(spread)) paths.push_back(path);
        }
    }

    const double z_low = std::min(z_source, z_receiver), z_high = std::max(z_source, z_receiver);
    const std::vector<RayParameterRange> ranges = ray_parameter_ranges(profile, z_low, z_high);
    const auto [direct_first, direct_last] =
        z_source != z_receiver ? direct_ranges(profile, ranges, z_source, z_receiver, distance)
                               : std::pair<std::size_t, std::size_t>{1, 0};
    // How far every interval of the ranges met so far reaches: for ξ below the n of a cut beyond
    // the pair's ends, the interval holds the cut's depth (everything between has a larger n).
    double reach_up = z_high, reach_low = z_low;
    SearchBuffers buffers;
    std::vector<PathFamily> families;
    for (std::size_t r = 0; r < ranges.size(); ++r) {
        const RayParameterRange& range = ranges[r];
        reach_up = std::max(reach_up, range.anchor_z);
        reach_low = std::min(reach_low, range.anchor_z);
        // The families that may reach R here: the direct path in its own ranges only, the others
        // where the least distance they could cover in this range does not already exceed R.
        // The kinds of the ends in this range, from its middle; found when first needed.
        std::optional<std::optional<AccessibleInterval>> middle_interval;
        auto interval_of_range = [&]() -> const std::optional<AccessibleInterval>& {
            if (!middle_interval) {
                const RayLevel middle = RayLevel::anchored_at(profile, range.anchor_z, 0.25 * (range.high - range.low));
                middle_interval = profile.interval_around(middle, z_source);
            }
            return *middle_interval;
        };
        families.clear();
        if (r >= direct_first && r <= direct_last) families.push_back({z_receiver > z_source, 0});
        if (options.max_bounces > 0) {
            FamilyDistanceFloor floor(profile, z_source, z_receiver, reach_up, reach_low, range.low, range.high,
                                      distance * (1.0 + 1e-9));
            for (int ends = 1; ends <= options.max_bounces; ++ends)
                for (bool upward : {true, false}) {
                    // A family that needs a lower end where the range's intervals have none is not
                    // bounded from below at all (the floor of its lower legs would be meaningless).
                    const bool meets_lower = ends >= 2 || !upward;
                    if (meets_lower && (!interval_of_range() || interval_of_range()->lower_kind == LowerEndKind::unbounded))
                        continue;
                    if (floor.may_reach({upward, ends})) families.push_back({upward, ends});
                }
        }
        if (families.empty()) continue;
        const auto& interval = interval_of_range();
        if (!interval || !interval->contains(z_receiver)) continue;
        RangeLegs range_legs(profile, range, z_source, z_receiver, buffers.levels);
        for (const PathFamily& family : families) {
            if (family_is_degenerate(family, *interval, z_source, z_receiver, options.bottom_paths)) continue;
            FamilySearch search(range_legs, range, family, distance, options.scan_samples, buffers,
                                legs_have_fixed_ends(family, *interval));
            for (double v : search.roots()) {
                const RayLevel level = range_legs.level(v);
                const auto legs =
                    family_legs(profile, level, family, z_source, z_receiver, true, options.attenuation.get());
                if (!legs || !std::isfinite(legs->total.optical_path_m)) continue;
                // A jump of X across R (ξ not resolved by a double there), not a root. The bound
                // leaves room for rays that turn within micrometres of an end in deep ice, where the
                // turning depth itself is a double (R then misses by up to ~2e-6 relative; the
                // time is corrected to first order below, the length is not).
                if (std::abs(legs->total.distance_m - distance) > stratified_root_residual * (1.0 + distance)) continue;
                // The family's kinds of ends must be those of the range (a root on its edge may see the next).
                if (family_is_degenerate(family, legs->interval, z_source, z_receiver, options.bottom_paths)) continue;
                paths.push_back(make_path(profile, level, family, *legs, z_source, z_receiver, distance));
            }
        }
    }
    // The same ray found twice (the meeting point of two families, or the edge of two ranges):
    // keep the one with fewer ends.
    std::vector<StratifiedPath> kept;
    for (const StratifiedPath& path : paths) {
        auto twin = std::find_if(kept.begin(), kept.end(), [&](const StratifiedPath& k) { return same_path(k, path); });
        if (twin == kept.end()) kept.push_back(path);
        else if (path.turns.size() < twin->turns.size()) *twin = path;
    }
    std::sort(kept.begin(), kept.end(), [](const StratifiedPath& a, const StratifiedPath& b) { return a.time_s < b.time_s; });
    return kept;
}

}  // namespace firnray

