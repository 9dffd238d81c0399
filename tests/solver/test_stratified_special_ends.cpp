// Stratified legs and paths with an end exactly where the profile's formula is special: on every
// cell boundary of a table and on the inflection points inside its pieces (n″ = 0, where a leg
// used to be taken as "horizontal" and cut short), against an independent quadrature of the
// Snell integrals: Boost.Math tanh_sinh, with z = z_t ± u² at a turning point so that the
// integrand is smooth (the reference library of docs/validation.md).
#include <catch2/catch.hpp>

#include <algorithm>
#include <cmath>
#include <limits>
#include <memory>
#include <string>
#include <vector>

#include <boost/math/quadrature/tanh_sinh.hpp>

#include "core/constants.hpp"
#include "model/table_profile.hpp"
#include "solver/path_families.hpp"
#include "support/snell_integrals.hpp"

using namespace firnray;

namespace {

// A made-up log with a sharp lens at 22 m (a duct under it) and a softer layer at 24 m.
std::shared_ptr<TableProfile> lens_table() {
    return std::make_shared<TableProfile>(std::vector<double>{0, 10, 20, 22, 24, 40, 80, 150},
                                          std::vector<double>{1.35, 1.50, 1.60, 1.70, 1.58, 1.66, 1.74, 1.78});
}

struct Reference {
    double distance_m = 0.0, optical_path_m = 0.0;
};

class ReferenceLegs {
public:
    explicit ReferenceLegs(std::shared_ptr<TableProfile> table) : table_(std::move(table)) {
        for (double join : table_->joins_z()) knots_.push_back(join);
        std::reverse(knots_.begin(), knots_.end());  // lowest first, as test::snell_integrals wants
    }

    // Between two fixed ends.
    Reference fixed(double xi, double z_a, double z_b) const {
        if (z_a == z_b) return {};
        const double low = std::min(z_a, z_b), high = std::max(z_a, z_b);
        const auto r = test::snell_integrals(*table_, xi, low, high, test::plain_gap(*table_, xi), knots_, false);
        return {r.distance_m, r.optical_path_m};
    }

    // From a fixed end to a turning point z_t (n(z_t) = ξ): in u over the turning point's piece,
    // where n(z) − n(z_t) is the piece's cubic written about z_t (exact), then plainly.
    Reference to_turning(double xi, double z_fixed, double z_t) const {
        const double side = z_fixed > z_t ? 1.0 : -1.0;
        // The piece beyond z_t toward the fixed end, continued over a sliver of rounding when z_t
        // lies just beside a knot.
        double near_end = z_fixed;
        for (double knot : knots_)
            if ((knot - z_t) * side > 1e-6 && std::abs(knot - z_t) < std::abs(near_end - z_t)) near_end = knot;
        const std::size_t piece = piece_of(0.5 * (z_t + near_end));
        double n_t, g_t, k_t, n_1, g_1, k_1;
        table_->piece_index(piece, z_t, n_t, g_t, k_t);
        table_->piece_index(piece, z_t + side, n_1, g_1, k_1);
        const double third = (k_1 - k_t) * side;
        boost::math::quadrature::tanh_sinh<double> quad;
        auto terms = [&](double u, double& n, double& k) {
            const double d = side * u * u;
            double dn, d2n;
            table_->piece_index(piece, z_t + d, n, dn, d2n);
            const double over_u2 = side * (g_t + d * (0.5 * k_t + d * third / 6.0));  // (n − ξ)/u²
            k = std::sqrt(over_u2 * (n + xi));                                       // Q/u
        };
        const double u_end = std::sqrt(std::abs(near_end - z_t));
        Reference out;
        out.distance_m = quad.integrate([&](double u) { double n, k; terms(u, n, k); return 2.0 * xi / k; }, 0.0, u_end);
        out.optical_path_m = quad.integrate([&](double u) { double n, k; terms(u, n, k); return 2.0 * n * n / k; }, 0.0, u_end);
        const Reference rest = fixed(xi, near_end, z_fixed);
        out.distance_m += rest.distance_m;
        out.optical_path_m += rest.optical_path_m;
        return out;
    }

    // From z to an end of its interval (a turning point, or the surface or bottom as a fixed end).
    Reference to_end(double xi, double z, double z_end, bool turning) const {
        return turning ? to_turning(xi, z, z_end) : fixed(xi, z, z_end);
    }

private:
    std::size_t piece_of(double z) const {
        std::size_t piece = 0;
        for (double join : table_->joins_z())
            if (z < join) ++piece;
        return piece;
    }
    std::shared_ptr<TableProfile> table_;
    std::vector<double> knots_;
};

// Depths where a fixed end is special: every cell boundary, and n″ = 0 inside each cubic cell.
std::vector<double> special_depths(const StratifiedProfile& profile) {
    std::vector<double> depths;
    for (std::size_t c = 0; c < profile.cell_count(); ++c) {
        const double top = profile.cell_top(c), bottom = profile.cell_bottom(c);
        if (top < 0.0) depths.push_back(top);
        double n, dn, k_top, k_bottom;
        profile.evaluate(c, top, n, dn, k_top);
        profile.evaluate(c, bottom, n, dn, k_bottom);
        if (k_top * k_bottom < 0.0 && bottom > -200.0) depths.push_back(top + (bottom - top) * k_top / (k_top - k_bottom));
    }
    depths.push_back(-23.0);  // the middle of the piece from the lens down: n″ = 0 there exactly
    return depths;
}

}  // namespace

TEST_CASE("stratified legs with an end exactly on a cell boundary or an inflection point of a table agree with "
          "tanh_sinh quadrature of the Snell integrals (Boost.Math)",
          "[solver][stratified]") {
    const auto table = lens_table();
    const StratifiedProfile profile(table);
    const ReferenceLegs reference(table);
    int legs = 0;
    for (double z : special_depths(profile)) {
        std::vector<double> parameters{1.603717868};
        for (double below : {1e-3, 0.01, 0.03, 0.1}) parameters.push_back(profile.index(z) - below);
        for (double xi : parameters) {
            const auto interval = profile.interval_around(xi, z);
            if (!interval) continue;
            const RayLevel level = RayLevel::plain(xi);
            INFO("ξ " << xi << ", fixed end at z = " << z);
            auto check = [&](const LegIntegrals& ours, const Reference& ref) {
                CHECK(ours.distance_m == Approx(ref.distance_m).epsilon(1e-10).margin(1e-12));
                CHECK(ours.optical_path_m == Approx(ref.optical_path_m).epsilon(1e-10).margin(1e-12));
                ++legs;
            };
            if (interval->upper_kind == UpperEndKind::turning) {
                INFO("to the turning point above at " << interval->upper_z);
                check(leg_integrals(profile, level, {z}, {interval->upper_z, LegEnd::turning}),
                      reference.to_turning(xi, z, interval->upper_z));
            }
            if (interval->lower_kind == LowerEndKind::turning) {
                INFO("to the turning point below at " << interval->lower_z);
                check(leg_integrals(profile, level, {z}, {interval->lower_z, LegEnd::turning}),
                      reference.to_turning(xi, z, interval->lower_z));
            }
            // To every other special depth of the same interval (both ends special).
            for (double other : special_depths(profile)) {
                if (other == z || !interval->contains(other) || other > interval->upper_z - 1e-6 ||
                    other < interval->lower_z + 1e-6)
                    continue;
                INFO("to the fixed end at " << other);
                check(leg_integrals(profile, level, {z}, {other}), reference.fixed(xi, z, other));
            }
        }
    }
    CHECK(legs > 100);
}

TEST_CASE("stratified paths between 21 m and 23 m on a table with a lens agree with tanh_sinh quadrature of the "
          "Snell integrals (Boost.Math) and include the ducted ones",
          "[solver][stratified]") {
    const auto table = lens_table();
    const StratifiedProfile profile(table);
    const ReferenceLegs reference(table);
    StratifiedPathOptions options;
    options.max_bounces = 4;
    int ducted = 0;
    for (double distance : {5.0, 20.0, 40.0, 80.0}) {
        const auto paths = find_stratified_paths(profile, -21.0, -23.0, distance, options);
        // Just beside −23 m nothing special happens: the same paths, times to far below 1 ps.
        const auto beside = find_stratified_paths(profile, -21.0, -23.0 + 1e-7, distance, options);
        INFO("horizontal distance " << distance << " m");
        REQUIRE(paths.size() == beside.size());
        for (std::size_t i = 0; i < paths.size(); ++i) {
            const StratifiedPath& path = paths[i];
            CHECK(path.family == beside[i].family);
            CHECK(std::abs(path.time_s - beside[i].time_s) <= 2e-7 * 1.8 / speed_of_light);
            if (path.kind == StratifiedPathKind::ducted) ++ducted;
            // The path rebuilt leg by leg from the reference: source, each end in turn, receiver.
            const double xi = path.ray_parameter;
            const auto interval = profile.interval_around(xi, -21.0);
            REQUIRE(interval);
            const bool upper_turning = interval->upper_kind == UpperEndKind::turning;
            const bool lower_turning = interval->lower_kind == LowerEndKind::turning;
            Reference total;
            auto add = [&](const Reference& r) {
                total.distance_m += r.distance_m;
                total.optical_path_m += r.optical_path_m;
            };
            if (path.family == "direct") {
                add(reference.fixed(xi, -21.0, -23.0));
            } else {
                const double middle = 0.5 * (interval->upper_z + interval->lower_z);
                for (std::size_t e = 0; e < path.family.size(); ++e) {
                    const bool up = path.family[e] == 'U';
                    const double z_end = up ? interval->upper_z : interval->lower_z;
                    const bool turning = up ? upper_turning : lower_turning;
                    if (e == 0) add(reference.to_end(xi, -21.0, z_end, turning));
                    else add(reference.to_end(xi, middle, z_end, turning));
                    if (e + 1 == path.family.size()) add(reference.to_end(xi, -23.0, z_end, turning));
                    else add(reference.to_end(xi, middle, z_end, turning));
                }
            }
            INFO("path " << path.family << " ξ " << xi);
            // A path grazing the lens's minimum of n (ξ a hair above it) has its ξ closer to n there
            // than a double can say: the reference, given ξ as a double, may miss by what one
            // rounding of ξ moves X (∂X/∂ξ·δξ) and c·T (ξ·∂X/∂ξ·δξ, since d(cT)/dξ = ξ dX/dξ).
            const double rounding = 4.0 * std::numeric_limits<double>::epsilon() * xi * std::abs(path.distance_derivative);
            CHECK(std::abs(total.distance_m - distance) <= 1e-8 * distance + rounding);
            CHECK(std::abs(path.time_s * speed_of_light - total.optical_path_m) <=
                  1e-11 * total.optical_path_m + 2.0 * xi * rounding);
        }
    }
    CHECK(ducted > 0);
}
