#include <cmath>

#include <catch2/catch.hpp>

#include "model/density.hpp"

using namespace firnray;

TEST_CASE("Kovacs, Gow & Morey (1995): solid ice of 0.917 g/cm3 has n = 1.775", "[model][density]") {
    // n = 1 + 0.845 rho (Cold Reg. Sci. Technol. 23, from memory): 1 + 0.845 * 0.917 = 1.774865.
    CHECK(kovacs_index(0.917) == Approx(1.775).margin(5e-4));
    CHECK(kovacs_index(0.0) == 1.0);
    CHECK(kovacs_index(density_kg_m3_to_g_cm3(400.0)) == Approx(1.338));
}

TEST_CASE("Looyenga (1965) mixing rule: epsilon^(1/3) is linear in the ice volume fraction", "[model][density]") {
    // The published form: eps^(1/3) = v eps_ice^(1/3) + (1 - v), v = rho / rho_ice; n = sqrt(eps).
    for (double rho : {0.0, 0.1, 0.35, 0.55, 0.83, 0.917}) {
        const double v = rho / 0.917;
        const double eps_third = v * std::cbrt(3.15) + (1.0 - v);
        const double eps = eps_third * eps_third * eps_third;
        CHECK(looyenga_index(rho) == Approx(std::sqrt(eps)).epsilon(1e-14));
    }
    CHECK(looyenga_index(0.0) == 1.0);
    CHECK(looyenga_index(0.917) == Approx(std::sqrt(3.15)).epsilon(1e-14));  // pure ice
    // The two published relations differ by at most about 0.02 over the firn density range.
    for (double rho = 0.3; rho <= 0.917; rho += 0.05) CHECK(std::abs(looyenga_index(rho) - kovacs_index(rho)) < 0.02);
}

TEST_CASE("density rule and unit names", "[model][density]") {
    CHECK(density_rule_from_name("kovacs") == DensityRule::kovacs);
    CHECK(density_rule_from_name("looyenga") == DensityRule::looyenga);
    CHECK_FALSE(density_rule_from_name("Kovacs").has_value());
    CHECK(density_unit_from_name("kg/m3") == DensityUnit::kg_m3);
    CHECK(to_g_cm3(917.0, DensityUnit::kg_m3) == Approx(0.917));
    CHECK(index_from_density(0.5, DensityRule::looyenga) == looyenga_index(0.5));
}
