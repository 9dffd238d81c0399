// Rendering traced rays (src/output/trace_output.*): the JSON model block and the fan figure.
#include <catch2/catch.hpp>

#include <cmath>
#include <cstdlib>
#include <memory>
#include <sstream>

#include "core/constants.hpp"
#include "io/json_writer.hpp"
#include "model/model_file.hpp"
#include "output/model_json.hpp"
#include "output/trace_output.hpp"
#include "support/run_cli.hpp"
#include "trace/ray_tracer.hpp"

using namespace firnray;

TEST_CASE("trace outputs: the JSON names the model as write_model_json does, and the fan figure shows every "
          "kind of branch traced and parses in librsvg",
          "[output][trace]") {
    auto model = std::make_shared<const FirnModel>(default_model());
    TraceOptions options;
    options.max_distance_m = 300.0;
    options.ceiling_z_m = 50.0;
    const RayTracer tracer(model, options);
    std::vector<RayTrace> rays;
    for (double zenith_deg : {20.0, 90.0, 150.0}) {
        FixedSpacingRecorder recorder(5.0);
        rays.push_back(tracer.trace({0.0, -60.0, deg_to_rad(zenith_deg)}, recorder));
    }

    JsonWriter block;
    block.begin_object().key("model");
    write_model_json(block, *model);
    block.end_object();
    const std::string json = trace_json(*model, rays);
    // The block written alone, up to the model's closing brace, opens the trace's JSON.
    const std::string& alone = block.str();
    const std::string opening = alone.substr(0, alone.rfind('}', alone.rfind('}') - 1) + 1);
    CHECK(opening.find("\"n_air\": 1") != std::string::npos);
    CHECK(json.rfind(opening, 0) == 0);

    const std::string svg = ray_fan_svg(*model, rays, 0.0, -60.0);
    CHECK(svg.find("ice rays") != std::string::npos);
    CHECK(svg.find("air-transmitted rays") != std::string::npos);  // the 20° ray leaves the ice
    CHECK(svg.find("launch point") != std::string::npos);
    CHECK(svg.find("Rays from x = 0 m, z = -60 m; model: ") != std::string::npos);
    const std::string path = firnray::test::write_file(firnray::test::temp_folder("fan") + "/fan.svg", svg);
    REQUIRE(std::system("command -v rsvg-convert >/dev/null 2>&1") == 0);
    CHECK(std::system(("rsvg-convert '" + path + "' -o '" + path + ".png' 2>/dev/null").c_str()) == 0);
}

TEST_CASE("trace outputs refuse a NaN point with the field named, and stream as they render", "[output][trace]") {
    auto model = std::make_shared<const FirnModel>(default_model());
    TraceOptions options;
    options.max_distance_m = 100.0;
    const RayTracer tracer(model, options);
    FixedSpacingRecorder recorder(5.0);
    std::vector<RayTrace> rays{tracer.trace({0.0, -60.0, deg_to_rad(80.0)}, recorder)};
    std::ostringstream csv;
    write_trace_csv(csv, rays);
    CHECK(csv.str() == trace_csv(rays));
    REQUIRE(rays[0].branches[0].points.size() > 2);
    rays[0].branches[0].points[2].z_m = std::nan("");
    CHECK_THROWS_WITH(trace_csv(rays), Catch::Contains("'z_m' is NaN"));
    CHECK_THROWS_WITH(trace_json(*model, rays), Catch::Contains("rays[0].branches[0].points[2][1]"));
}
