// The beam coverage map: a far source on a beam's own ray is caught with efficiency near 1 (the
// wavefront's curvature falls as 1/distance, geometry), the best beam the map reports against a
// search over every beam, the volumes it adds up, and the design scan.
#include <catch2/catch.hpp>

#include <cmath>
#include <memory>

#include "beams/beam_coverage.hpp"
#include "core/constants.hpp"
#include "core/errors.hpp"
#include "model/firn_model.hpp"
#include "model/index_profile.hpp"
#include "model/table_profile.hpp"
#include "paths/find_paths.hpp"
#include "solver/make_solver.hpp"
#include "solver/closed_form_solver.hpp"
#include "solver/snell_integrals.hpp"
#include "station/arrival_table.hpp"

using namespace firnray;

namespace {

std::shared_ptr<FirnModel> firn_model() {
    auto model = std::make_shared<FirnModel>();
    model->name = "exponential 1.78/1.35/37 m";
    model->index = std::make_shared<ExponentialProfile>(1.78, 1.35, 37.0);
    return model;
}

PhasedArray test_array(double top_depth_m) {
    Station station;
    for (int k = 0; k < 8; ++k) {
        Receiver r;
        r.name = "P" + std::to_string(k + 1);
        r.string_name = "P";
        r.z_m = -top_depth_m - k;
        station.receivers.push_back(r);
    }
    return make_phased_array(station, "P");
}

MapGrid one_cell_at(double distance_m, double depth_m) {
    MapGrid grid;
    grid.distance_min_m = distance_m - 0.5;
    grid.distance_max_m = distance_m + 0.5;
    grid.distance_cells = 1;
    grid.depth_min_m = depth_m - 0.5;
    grid.depth_max_m = depth_m + 0.5;
    grid.depth_cells = 1;
    return grid;
}

}  // namespace

TEST_CASE("a far source on a beam's own ray has coherent-sum efficiency near 1 (wavefront curvature falls as 1/distance, geometry)", "[beams][coverage]") {
    const auto model = firn_model();
    const ClosedFormSolver solver(model);
    const StratifiedProfile profile(model->index);
    const PhasedArray array = test_array(150.0);
    const double zenith = 60.0;  // up-going at the reference: the source is deeper
    const std::vector<PlaneWaveOffsets> beams{plane_wave_offsets(profile, array, zenith)};
    const RayLevel level = RayLevel::plain(beams[0].ray_parameter);
    double previous = 0.0;
    for (double source_depth : {300.0, 600.0, 1500.0, 3000.0}) {
        // Where the beam's ray from the reference meets the source depth (the reference is the top antenna).
        const LegIntegrals leg = leg_integrals(profile, level, {array.reference_antenna().z_m, LegEnd::fixed},
                                               {-source_depth, LegEnd::fixed}, false, false);
        const BeamCoverage coverage =
            compute_beam_coverage(solver, array, beams, one_cell_at(leg.distance_m, source_depth), CoverageOptions{});
        const CoverageCell& cell = coverage.at(0, 0);
        REQUIRE(cell.antennas_first == 8);
        CHECK(cell.first_efficiency >= previous);
        previous = cell.first_efficiency;
    }
    CHECK(previous > 0.99);
}

TEST_CASE("coverage map: the best beam it reports matches a search over every beam (direct computation)", "[beams][coverage]") {
    const auto model = firn_model();
    const ClosedFormSolver solver(model);
    const StratifiedProfile profile(model->index);
    const PhasedArray array = test_array(100.0);
    std::vector<PlaneWaveOffsets> beams;
    for (double zenith : evenly_spaced_zeniths(12, 40.0, 140.0)) beams.push_back(plane_wave_offsets(profile, array, zenith));
    MapGrid grid;
    grid.distance_max_m = 1200.0;
    grid.distance_cells = 40;
    grid.depth_max_m = 300.0;
    grid.depth_cells = 30;
    CoverageOptions options;
    options.ray_parameters = 600;
    options.threshold = 0.5;
    const BeamCoverage coverage = compute_beam_coverage(solver, array, beams, grid, options);

    std::vector<double> source_z;
    for (int j = 0; j < grid.depth_cells; ++j) source_z.push_back(-grid.depth_at(j));
    ArrivalTableOptions table_options;
    table_options.ray_parameters = options.ray_parameters;
    std::vector<std::unique_ptr<ArrivalTable>> tables;
    for (const Receiver& r : array.antennas) tables.push_back(std::make_unique<ArrivalTable>(solver, r.z_m, source_z, table_options));
    std::size_t cells = 0, same = 0;
    double worst = 0.0;
    std::vector<MapArrival> found;
    for (int j = 0; j < grid.depth_cells; ++j)
        for (int i = 0; i < grid.distance_cells; ++i) {
            std::vector<double> times(8, NAN);
            for (std::size_t k = 0; k < 8; ++k) {
                tables[k]->arrivals(static_cast<std::size_t>(j), grid.distance_at(i), found);
                if (!found.empty()) times[k] = found[0].time_s;
            }
            const CoverageCell& cell = coverage.at(j, i);
            if (cell.antennas_first == 0) continue;
            double best = 0.0;
            for (const PlaneWaveOffsets& beam : beams) {
                std::vector<double> residuals(8);
                for (std::size_t k = 0; k < 8; ++k) residuals[k] = times[k] - *beam.offsets_s[k];
                best = std::max(best, coherent_sum_efficiency(residuals, 8, options.pulse));
            }
            ++cells;
            if (std::abs(best - cell.first_efficiency) < 1e-6) ++same;
            worst = std::max(worst, best - static_cast<double>(cell.first_efficiency));
        }
    REQUIRE(cells > 500);
    CHECK(static_cast<double>(same) / static_cast<double>(cells) >= 0.98);
    CHECK(worst < 1e-3);

    // Volumes: the region is the whole cylinder, and each volume holds the next.
    CHECK(coverage.region_volume_m3 == Approx(pi * 1200.0 * 1200.0 * 300.0).epsilon(1e-9));
    CHECK(coverage.visible_volume_m3 <= coverage.region_volume_m3);
    CHECK(coverage.efficiency_weighted_volume_m3 <= coverage.visible_volume_m3);
    REQUIRE(coverage.triggered_volume_m3);
    CHECK(*coverage.triggered_volume_m3 <= *coverage.triggered_either_volume_m3);
    CHECK(*coverage.triggered_either_volume_m3 <= coverage.visible_volume_m3);
    CHECK(*coverage.triggered_volume_m3 > 0.0);
    for (std::size_t j = 0; j < coverage.boundary_m.size(); ++j) CHECK_FALSE(std::isnan(coverage.boundary_m[j]));
}

TEST_CASE("coverage map and design scan: bad thresholds and values are refused, the best row is flagged", "[beams][coverage]") {
    const auto model = firn_model();
    const ClosedFormSolver solver(model);
    const StratifiedProfile profile(model->index);
    const PhasedArray array = test_array(100.0);
    const std::vector<PlaneWaveOffsets> beams{plane_wave_offsets(profile, array, 80.0)};
    MapGrid grid;
    grid.distance_max_m = 600.0;
    grid.distance_cells = 12;
    grid.depth_max_m = 200.0;
    grid.depth_cells = 10;
    CoverageOptions options;
    options.ray_parameters = 300;
    options.threshold = 1.5;
    CHECK_THROWS_AS(compute_beam_coverage(solver, array, beams, grid, options), DataInputError);
    options.threshold = 0.0;
    CHECK_THROWS_AS(compute_beam_coverage(solver, array, beams, grid, options), DataInputError);
    options.threshold.reset();
    CHECK_THROWS_AS(compute_beam_coverage(solver, array, {}, grid, options), DataInputError);

    DesignScanOptions scan_options;
    scan_options.parameter = DesignParameter::depth;
    scan_options.values = {20.0, 100.0, 180.0};
    scan_options.beam_zeniths_deg = {60.0, 80.0, 100.0, 120.0};
    scan_options.region = grid;
    scan_options.coverage = options;
    const DesignScan scan = scan_array_design(solver, profile, array, scan_options);
    REQUIRE(scan.rows.size() == 3);
    CHECK(scan.rows[1].top_depth_m == 100.0);
    for (const DesignScanRow& row : scan.rows)
        CHECK(row.efficiency_weighted_volume_m3 <= scan.rows[scan.best].efficiency_weighted_volume_m3);

    scan_options.parameter = DesignParameter::beam_count;
    scan_options.values = {1.0, 4.0};
    const DesignScan by_beams = scan_array_design(solver, profile, array, scan_options);
    CHECK(by_beams.rows[1].beams == 4);
    scan_options.values = {2.5};
    CHECK_THROWS_AS(scan_array_design(solver, profile, array, scan_options), DataInputError);
    scan_options.parameter = DesignParameter::spacing;
    scan_options.values = {0.0};
    CHECK_THROWS_AS(scan_array_design(solver, profile, array, scan_options), DataInputError);
    CHECK_THROWS_WITH(parse_design_parameter("spaceing"), Catch::Contains("spacing"));
}

TEST_CASE("coverage map on a profile whose index falls with depth: the antennas that see each source are those that "
          "find_paths joins to it (cell by cell, Snell's law in a stratified medium)",
          "[beams][coverage]") {
    // A firn table with an ice lens at 22 m: n falls from 1.70 to 1.58 below it (a duct).
    auto model = std::make_shared<FirnModel>();
    model->name = "table with a lens";
    model->index = std::make_shared<TableProfile>(std::vector<double>{0, 10, 20, 22, 24, 40, 80, 150, 300},
                                                  std::vector<double>{1.35, 1.50, 1.60, 1.70, 1.58, 1.66, 1.74, 1.78, 1.78},
                                                  TableInterpolation::monotone);
    const auto solver = make_solver(model, SolverChoice::automatic);
    const StratifiedProfile profile(model->index);
    const PhasedArray array = test_array(30.0);
    std::vector<PlaneWaveOffsets> beams;
    for (double zenith : evenly_spaced_zeniths(6, 50.0, 130.0)) beams.push_back(plane_wave_offsets(profile, array, zenith));
    MapGrid grid;
    grid.distance_max_m = 400.0;
    grid.distance_cells = 8;
    grid.depth_max_m = 100.0;
    grid.depth_cells = 10;
    CoverageOptions options;
    options.ray_parameters = 600;
    options.max_bounces = 1;
    const BeamCoverage coverage = compute_beam_coverage(*solver, array, beams, grid, options);
    PathOptions path_options;
    path_options.max_bounces = 1;
    int seen_cells = 0;
    for (int j = 0; j < grid.depth_cells; ++j)
        for (int i = 0; i < grid.distance_cells; ++i) {
            const Point source{grid.distance_at(i), 0.0, -grid.depth_at(j)};
            int seeing = 0;
            for (const Receiver& r : array.antennas)
                seeing += find_paths(*solver, source, Point{r.x_m, r.y_m, r.z_m}, path_options).empty() ? 0 : 1;
            INFO("source at distance " << source.x << " m, z " << source.z << " m");
            CHECK(coverage.at(j, i).antennas_first == seeing);
            seen_cells += seeing > 0;
        }
    CHECK(seen_cells > 0);
}
