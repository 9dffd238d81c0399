// The ray equations of docs/physics.md §2.1 as a Boost.Odeint system functor, in the parameter σ
// with ds = n dσ: dr/dσ = p, dp/dσ = n ∇n, d(cT)/dσ = n², ds/dσ = n, for n = n(z) in 2-D (x, z).
// Optionally carries the attenuation exponent ∫ ds / L_α and the variation of the ray with ξ.
// Words used here and by the solvers: a piecewise-smooth profile (a table, a layered profile) has
// joins, the heights where a derivative of n jumps (IndexProfile::joins_z); a piece is the part
// of the profile between two joins, which has a formula of its own that can be continued beyond
// them (IndexProfile::piece_index).
#pragma once

#include <array>
#include <cstddef>

#include "model/firn_model.hpp"
#include "model/index_profile.hpp"

namespace firnray {

// Positions in the state arrays. Every component is in metres (or dimensionless), so that one
// pair of relative/absolute tolerances fits them all: time is carried as the optical path c·T.
namespace ray_state {
inline constexpr std::size_t x = 0;             // horizontal position (m)
inline constexpr std::size_t z = 1;             // height, up positive (m)
inline constexpr std::size_t px = 2;            // p = n · (unit direction); p_x = ξ is invariant
inline constexpr std::size_t pz = 3;
inline constexpr std::size_t optical_path = 4;  // c·T (m)
inline constexpr std::size_t length = 5;        // arc length s (m)
inline constexpr std::size_t attenuation = 6;   // ∫ ds / L_α (0 without attenuation)
inline constexpr std::size_t size = 7;
// Variational part: derivatives of (x, z, p_z) with respect to ξ at fixed σ (∂p_x/∂ξ = 1).
inline constexpr std::size_t dx_dxi = 7;
inline constexpr std::size_t dz_dxi = 8;
inline constexpr std::size_t dpz_dxi = 9;
inline constexpr std::size_t size_with_variation = 10;
}  // namespace ray_state

using RayState = std::array<double, ray_state::size>;
using RayStateWithVariation = std::array<double, ray_state::size_with_variation>;

// The system functor. Cheap to copy (holds pointers); the profile and attenuation must outlive it.
class RayEquations {
public:
    // attenuation may be null (no attenuation: the exponent stays 0).
    RayEquations(const IndexProfile& profile, const AttenuationProfile* attenuation)
        : profile_(&profile), attenuation_(attenuation) {
        profile.index_and_gradient(0.0, n_surface_, gradient_surface_);
    }

    // Heights in the state are measured from z_origin (0 unless set). A solver that integrates
    // far below the surface moves the origin along with the ray, so that dopri5's relative error
    // control, which scales with the size of each component, applies to the height gained in a
    // step rather than to the depth (1e-10 of 500 m is 5e-8 m per step, which a nearly
    // horizontal ray turns into µm of distance).
    void set_z_origin(double z_origin) { z_origin_ = z_origin; }
    double z_origin() const { return z_origin_; }

    // Evaluate one piece of a piecewise-smooth profile (IndexProfile::joins_z), continued beyond
    // its ends, instead of the profile itself: an integration that stops at the joins then never
    // steps across a kink. The air-side continuation below is not used then.
    // whole_profile goes back to the profile itself.
    static constexpr std::size_t whole_profile = static_cast<std::size_t>(-1);
    void use_piece(std::size_t piece) { piece_ = piece; }

    // n and dn/dz at z (the absolute height, not from the origin). Above the surface (where only
    // the trial stages of a step that crosses z = 0 ever look) the profile is continued linearly,
    // so the right-hand side stays continuous with a continuous first derivative in n across the
    // step and the step controller is not misled by a kink.
    void index_and_gradient(double z, double& n, double& dn_dz) const {
        if (piece_ != whole_profile) {
            double curvature;
            profile_->piece_index(piece_, z, n, dn_dz, curvature);
            return;
        }
        if (z > 0.0) {
            n = n_surface_ + gradient_surface_ * z;
            dn_dz = gradient_surface_;
        } else {
            profile_->index_and_gradient(z, n, dn_dz);
        }
    }

    // d²n/dz² by a central difference of the gradient (the profile interface has no second
    // derivative). Only the variational equations need it; the stencil stays inside the ice.
    double curvature(double z) const {
        constexpr double h = 1e-3;  // m: truncation ~h²·n''''/6 and rounding ~1e-16·n'/h are both tiny
        const double centre = z > -h ? -h : z;
        double n_up, g_up, n_down, g_down;
        profile_->index_and_gradient(centre + h, n_up, g_up);
        profile_->index_and_gradient(centre - h, n_down, g_down);
        return (g_up - g_down) / (2.0 * h);
    }

    template <std::size_t N>
    void operator()(const std::array<double, N>& y, std::array<double, N>& dy, double /*sigma*/) const {
        static_assert(N == ray_state::size || N == ray_state::size_with_variation);
        using namespace ray_state;
        const double height = z_origin_ + y[z];
        double n, dn_dz, piece_curvature = 0.0;
        if (piece_ != whole_profile) profile_->piece_index(piece_, height, n, dn_dz, piece_curvature);
        else index_and_gradient(height, n, dn_dz);
        dy[x] = y[px];
        dy[z] = y[pz];
        dy[px] = 0.0;
        dy[pz] = n * dn_dz;
        dy[optical_path] = n * n;
        dy[length] = n;
        dy[attenuation] = attenuation_ ? n / attenuation_->length_m(height > 0.0 ? 0.0 : height) : 0.0;
        if constexpr (N == size_with_variation) {
            // Linearised equations: d(δx)/dσ = δp_x = 1, d(δz)/dσ = δp_z,
            // d(δp_z)/dσ = d(n n')/dz · δz = (n'² + n n'') δz.
            const double second = piece_ != whole_profile ? piece_curvature : height > 0.0 ? 0.0 : curvature(height);
            dy[dx_dxi] = 1.0;
            dy[dz_dxi] = y[dpz_dxi];
            dy[dpz_dxi] = (dn_dz * dn_dz + n * second) * y[dz_dxi];
        }
    }

private:
    const IndexProfile* profile_;
    const AttenuationProfile* attenuation_;
    double n_surface_ = 1.0, gradient_surface_ = 0.0;
    double z_origin_ = 0.0;
    std::size_t piece_ = whole_profile;
};

}  // namespace firnray
