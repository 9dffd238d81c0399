// Rendering maps and depth scans (src/output/map_output.*): absent values are empty fields or
// null on purpose, "inf" marks an unbounded reach, and a NaN where a value must exist is refused
// with the column named. The maps here are made by hand, so the expected text is known exactly.
#include <catch2/catch.hpp>

#include <cmath>
#include <limits>
#include <sstream>
#include <string>

#include "core/errors.hpp"
#include "io/csv_reader.hpp"
#include "model/model_file.hpp"
#include "output/map_output.hpp"

using namespace firnray;

namespace {

// 2 distance columns × 2 depth rows, one receiver: a cell seen with two paths, one with one path,
// one in the shadow, and one seen only at a caustic (no amplitude).
VisibilityMap hand_made_map() {
    VisibilityMap map;
    map.grid.distance_min_m = 0.0;
    map.grid.distance_max_m = 200.0;
    map.grid.distance_cells = 2;
    map.grid.depth_min_m = 0.0;
    map.grid.depth_max_m = 100.0;
    map.grid.depth_cells = 2;
    map.receivers = 1;
    map.cells.resize(4);
    MapCell& two = map.cells[0];
    two.paths = 2, two.kinds = kind_direct | kind_refracted, two.receivers_seeing = 1, two.receivers_with_two = 1;
    two.first_time_ns = 250.5f, two.time_between_ns = 12.25f, two.amplitude_per_m = 0.001f;
    MapCell& one = map.cells[1];
    one.paths = 1, one.kinds = kind_direct, one.receivers_seeing = 1;
    one.first_time_ns = 700.0f, one.amplitude_per_m = 0.0005f;
    MapCell& caustic = map.cells[3];
    caustic.paths = 1, caustic.kinds = kind_refracted, caustic.receivers_seeing = 1, caustic.first_time_ns = 800.0f;
    map.boundary_m = {std::numeric_limits<double>::infinity(), std::numeric_limits<double>::quiet_NaN()};
    return map;
}

}  // namespace

TEST_CASE("visibility grid CSV: values where defined, empty fields where absent", "[output][maps]") {
    const std::string text = visibility_grid_csv(hand_made_map());
    CHECK(text ==
          "depth_m,distance_m,paths,kinds,receivers_seeing,visible,first_time_ns,time_between_ns,amplitude_per_m\n"
          "25,50,2,direct+refracted,1,1,250.5,12.25,0.001\n"
          "25,150,1,direct,1,1,700,,0.0005\n"
          "75,50,0,none,0,0,,,\n"
          "75,150,1,refracted,1,1,800,,\n");
    std::ostringstream streamed;
    write_visibility_grid_csv(streamed, hand_made_map());
    CHECK(streamed.str() == text);
}

TEST_CASE("visibility outputs refuse NaN or infinity where a value must exist, naming the column",
          "[output][maps]") {
    VisibilityMap map = hand_made_map();
    map.cells[0].time_between_ns = std::numeric_limits<float>::quiet_NaN();  // two paths but no time between
    CHECK_THROWS_WITH(visibility_grid_csv(map), Catch::Contains("time_between_ns"));
    map = hand_made_map();
    map.cells[1].amplitude_per_m = std::numeric_limits<float>::infinity();
    CHECK_THROWS_AS(visibility_grid_csv(map), NumericalError);
    map = hand_made_map();
    map.boundary_m[1] = -std::numeric_limits<double>::infinity();
    CHECK_THROWS_WITH(visibility_boundary_csv(map), Catch::Contains("max_visible_distance_m"));
}

TEST_CASE("visibility boundary CSV: inf for an unbounded reach, empty where nothing is seen", "[output][maps]") {
    VisibilityMap map = hand_made_map();
    CHECK(visibility_boundary_csv(map) == "depth_m,max_visible_distance_m\n25,inf\n75,\n");
    map.boundary_m = {123.456789, 0.0};
    CHECK(visibility_boundary_csv(map) == "depth_m,max_visible_distance_m\n25,123.457\n75,0\n");
}

TEST_CASE("depth scan CSV and JSON: times between paths are absent where no cell has two paths", "[output][maps]") {
    DepthScan scan;
    DepthScanRow seen;
    seen.receiver_depth_m = 40.0;
    seen.region_volume_m3 = 1000.0;
    seen.visible_volume_m3 = 250.0;
    seen.two_path_volume_m3 = 100.0;
    seen.median_time_between_ns = 55.5;
    seen.min_time_between_ns = 10.0;
    seen.max_time_between_ns = 90.0;
    DepthScanRow none;
    none.receiver_depth_m = 10.0;
    none.region_volume_m3 = 1000.0;
    none.median_time_between_ns = none.min_time_between_ns = none.max_time_between_ns =
        std::numeric_limits<double>::quiet_NaN();
    scan.rows = {none, seen};
    scan.best = 1;
    const std::string csv = depth_scan_csv(scan);
    CHECK(csv.find("\n10,1000,0,0,0,,,,,0,0,0\n") != std::string::npos);
    CHECK(csv.find("\n40,1000,250,0.25,100,55.5,10,90,,1,0,0\n") != std::string::npos);
    const FirnModel model = default_model();
    MapGrid region;
    const std::string json = depth_scan_json(scan, model, region);
    CHECK(json.find("\"median_time_between_ns\": null") != std::string::npos);
    CHECK(json.find("\"median_time_between_ns\": 55.5") != std::string::npos);
    CHECK(json.find("\"best_receiver_depth_m\": 40") != std::string::npos);
    CHECK(depth_scan_json(DepthScan{}, model, region).find("\"best_receiver_depth_m\": null") != std::string::npos);
    // A NaN where two-path cells exist is a failure, not an empty field.
    scan.rows[1].median_time_between_ns = std::numeric_limits<double>::quiet_NaN();
    CHECK_THROWS_WITH(depth_scan_csv(scan), Catch::Contains("median_time_between_ns"));
    CHECK_THROWS_WITH(depth_scan_json(scan, model, region), Catch::Contains("depths[1].median_time_between_ns"));
}

TEST_CASE("map colourings parse by name, with the option named on a typo", "[output][maps]") {
    CHECK(parse_map_colouring("kinds") == MapColouring::kinds);
    CHECK(parse_map_colouring("time-between") == MapColouring::time_between);
    CHECK(parse_map_colouring("amplitude") == MapColouring::amplitude);
    CHECK_THROWS_AS(parse_map_colouring("amplitdue"), DataInputError);
    CHECK(kinds_label(0) == "none");
    CHECK(kinds_label(kind_direct | kind_reflected) == "direct+reflected");
}
