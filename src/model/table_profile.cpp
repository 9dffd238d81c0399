#include "model/table_profile.hpp"

#include <cmath>

#include <fmt/format.h>

#include "core/errors.hpp"
#include "model/table_checks.hpp"
#include "model/table_smoothing.hpp"

namespace firnray {

namespace {

void require_index_values(const std::vector<double>& depth, const std::vector<double>& n) {
    require_table_depths(depth, n.size(), TableProfile::minimum_points, "an index table", "n");
    for (std::size_t i = 0; i < depth.size(); ++i) {
        if (!std::isfinite(n[i]))
            throw ModelInputError(fmt::format("point {}: n is not a finite number", i + 1), {"", 0, "n"});
        if (n[i] < 1.0)
            throw ModelInputError(fmt::format("point {}: n = {} is below 1 (no medium is faster than vacuum)", i + 1, n[i]),
                                  {"", 0, "n"});
    }
}

// The values the cubic goes through: the tabulated ones, or their Gaussian average.
std::vector<double> interpolated_values(const std::vector<double>& depth, const std::vector<double>& n,
                                        std::optional<double> smoothing_m) {
    require_index_values(depth, n);
    if (!smoothing_m) return n;
    if (!(std::isfinite(*smoothing_m) && *smoothing_m > 0.0))
        throw ModelInputError(fmt::format("the smoothing length {} m is not a positive length", *smoothing_m),
                              {"", 0, "smoothing_m"});
    std::vector<double> smoothed = gaussian_smoothed(depth, n, *smoothing_m);
    for (std::size_t i = 0; i < smoothed.size(); ++i)
        if (!(smoothed[i] >= 1.0))
            throw ModelInputError(fmt::format("smoothed over {} m, the table falls to n = {:.6g} at point {} ({} m), "
                                              "below 1; use a shorter smoothing length",
                                              *smoothing_m, smoothed[i], i + 1, depth[i]),
                                  {"", 0, "smoothing_m"});
    return smoothed;
}

CubicSpline build_spline(std::vector<double> depth, std::vector<double> n, TableInterpolation interpolation) {
    if (interpolation == TableInterpolation::spline)
        return CubicSpline(std::move(depth), std::move(n), SplineEnd::natural(), SplineEnd::clamped(0.0));
    std::vector<double> slopes = fritsch_carlson_slopes(depth, n);
    slopes.back() = 0.0;  // flat at the deepest point, like the spline; still monotone (Fritsch & Carlson)
    return CubicSpline::hermite(std::move(depth), std::move(n), slopes);
}

}  // namespace

TableProfile::TableProfile(std::vector<double> depth_m, std::vector<double> n, TableInterpolation interpolation,
                           std::optional<double> smoothing_m)
    : tabulated_n_(n), smoothing_m_(smoothing_m),
      spline_(build_spline(depth_m, interpolated_values(depth_m, n, smoothing_m), interpolation)),
      interpolation_(interpolation) {
    for (const double d : spline_.x()) joins_z_.push_back(-d);
    const double lowest = spline_.minimum_on_knots();
    if (lowest < 1.0)
        throw ModelInputError(fmt::format("the spline through the table dips to n = {:.6g}, below 1; the data swing "
                                          "too much between points (smooth or fit them)",
                                          lowest),
                              {"", 0, "n"});
    const double at_surface = spline_.value(0.0);
    if (at_surface < 1.0)
        throw ModelInputError(fmt::format("continued up from the shallowest point ({} m) with its slope, the table "
                                          "reaches n = {:.6g} < 1 at the surface; add a point nearer the surface",
                                          spline_.x().front(), at_surface),
                              {"", 0, "n"});
}

double TableProfile::index(double z) const { return spline_.value(z < 0.0 ? -z : 0.0); }

double TableProfile::gradient(double z) const {
    double n, slope;
    spline_.value_and_slope(z < 0.0 ? -z : 0.0, n, slope);
    return -slope;
}

void TableProfile::index_and_gradient(double z, double& n, double& dn_dz) const {
    double slope;
    spline_.value_and_slope(z < 0.0 ? -z : 0.0, n, slope);
    dn_dz = -slope;
}

void TableProfile::piece_index(std::size_t piece, double z, double& n, double& dn_dz, double& d2n_dz2) const {
    // Pieces in z order are the spline's pieces in depth order; d/dz = −d/d(depth).
    double slope;
    spline_.piece_value(piece, -z, n, slope, d2n_dz2);
    dn_dz = -slope;
}

std::string TableProfile::describe() const {
    const auto& d = spline_.x();
    const auto& n = spline_.y();
    const std::string smoothing =
        smoothing_m_ ? fmt::format(", smoothed by a Gaussian of sigma {} m", *smoothing_m_) : std::string();
    return fmt::format("table: {} points from {} m (n {:.6g}) to {} m (n {:.6g}), {}{}", d.size(), d.front(), n.front(),
                       d.back(), n.back(),
                       interpolation_ == TableInterpolation::spline ? "cubic spline" : "monotone cubic", smoothing);
}

}  // namespace firnray
