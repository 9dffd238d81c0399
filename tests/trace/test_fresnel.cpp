// Fresnel identities (Hecht, Optics, ch. 4; Born & Wolf, Principles of Optics, §1.5).
#include <catch2/catch.hpp>

#include <cmath>

#include "core/constants.hpp"
#include "trace/fresnel.hpp"

using namespace firnray;

TEST_CASE("Fresnel: R + T = 1 for s and p below the critical angle (Hecht, Optics)", "[fresnel]") {
    for (const auto& [n1, n2] : {std::pair{1.78, 1.0}, std::pair{1.0, 1.35}, std::pair{1.35, 1.78}}) {
        for (double deg = 0.0; deg < 90.0; deg += 2.5) {
            const double cos_i = std::cos(deg_to_rad(deg));
            const auto f = fresnel(n1, n2, cos_i);
            if (f.total_reflection) continue;
            CHECK(f.reflectance_s() + f.transmittance_s(n1, n2, cos_i) == Approx(1.0).margin(1e-12));
            CHECK(f.reflectance_p() + f.transmittance_p(n1, n2, cos_i) == Approx(1.0).margin(1e-12));
        }
    }
}

TEST_CASE("Fresnel: r_p vanishes at Brewster's angle tan θB = n2/n1 (Hecht, Optics)", "[fresnel]") {
    for (const auto& [n1, n2] : {std::pair{1.78, 1.0}, std::pair{1.0, 1.78}}) {
        const double theta_b = brewster_angle(n1, n2);
        const auto f = fresnel(n1, n2, std::cos(theta_b));
        CHECK(std::abs(f.r_p) < 1e-12);
        CHECK(std::abs(f.r_s) > 0.1);
    }
}

TEST_CASE("Fresnel: |r| = 1 beyond the critical angle sin θc = n2/n1, with s and p phases that differ (Hecht, Optics)",
          "[fresnel]") {
    const double n1 = 1.35, n2 = 1.0;
    const double theta_c = critical_angle(n1, n2);
    CHECK(std::sin(theta_c) == Approx(n2 / n1));
    CHECK_FALSE(fresnel(n1, n2, std::cos(theta_c - 1e-6)).total_reflection);
    for (double extra = 1e-4; extra < 0.5; extra += 0.05) {
        const auto f = fresnel(n1, n2, std::cos(theta_c + extra));
        CHECK(f.total_reflection);
        CHECK(std::abs(f.r_s) == Approx(1.0).margin(1e-12));
        CHECK(std::abs(f.r_p) == Approx(1.0).margin(1e-12));
        CHECK(std::abs(std::arg(f.r_s) - std::arg(f.r_p)) > 1e-6);
    }
}

TEST_CASE("Fresnel: normal incidence r_s = (n1 - n2)/(n1 + n2) (Hecht, Optics)", "[fresnel]") {
    const auto f = fresnel(1.78, 1.0, 1.0);
    const double expected = (1.78 - 1.0) / (1.78 + 1.0);
    CHECK(f.r_s.real() == Approx(expected));
    CHECK(f.r_p.real() == Approx(-expected));
}
