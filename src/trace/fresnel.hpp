// Fresnel amplitude coefficients at a plane interface n1 -> n2 (Hecht, Optics; Born & Wolf).
// Conventions: r_p = (n2 cos θi − n1 cos θt) / (n2 cos θi + n1 cos θt), so r_s and r_p are
// equal at normal incidence up to sign (r_s = −r_p there). Beyond the critical angle cos θt is
// taken as +i·sqrt(sin²θt − 1) (exp(−iωt) time dependence, evanescent field decaying away from
// the interface), which makes |r| = 1 with a phase that differs between s and p.
#pragma once

#include <complex>

namespace firnray {

struct FresnelCoefficients {
    std::complex<double> r_s, r_p;  // reflected amplitude
    std::complex<double> t_s, t_p;  // transmitted amplitude (zero beyond the critical angle)
    bool total_reflection = false;  // sin θi > n2 / n1
    double transmitted_zenith_cos = 0.0;  // |cos θt| for a real transmitted wave, 0 otherwise

    // Power fractions: R = |r|², T = (n2 cos θt / n1 cos θi)·|t|²; R + T = 1 for each polarisation.
    double reflectance_s() const { return std::norm(r_s); }
    double reflectance_p() const { return std::norm(r_p); }
    double transmittance_s(double n1, double n2, double cos_incidence) const;
    double transmittance_p(double n1, double n2, double cos_incidence) const;
};

// cos_incidence = |cos θi| in [0, 1], the cosine of the angle from the interface normal.
FresnelCoefficients fresnel(double n1, double n2, double cos_incidence);

// Brewster's angle (from the normal) for n1 -> n2: tan θB = n2 / n1.
double brewster_angle(double n1, double n2);
// Critical angle (from the normal) for n1 -> n2, n1 > n2: sin θc = n2 / n1. NaN if n1 <= n2.
double critical_angle(double n1, double n2);

}  // namespace firnray
