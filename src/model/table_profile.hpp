// n(z) from measured points (a borehole or core log, or densities converted to n), interpolated
// so that dn/dz is continuous everywhere, as the ray equations need: by default with a monotone
// cubic (Fritsch & Carlson 1980), which never overshoots the data, so a log whose n grows with
// depth gives a profile that grows with depth too (what the path finders assume); or with a C²
// cubic spline, which is smoother but may overshoot between uneven points.
// A measured log is taken as it is (every layer, lens and crust, ducts included) unless a
// smoothing length is given: the values are then first averaged by a Gaussian of that standard
// deviation (model/table_smoothing.hpp, docs/physics.md §1.4). Noisy logs whose detail is not
// wanted at all should be fitted (model/fit.hpp) rather than interpolated through every wiggle.
#pragma once

#include <optional>
#include <string>
#include <vector>

#include "model/index_profile.hpp"
#include "model/interpolation.hpp"

namespace firnray {

enum class TableInterpolation {
    monotone,  // C¹ Hermite cubic with Fritsch–Carlson slopes, zero slope at the deepest point
    spline,    // C² cubic spline, natural at the shallowest point, zero slope at the deepest
};

// Interpolation in depth d = -z between the shallowest point d_0 and the deepest d_last:
//  - inside the table: the chosen cubic (see TableInterpolation), with zero slope at d_last, the
//    deepest point being taken as solid ice where n no longer changes;
//  - below d_last: n held at the deepest value (dn/dz = 0, so dn/dz stays continuous);
//  - above d_0 (when the table does not start at the surface): the straight line with the
//    spline's end value and slope, up to z = 0 (C² there too, since the curvature is zero).
// The construction checks that n >= 1 everywhere, including the extension up to the surface.
class TableProfile final : public IndexProfile {
public:
    static constexpr std::size_t minimum_points = 4;

    // depth_m strictly increasing and >= 0, n finite and >= 1, at least minimum_points points.
    // Throws ModelInputError (key "depth_m" or "n") naming the offending point (counting from 1).
    // smoothing_m: the σ (m) of the Gaussian average applied to n before interpolating; none: the
    // points are interpolated as they are. Throws ModelInputError (key "smoothing_m") unless it is
    // finite and positive.
    TableProfile(std::vector<double> depth_m, std::vector<double> n,
                 TableInterpolation interpolation = TableInterpolation::monotone,
                 std::optional<double> smoothing_m = std::nullopt);

    double index(double z) const override;
    double gradient(double z) const override;
    void index_and_gradient(double z, double& n, double& dn_dz) const override;
    // The knots (z = −depth): the spline's third derivative jumps there.
    std::span<const double> joins_z() const override { return joins_z_; }
    void piece_index(std::size_t piece, double z, double& n, double& dn_dz, double& d2n_dz2) const override;
    std::string kind() const override { return "table"; }
    std::string describe() const override;

    const std::vector<double>& depth_m() const { return spline_.x(); }
    // The values interpolated: the tabulated ones, smoothed when a smoothing length is given.
    const std::vector<double>& n_values() const { return spline_.y(); }
    // The values as tabulated (what a model file holds); equal to n_values() without smoothing.
    const std::vector<double>& tabulated_n() const { return tabulated_n_; }
    std::optional<double> smoothing_m() const { return smoothing_m_; }
    TableInterpolation interpolation() const { return interpolation_; }

private:
    std::vector<double> tabulated_n_;
    std::optional<double> smoothing_m_;
    CubicSpline spline_;  // n against depth (C² spline or C¹ monotone Hermite, same pieces)
    TableInterpolation interpolation_;
    std::vector<double> joins_z_;
};

}  // namespace firnray
