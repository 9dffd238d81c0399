#include "trace/fresnel.hpp"

#include <algorithm>
#include <cmath>
#include <limits>

namespace firnray {

FresnelCoefficients fresnel(double n1, double n2, double cos_incidence) {
    using cd = std::complex<double>;
    const double cos_i = std::clamp(std::abs(cos_incidence), 0.0, 1.0);
    const double sin_i2 = 1.0 - cos_i * cos_i;
    const double sin_t2 = (n1 / n2) * (n1 / n2) * sin_i2;

    FresnelCoefficients out;
    cd cos_t;
    if (sin_t2 <= 1.0) {
        cos_t = cd(std::sqrt(1.0 - sin_t2), 0.0);
        out.transmitted_zenith_cos = cos_t.real();
    } else {
        cos_t = cd(0.0, std::sqrt(sin_t2 - 1.0));
        out.total_reflection = true;
    }
    const cd a = n1 * cos_i, b = n2 * cos_t;   // s terms
    const cd c = n2 * cos_i, d = n1 * cos_t;   // p terms
    out.r_s = (a - b) / (a + b);
    out.r_p = (c - d) / (c + d);
    if (out.total_reflection) {
        out.t_s = out.t_p = 0.0;
    } else {
        out.t_s = 2.0 * a / (a + b);
        out.t_p = 2.0 * a / (c + d);
    }
    return out;
}

static double transmittance(double n1, double n2, double cos_i, double cos_t, std::complex<double> t) {
    if (cos_i <= 0.0) return 0.0;
    return (n2 * cos_t) / (n1 * cos_i) * std::norm(t);
}

double FresnelCoefficients::transmittance_s(double n1, double n2, double cos_incidence) const {
    return transmittance(n1, n2, std::abs(cos_incidence), transmitted_zenith_cos, t_s);
}
double FresnelCoefficients::transmittance_p(double n1, double n2, double cos_incidence) const {
    return transmittance(n1, n2, std::abs(cos_incidence), transmitted_zenith_cos, t_p);
}

double brewster_angle(double n1, double n2) { return std::atan2(n2, n1); }

double critical_angle(double n1, double n2) {
    if (n1 <= n2) return std::numeric_limits<double>::quiet_NaN();
    return std::asin(n2 / n1);
}

}  // namespace firnray
