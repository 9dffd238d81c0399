// Converting firn density to radio-frequency refractive index with published relations
// (docs/physics.md §1). Densities here are in g/cm³; convert kg/m³ with density_kg_m3_to_g_cm3.
#pragma once

#include <cmath>
#include <optional>
#include <string_view>

namespace firnray {

inline constexpr double ice_density_g_cm3 = 0.917;  // solid ice (from memory)
inline constexpr double ice_permittivity = 3.15;    // relative permittivity of ice at radio frequencies (from memory)

constexpr double density_kg_m3_to_g_cm3(double density_kg_m3) { return density_kg_m3 / 1000.0; }

// Kovacs, Gow & Morey (1995), Cold Reg. Sci. Technol. 23: n = 1 + 0.845 ρ, ρ in g/cm³ (from memory).
constexpr double kovacs_index(double density_g_cm3) { return 1.0 + 0.845 * density_g_cm3; }

// Looyenga (1965) mixing rule for ice and air, ε^{1/3} = v ε_ice^{1/3} + (1 - v) with the ice volume
// fraction v = ρ / ρ_ice, i.e. n = [1 + (ρ/ρ_ice)(n_ice^{2/3} - 1)]^{3/2} (ε_ice, ρ_ice from memory).
inline double looyenga_index(double density_g_cm3) {
    const double n_ice_two_thirds = std::cbrt(ice_permittivity);  // n_ice^{2/3} = ε_ice^{1/3}
    const double base = 1.0 + (density_g_cm3 / ice_density_g_cm3) * (n_ice_two_thirds - 1.0);
    return base * std::sqrt(base);
}

enum class DensityRule { kovacs, looyenga };

inline double index_from_density(double density_g_cm3, DensityRule rule) {
    return rule == DensityRule::kovacs ? kovacs_index(density_g_cm3) : looyenga_index(density_g_cm3);
}

// "kovacs" or "looyenga"; empty for anything else.
inline std::optional<DensityRule> density_rule_from_name(std::string_view name) {
    if (name == "kovacs") return DensityRule::kovacs;
    if (name == "looyenga") return DensityRule::looyenga;
    return std::nullopt;
}

constexpr std::string_view density_rule_name(DensityRule rule) {
    return rule == DensityRule::kovacs ? "kovacs" : "looyenga";
}

// Densities outside this range are not snow, firn or ice; such a value is almost always a unit
// mistake (g/cm³ read as kg/m³ or the reverse), so readers reject it with that hint.
inline constexpr double lowest_plausible_density_g_cm3 = 0.01;
inline constexpr double highest_plausible_density_g_cm3 = 1.0;

// Units a density column may be given in.
enum class DensityUnit { kg_m3, g_cm3 };

inline std::optional<DensityUnit> density_unit_from_name(std::string_view name) {
    if (name == "kg/m3") return DensityUnit::kg_m3;
    if (name == "g/cm3") return DensityUnit::g_cm3;
    return std::nullopt;
}

constexpr std::string_view density_unit_name(DensityUnit unit) { return unit == DensityUnit::kg_m3 ? "kg/m3" : "g/cm3"; }

constexpr double to_g_cm3(double density, DensityUnit unit) {
    return unit == DensityUnit::kg_m3 ? density_kg_m3_to_g_cm3(density) : density;
}

}  // namespace firnray
