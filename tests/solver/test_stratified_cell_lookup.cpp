// StratifiedProfile::cell_at, which looks up a depth's cell in buckets of equal height (or, on a
// table sampled at a fixed step, steps from −z/h), against its definition checked cell by cell:
// on uneven and evenly sampled tables, at every boundary from both sides, at the bucket edges'
// neighbourhood and below the last table point.

#include <catch2/catch.hpp>

#include <cmath>
#include <memory>
#include <vector>

#include "model/table_profile.hpp"
#include "solver/stratified_intervals.hpp"

namespace {

using firnray::StratifiedProfile;
using firnray::TableProfile;

// The cell the definition names: the first whose bottom lies below z (toward < 0), or at or below
// z (toward > 0); the last cell when none does.
std::size_t cell_by_definition(const StratifiedProfile& profile, double z, int toward) {
    if (z >= 0.0) return 0;
    for (std::size_t cell = 0; cell < profile.cell_count(); ++cell) {
        const double bottom = profile.cell_bottom(cell);
        if (toward > 0 ? bottom <= z : bottom < z) return cell;
    }
    return profile.cell_count() - 1;
}

StratifiedProfile uneven_table() {
    // Knots crowded near the surface and sparse below, so that buckets hold from none to many.
    std::vector<double> depth, n;
    for (int i = 0; i < 60; ++i) {
        const double d = i < 40 ? 0.05 * i * i : 80.0 + 7.3 * (i - 40);
        depth.push_back(d);
        n.push_back(1.78 - 0.43 * std::exp(-d / 37.0) + 0.01 * std::sin(d));
    }
    return StratifiedProfile(std::make_shared<TableProfile>(depth, n));
}

// A log sampled every `step` metres from the surface (the lookup steps from −z/step there).
StratifiedProfile even_table(double step, int points) {
    std::vector<double> depth, n;
    for (int i = 0; i < points; ++i) {
        const double d = step * i;
        depth.push_back(d);
        n.push_back(1.78 - 0.43 * std::exp(-d / 37.0) + 0.01 * std::sin(3.0 * d));
    }
    return StratifiedProfile(std::make_shared<TableProfile>(depth, n));
}

void check_against_definition(const StratifiedProfile& profile) {
    std::vector<double> depths;
    for (std::size_t cell = 0; cell < profile.cell_count(); ++cell) {
        const double bottom = profile.cell_bottom(cell), top = profile.cell_top(cell);
        for (const double z : {bottom, std::nextafter(bottom, 0.0), std::nextafter(bottom, -1e9), top,
                               0.5 * (top + bottom), bottom + 1e-3 * (top - bottom)})
            depths.push_back(z);
    }
    const double floor_z = profile.floor_z();
    for (int i = 0; i <= 20000; ++i) depths.push_back(floor_z * i / 20000.0);
    depths.push_back(0.0);
    depths.push_back(floor_z);
    for (const double z : depths) {
        if (!(z <= 0.0 && z >= floor_z)) continue;
        for (const int toward : {-1, 1}) {
            INFO("z = " << z << ", toward = " << toward);
            CHECK(profile.cell_at(z, toward) == cell_by_definition(profile, z, toward));
        }
    }
}

}  // namespace

TEST_CASE("cell lookup on tables sampled at a fixed step (1 m, 0.1 m, 0.37 m) agrees with the definition of "
          "cell_at at boundaries and between them (common practice)",
          "[stratified][cells]") {
    for (const auto& [step, points] : {std::pair{1.0, 200}, std::pair{0.1, 500}, std::pair{0.37, 300}}) {
        INFO("step " << step << " m");
        check_against_definition(even_table(step, points));
    }
}

TEST_CASE("cell lookup by depth buckets agrees with the definition of cell_at at boundaries and between them "
          "(common practice)",
          "[stratified][cells]") {
    const StratifiedProfile profile = uneven_table();
    REQUIRE(profile.cell_count() > 10);
    check_against_definition(profile);
}
