// Refractive-index profiles n(z) of the ice (z <= 0, z up, surface at z = 0).
// Every profile gives n and a continuous dn/dz; the ray integrator needs both.
// Above the surface the model's air index applies (see FirnModel), not the profile.
#pragma once

#include <cstddef>
#include <memory>
#include <span>
#include <string>
#include <vector>

namespace firnray {

class IndexProfile {
public:
    virtual ~IndexProfile() = default;

    // n(z) for z <= 0. For z > 0 implementations return the surface value (the tracer never asks).
    virtual double index(double z) const = 0;
    // dn/dz for z <= 0 (positive dn/dz means n grows upward).
    virtual double gradient(double z) const = 0;
    // Both at once; override when it is cheaper than two calls.
    virtual void index_and_gradient(double z, double& n, double& dn_dz) const {
        n = index(z);
        dn_dz = gradient(z);
    }
    // Piecewise-smooth profiles (a table is a cubic per interval) name the z where their pieces
    // meet, highest first, so that an integrator can stop there rather than step across a jump in
    // a derivative of n; smooth profiles (the default) have none. Piece 0 lies above the first
    // join, piece k between joins k−1 and k, piece joins_z().size() below the last.
    virtual std::span<const double> joins_z() const { return {}; }
    // n, dn/dz and d²n/dz² of one piece, continued as the same smooth function beyond its ends.
    // The default (one piece) is the profile, with d²n/dz² by a central difference of dn/dz
    // (one-sided within 1 mm of the surface).
    virtual void piece_index(std::size_t piece, double z, double& n, double& dn_dz, double& d2n_dz2) const;

    // "constant", "exponential", "layered", "table".
    virtual std::string kind() const = 0;
    // One line for people, e.g. "exponential: n_deep 1.78, n_surface 1.35, scale depth 37 m".
    virtual std::string describe() const = 0;

    double surface_index() const { return index(0.0); }
};

class ConstantProfile final : public IndexProfile {
public:
    explicit ConstantProfile(double n);  // throws ModelInputError if n < 1 or not finite
    double index(double) const override { return n_; }
    double gradient(double) const override { return 0.0; }
    std::string kind() const override { return "constant"; }
    std::string describe() const override;
    double value() const { return n_; }

private:
    double n_;
};

// n(z) = n_deep - (n_deep - n_surface) * exp(z / scale_depth), z <= 0 (docs/physics.md §1).
class ExponentialProfile final : public IndexProfile {
public:
    // throws ModelInputError on n < 1, n_surface > n_deep, scale_depth <= 0, or non-finite values
    ExponentialProfile(double n_deep, double n_surface, double scale_depth_m);
    double index(double z) const override;
    double gradient(double z) const override;
    void index_and_gradient(double z, double& n, double& dn_dz) const override;
    std::string kind() const override { return "exponential"; }
    std::string describe() const override;

    double n_deep() const { return n_deep_; }
    double n_surface() const { return n_surface_; }
    double scale_depth_m() const { return scale_depth_m_; }

private:
    double n_deep_, n_surface_, scale_depth_m_;
};

}  // namespace firnray
