// Two roots of X(ξ) = R between two neighbouring samples of the path finder's scan: on a table,
// X(ξ) of a family can rise and fall again within 1/16 of a range (a bump where the turning point
// crosses a few cells of the log), so that X − R has one sign at both samples and so has the
// slope. Found by comparing the finder with a dense scan on models/table-density.toml (the
// synthetic density log of the repository): a pair at equal depths, 196 m, 2830.74 m apart.
//
// Reference: X(ξ) and T(ξ) of family U by Boost.Math tanh_sinh quadrature of the Snell integrals
// (test::turn_above in tests/support/snell_integrals.hpp) on a grid of ξ 1e-5 apart, every sign
// change of X − R refined by bisection.
#include <catch2/catch.hpp>

#include <cmath>
#include <iomanip>
#include <vector>

#include "model/model_file.hpp"
#include "solver/path_families.hpp"
#include "support/run_cli.hpp"
#include "support/snell_integrals.hpp"

using namespace firnray;

TEST_CASE("every root of X(ξ) = R of a family is found, also two between neighbouring scan samples, with the "
          "time of tanh_sinh quadrature of the Snell integrals (Boost.Math) within 0.01 ns",
          "[solver][stratified]") {
    const FirnModel model = load_model_file(test::source_path("models/table-density.toml"));
    const StratifiedProfile profile(model.index);
    const double z = -195.873, distance = 2830.74;
    StratifiedPathOptions options;
    options.max_bounces = 1;
    const auto paths = find_stratified_paths(profile, z, z, distance, options);

    // The reference's roots of family U with ξ in [1.7600, 1.7670]: two at the bump and one more
    // toward ξ = n(z), where X grows without bound (below 1.7600, X < R).
    auto f = [&](double xi) { return test::turn_above(*model.index, xi, z, z).distance_m - distance; };
    std::vector<double> roots;
    double previous_xi = 1.7600, previous = f(previous_xi);
    for (int i = 1; i <= 700; ++i) {
        const double xi = 1.7600 + 1e-5 * i, value = f(xi);
        if ((value < 0.0) != (previous < 0.0)) {
            double low = previous_xi, high = xi, f_low = previous;
            for (int k = 0; k < 40; ++k) {
                const double middle = 0.5 * (low + high), f_middle = f(middle);
                if ((f_middle < 0.0) == (f_low < 0.0)) low = middle, f_low = f_middle;
                else high = middle;
            }
            roots.push_back(0.5 * (low + high));
        }
        previous_xi = xi;
        previous = value;
    }
    REQUIRE(roots.size() == 3);

    for (const double root : roots) {
        INFO(std::setprecision(15) << "reference root ξ = " << root);
        const StratifiedPath* match = nullptr;
        for (const auto& path : paths)
            if (path.family == "U" && std::abs(path.ray_parameter - root) < 1e-9) match = &path;
        REQUIRE(match != nullptr);
        const auto ref = test::turn_above(*model.index, match->ray_parameter, z, z);
        // At the path's own ξ: the reference's X equals R and its time is the path's.
        CHECK(std::abs(ref.distance_m - distance) < 1e-5);
        CHECK(std::abs(match->time_s - ref.time_s) < 0.01e-9);
    }
}
