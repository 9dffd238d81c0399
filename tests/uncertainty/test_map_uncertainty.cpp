// The model's uncertainty carried into the maps: the boundary-only computation against the whole
// map, the boundary's derivative against finite differences of the plain map at two profiles,
// linearised against Monte Carlo propagation for a boundary distance and a visible volume, and
// reproducibility of the draws.
#include <cmath>
#include <algorithm>
#include <memory>
#include <mutex>

#include <catch2/catch.hpp>

#include "core/errors.hpp"
#include "model/firn_model.hpp"
#include "model/model_file.hpp"
#include "solver/make_solver.hpp"
#include "station/depth_scan.hpp"
#include "station/visibility_map.hpp"
#include "uncertainty/map_uncertainty.hpp"

using namespace firnray;

namespace {

// An exponential profile with a fitted-looking covariance (n_surface and scale_depth_m correlated).
FirnModel fitted_exponential(double scale_depth_m = 37.0, const std::string& uncertainty =
                                                              "[uncertainty]\nparameters = [\"n_surface\", "
                                                              "\"scale_depth_m\", \"n_deep\"]\n"
                                                              "covariance = [[4e-4, 0.012, 0], [0.012, 4.0, 0], "
                                                              "[0, 0, 1e-6]]\n") {
    return parse_model("[index]\nkind = \"exponential\"\nn_deep = 1.78\nn_surface = 1.35\nscale_depth_m = " +
                           std::to_string(scale_depth_m) + "\n" + uncertainty,
                       "fitted.toml");
}

std::unique_ptr<RaySolver> solver_of(const FirnModel& model) {
    return make_solver(std::make_shared<const FirnModel>(model), SolverChoice::automatic);
}

MapGrid coarse_grid() {
    MapGrid grid;
    grid.distance_min_m = 0.0;
    grid.distance_max_m = 1500.0;
    grid.distance_cells = 30;
    grid.depth_min_m = 100.0;
    grid.depth_max_m = 400.0;
    grid.depth_cells = 6;
    return grid;
}

VisibilityOptions coarse_options() {
    VisibilityOptions options;
    options.ray_parameters = 400;
    return options;
}

std::vector<Receiver> one_receiver() {
    Receiver r;
    r.name = "rx";
    r.z_m = -60.0;
    return {r};
}

std::vector<Receiver> three_receivers() {
    std::vector<Receiver> out(3);
    out[0].name = "a", out[0].x_m = 0.0, out[0].z_m = -40.0;
    out[1].name = "b", out[1].x_m = 30.0, out[1].y_m = 10.0, out[1].z_m = -80.0;
    out[2].name = "c", out[2].x_m = -20.0, out[2].y_m = -25.0, out[2].z_m = -60.0;
    return out;
}

}  // namespace

TEST_CASE("The boundary alone equals the boundary of the whole map, receiver and station (common practice)",
          "[uncertainty][map]") {
    const FirnModel model = fitted_exponential();
    const auto solver = solver_of(model);
    const MapGrid grid = coarse_grid();
    for (const auto& receivers : {one_receiver(), three_receivers()}) {
        VisibilityOptions options = coarse_options();
        options.min_receivers = receivers.size() == 1 ? 1 : 2;
        options.azimuth_deg = 30.0;
        const VisibilityMap map = compute_visibility_map(*solver, receivers, grid, options);
        const std::vector<double> boundary = compute_visibility_boundary(*solver, receivers, grid, options);
        REQUIRE(boundary.size() == map.boundary_m.size());
        for (std::size_t j = 0; j < boundary.size(); ++j) {
            INFO("row " << j << " with " << receivers.size() << " receivers");
            CHECK(std::isfinite(boundary[j]));
            CHECK(boundary[j] == map.boundary_m[j]);  // the same numbers, not just close
        }
    }
}

TEST_CASE("The linearised boundary sigma matches finite differences of the plain map at two profiles "
          "(GUM, JCGM 100 2008, law of propagation for one parameter)",
          "[uncertainty][map]") {
    // One uncertain parameter: σ_b = |db/dθ| σ_θ. The derivative is taken independently, by the
    // whole map (compute_visibility_map) at two models written out with θ ± 0.05 m.
    const double sigma_scale = 2.0;
    const FirnModel model =
        fitted_exponential(37.0, "[uncertainty]\nparameters = [\"scale_depth_m\"]\ncovariance = [[4.0]]\n");
    const ModelPerturbation perturbation(model);
    const MapGrid grid = coarse_grid();
    for (const auto& receivers : {one_receiver(), three_receivers()}) {
        VisibilityOptions options = coarse_options();
        options.min_receivers = receivers.size() == 1 ? 1 : 3;
        const BoundaryUncertainty result = propagate_boundary_uncertainty(
            perturbation, SolverChoice::automatic, receivers, grid, options, PropagationOptions{});
        const double h = 0.05;
        const auto low_solver = solver_of(fitted_exponential(37.0 - h, ""));
        const auto high_solver = solver_of(fitted_exponential(37.0 + h, ""));
        const VisibilityMap low = compute_visibility_map(*low_solver, receivers, grid, options);
        const VisibilityMap high = compute_visibility_map(*high_solver, receivers, grid, options);
        for (int j = 0; j < grid.depth_cells; ++j) {
            const double derivative = (high.boundary_m[j] - low.boundary_m[j]) / (2.0 * h);
            INFO("depth " << grid.depth_at(j) << " m, " << receivers.size() << " receivers, db/dθ = " << derivative);
            REQUIRE(std::isfinite(derivative));
            CHECK(std::abs(derivative) > 0.1);  // the boundary does move with the scale depth
            CHECK(result.sigma_m[j] == Approx(std::abs(derivative) * sigma_scale).epsilon(0.02));
            CHECK(result.without_boundary[j] == 0);
            CHECK(result.unbounded[j] == 0);
        }
    }
}

TEST_CASE("Linearised and Monte Carlo boundary sigma agree within 10 percent (JCGM 101 2008 against JCGM 100 2008)",
          "[uncertainty][map]") {
    const ModelPerturbation perturbation(fitted_exponential());
    const MapGrid grid = coarse_grid();
    const auto receivers = one_receiver();
    PropagationOptions linear;
    PropagationOptions monte_carlo;
    monte_carlo.method = PropagationMethod::monte_carlo;
    monte_carlo.samples = 400;
    monte_carlo.threads = 2;
    const auto a = propagate_boundary_uncertainty(perturbation, SolverChoice::automatic, receivers, grid,
                                                  coarse_options(), linear);
    const auto b = propagate_boundary_uncertainty(perturbation, SolverChoice::automatic, receivers, grid,
                                                  coarse_options(), monte_carlo);
    CHECK(b.summary.models == 401);
    CHECK(a.summary.models == 7);
    CHECK(a.nominal_m == b.nominal_m);
    for (int j = 0; j < grid.depth_cells; ++j) {
        INFO("depth " << grid.depth_at(j) << " m: linearised " << a.sigma_m[j] << " m, Monte Carlo " << b.sigma_m[j]);
        REQUIRE(a.sigma_m[j] > 1.0);
        CHECK(b.sigma_m[j] == Approx(a.sigma_m[j]).epsilon(0.10));
    }
}

TEST_CASE("Linearised and Monte Carlo visible-volume sigma agree within 10 percent (JCGM 101 2008 against JCGM 100 2008)",
          "[uncertainty][map]") {
    const ModelPerturbation perturbation(fitted_exponential());
    DepthScanOptions options;
    options.receiver_depths_m = {60.0, 120.0};
    options.region.distance_min_m = 0.0;
    options.region.distance_max_m = 1500.0;
    options.region.distance_cells = 60;
    options.region.depth_min_m = 0.0;
    options.region.depth_max_m = 300.0;
    options.region.depth_cells = 30;
    options.ray_parameters = 300;
    PropagationOptions linear;
    linear.threads = 2;
    PropagationOptions monte_carlo = linear;
    monte_carlo.method = PropagationMethod::monte_carlo;
    monte_carlo.samples = 300;
    const auto a = propagate_depth_scan_uncertainty(perturbation, SolverChoice::automatic, options, linear);
    const auto b = propagate_depth_scan_uncertainty(perturbation, SolverChoice::automatic, options, monte_carlo);
    REQUIRE(a.rows.size() == 2);
    REQUIRE(b.rows.size() == 2);
    for (std::size_t k = 0; k < 2; ++k) {
        INFO("receiver at " << options.receiver_depths_m[k] << " m: linearised " << a.rows[k].visible_volume_sigma_m3
                            << " m3, Monte Carlo " << b.rows[k].visible_volume_sigma_m3);
        REQUIRE(a.rows[k].visible_volume_sigma_m3 > 0.0);
        CHECK(b.rows[k].visible_volume_sigma_m3 == Approx(a.rows[k].visible_volume_sigma_m3).epsilon(0.10));
        CHECK(!a.rows[k].strong_volume_sigma_m3.has_value());
        CHECK(a.rows[k].ducted_only_volume_sigma_m3 == 0.0);  // no duct in an exponential profile
    }
}

TEST_CASE("Monte Carlo boundary draws are the same for any thread count and change with the seed (common practice)",
          "[uncertainty][map]") {
    const ModelPerturbation perturbation(fitted_exponential());
    const MapGrid grid = coarse_grid();
    const auto receivers = three_receivers();
    VisibilityOptions options = coarse_options();
    options.min_receivers = 2;
    PropagationOptions propagation;
    propagation.method = PropagationMethod::monte_carlo;
    propagation.samples = 12;
    propagation.threads = 1;
    const auto one = propagate_boundary_uncertainty(perturbation, SolverChoice::automatic, receivers, grid, options,
                                                    propagation);
    propagation.threads = 2;
    const auto two = propagate_boundary_uncertainty(perturbation, SolverChoice::automatic, receivers, grid, options,
                                                    propagation);
    propagation.seed += 1;
    const auto other = propagate_boundary_uncertainty(perturbation, SolverChoice::automatic, receivers, grid, options,
                                                      propagation);
    CHECK(one.sigma_m == two.sigma_m);
    CHECK(one.sigma_m != other.sigma_m);
    CHECK(one.summary.seed + 1 == other.summary.seed);
}

TEST_CASE("A model without an uncertainty table is refused with a message naming it (common practice)",
          "[uncertainty][map]") {
    const FirnModel model = fitted_exponential(37.0, "");
    CHECK_THROWS_AS(ModelPerturbation(model), ModelInputError);
    CHECK_THROWS_WITH(ModelPerturbation(model), Catch::Contains("[uncertainty]") && Catch::Contains("fitted"));
}

TEST_CASE("In uniform ice every draw reaches every distance so the boundary has no sigma and every model counts as "
          "unbounded (straight rays, common practice)",
          "[uncertainty][map]") {
    const FirnModel model = parse_model("[index]\nkind = \"constant\"\nn = 1.78\n"
                                        "[uncertainty]\nparameters = [\"n\"]\ncovariance = [[1e-4]]\n",
                                        "uniform.toml");
    const ModelPerturbation perturbation(model);
    const MapGrid grid = coarse_grid();
    PropagationOptions monte_carlo;
    monte_carlo.method = PropagationMethod::monte_carlo;
    monte_carlo.samples = 5;
    for (const PropagationOptions& propagation : {PropagationOptions{}, monte_carlo}) {
        const auto result = propagate_boundary_uncertainty(perturbation, SolverChoice::automatic, one_receiver(), grid,
                                                           coarse_options(), propagation);
        const std::size_t expected = propagation.method == PropagationMethod::monte_carlo ? 5 : 1;
        for (int j = 0; j < grid.depth_cells; ++j) {
            CHECK(std::isinf(result.nominal_m[j]));
            CHECK(std::isnan(result.sigma_m[j]));
            CHECK(result.unbounded[j] == expected);
            CHECK(result.without_boundary[j] == 0);
        }
    }
}

TEST_CASE("A table's per-point index uncertainty moves the boundary of every row (Karhunen-Loeve components, "
          "common practice)",
          "[uncertainty][map]") {
    std::string depth = "[", n = "[";
    for (int i = 0; i < 60; ++i) {
        depth += std::to_string(i * 2.5) + ",";
        n += std::to_string(1.78 - 0.43 * std::exp(-i * 2.5 / 37.0)) + ",";
    }
    const FirnModel model = parse_model("[index]\nkind = \"table\"\ndepth_m = " + depth + "]\nn = " + n +
                                            "]\n[uncertainty]\nindex_sigma = 0.01\ncorrelation_length_m = 10\n",
                                        "table.toml");
    const ModelPerturbation perturbation(model);
    MapGrid grid = coarse_grid();
    grid.depth_cells = 3;
    PropagationOptions propagation;
    propagation.threads = 2;
    const auto result = propagate_boundary_uncertainty(perturbation, SolverChoice::automatic, one_receiver(), grid,
                                                       coarse_options(), propagation);
    CHECK(result.summary.models == 2 * perturbation.dimension() + 1);
    for (int j = 0; j < grid.depth_cells; ++j) {
        INFO("depth " << grid.depth_at(j) << " m: boundary " << result.nominal_m[j] << " ± " << result.sigma_m[j]);
        CHECK(std::isfinite(result.nominal_m[j]));
        CHECK(result.sigma_m[j] > 0.5);
        CHECK(result.sigma_m[j] < 0.2 * result.nominal_m[j]);
    }
}

TEST_CASE("Progress of a boundary propagation counts every model and ends at the total (common practice)",
          "[uncertainty][map]") {
    const ModelPerturbation perturbation(fitted_exponential());
    std::mutex mutex;
    std::size_t calls = 0, last_done = 0, last_total = 0;
    RunControl control;
    control.progress = [&](std::size_t done, std::size_t total) {
        const std::lock_guard<std::mutex> lock(mutex);
        ++calls;
        last_done = std::max(last_done, done);
        last_total = total;
    };
    PropagationOptions propagation;
    propagation.threads = 2;
    propagate_boundary_uncertainty(perturbation, SolverChoice::automatic, one_receiver(), coarse_grid(),
                                   coarse_options(), propagation, control);
    CHECK(calls == 7);  // the nominal model and 2 steps along each of 3 components
    CHECK(last_done == 7);
    CHECK(last_total == 7);
}

TEST_CASE("A station's boundary sigma follows from one receiver's reach sigma by the straight-line geometry "
          "d = sqrt(R^2 - h^2) (Pythagoras, GUM JCGM 100 2008 law of propagation)",
          "[uncertainty][map]") {
    // Two receivers at the same depth, 50 m apart across the map line: the map's origin is
    // between them, each is h = 25 m off the line, and both see a source at d when
    // d² + h² <= R², R the reach of that depth. So d = √(R² − h²) and σ_d = R σ_R / d.
    const FirnModel model =
        fitted_exponential(37.0, "[uncertainty]\nparameters = [\"scale_depth_m\"]\ncovariance = [[4.0]]\n");
    const ModelPerturbation perturbation(model);
    const MapGrid grid = coarse_grid();
    std::vector<Receiver> pair(2);
    pair[0].name = "a", pair[0].y_m = -25.0, pair[0].z_m = -60.0;
    pair[1].name = "b", pair[1].y_m = 25.0, pair[1].z_m = -60.0;
    VisibilityOptions options = coarse_options();
    options.min_receivers = 2;
    const auto station = propagate_boundary_uncertainty(perturbation, SolverChoice::automatic, pair, grid, options,
                                                        PropagationOptions{});
    const auto single = propagate_boundary_uncertainty(perturbation, SolverChoice::automatic, one_receiver(), grid,
                                                       coarse_options(), PropagationOptions{});
    for (int j = 0; j < grid.depth_cells; ++j) {
        const double reach = single.nominal_m[j];
        const double d = std::sqrt(reach * reach - 25.0 * 25.0);
        INFO("depth " << grid.depth_at(j) << " m: reach " << reach << " ± " << single.sigma_m[j]);
        CHECK(station.nominal_m[j] == Approx(d).epsilon(1e-9));
        CHECK(station.sigma_m[j] == Approx(reach / d * single.sigma_m[j]).epsilon(0.01));
    }
}
