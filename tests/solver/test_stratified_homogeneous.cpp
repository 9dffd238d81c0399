// The stratified core in a homogeneous medium (definition: straight lines, T = n d / c, and
// reflections at the surface and at the bottom by the image construction of plane mirrors).
#include <catch2/catch.hpp>

#include <cmath>
#include <map>
#include <memory>
#include <string>

#include "core/constants.hpp"
#include "core/errors.hpp"
#include "solver/path_families.hpp"

using namespace firnray;

TEST_CASE("stratified paths in a homogeneous medium are straight lines and mirror images with T = n d / c "
          "(definition)",
          "[solver][stratified]") {
    const double n = 1.5, depth = 300.0;
    const StratifiedProfile profile(std::make_shared<ConstantProfile>(n), -depth);
    CHECK(profile.inversions().empty());
    CHECK(profile.ducts().empty());
    StratifiedPathOptions options;
    options.max_bounces = 2;
    struct Pair {
        double zs, zr, distance;
    };
    for (const Pair& pair : {Pair{-10.0, -50.0, 100.0}, Pair{-200.0, -20.0, 30.0}, Pair{-100.0, -100.0, 250.0},
                             Pair{-5.0, -250.0, 0.0}, Pair{-150.0, -150.000001, 1e-4}}) {
        const auto paths = find_stratified_paths(profile, pair.zs, pair.zr, pair.distance, options);
        // Vertical extents of the unfolded straight line, per family.
        std::map<std::string, double> rise{{"U", -pair.zs - pair.zr},
                                           {"L", pair.zs + pair.zr + 2.0 * depth},
                                           {"UL", -pair.zs + 2.0 * depth + pair.zr},
                                           {"LU", pair.zs + 2.0 * depth - pair.zr}};
        rise["direct"] = std::abs(pair.zr - pair.zs);  // at equal depths, the horizontal line
        INFO("pair " << pair.zs << " to " << pair.zr << " at " << pair.distance << " m");
        CHECK(paths.size() == rise.size());
        for (const auto& path : paths) {
            INFO(path.family);
            REQUIRE(rise.count(path.family) == 1);
            const double d = std::hypot(pair.distance, rise[path.family]);
            CHECK(path.time_s == Approx(n * d / speed_of_light).epsilon(1e-13));
            CHECK(path.length_m == Approx(d).epsilon(1e-12).margin(1e-12));
            const double sine = pair.distance / d;
            // ξ to the last few bits: the root's Newton step from its final evaluation (the search
            // alone leaves X − R up to 1e-12 R, ξ up to a few 1e-13).
            CHECK(path.ray_parameter == Approx(n * sine).epsilon(1e-14).margin(1e-15));
            CHECK(std::sin(path.launch_zenith_rad) == Approx(sine).epsilon(1e-14).margin(1e-15));
        }
    }
}

TEST_CASE("stratified path search refuses bad input with typed errors", "[solver][stratified]") {
    const StratifiedProfile profile(std::make_shared<ConstantProfile>(1.5), -300.0);
    CHECK_THROWS_AS(find_stratified_paths(profile, 1.0, -10.0, 5.0), DataInputError);
    CHECK_THROWS_AS(find_stratified_paths(profile, -400.0, -10.0, 5.0), DataInputError);
    CHECK_THROWS_AS(find_stratified_paths(profile, -10.0, -10.0, 0.0), DataInputError);
    CHECK_THROWS_AS(find_stratified_paths(profile, -10.0, -20.0, std::nan("")), DataInputError);
    StratifiedPathOptions options;
    options.max_bounces = -1;
    CHECK_THROWS_AS(find_stratified_paths(profile, -10.0, -20.0, 5.0, options), DataInputError);
    CHECK_THROWS_AS(StratifiedProfile(std::make_shared<ConstantProfile>(1.5), 10.0), ModelInputError);
}
