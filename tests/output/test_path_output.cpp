// Rendering paths (src/output/path_output.*): ids and errors go through the one CSV escaper,
// absent values (no turning point, no field at a caustic) are written empty, "-" or null, and a
// NaN where a value must exist is refused with the field named. Paths here are made by hand.
#include <catch2/catch.hpp>

#include <cmath>
#include <limits>
#include <sstream>
#include <string>

#include "core/errors.hpp"
#include "io/csv_reader.hpp"
#include "model/index_profile.hpp"
#include "output/path_output.hpp"

using namespace firnray;

namespace {

// Built by hand rather than loaded: `context` below is made before main(), when the model file
// reader's own tables may not exist yet.
std::shared_ptr<const FirnModel> test_model() {
    auto model = std::make_shared<FirnModel>();
    model->name = "test model";
    model->origin = "test";
    model->index = std::make_shared<ExponentialProfile>(1.78, 1.35, 37.0);
    return model;
}

ConnectedPath direct_path() {
    ConnectedPath p;
    p.kind = PathKind::direct;
    p.time_s = 500e-9;
    p.ray_parameter = 1.2;
    p.launch_zenith_rad = 1.0;
    p.arrival_zenith_rad = 1.1;
    p.length_m = 100.0;
    p.amplitude.spreading_distance_m = 99.0;
    p.amplitude.field_s = {0.01, 0.0};
    p.amplitude.field_p = {0.01, 0.0};
    return p;
}

ConnectedPath caustic_path() {
    ConnectedPath p = direct_path();
    p.kind = PathKind::refracted;
    p.turning_z_m = -12.5;
    p.amplitude.caustic = true;
    p.amplitude.spreading_distance_m = std::numeric_limits<double>::quiet_NaN();
    p.amplitude.field_s = p.amplitude.field_p = {std::numeric_limits<double>::quiet_NaN(), 0.0};
    return p;
}

const Point source{0.0, 0.0, -50.0}, receiver{100.0, 0.0, -60.0};
const PathOutputContext context{test_model(), "closed"};

}  // namespace

TEST_CASE("path CSV: a caustic path has empty spreading and field columns, a direct one empty turning z",
          "[output][paths]") {
    const std::string text = format_paths(PathFormat::csv, context, source, receiver, {direct_path(), caustic_path()});
    const CsvTable table = parse_csv(text, "paths.csv");
    REQUIRE(table.rows.size() == 2);
    CHECK(table.text(table.rows[0], table.column("turning_z_m")).empty());
    CHECK(table.text(table.rows[1], table.column("turning_z_m")) == "-12.500000");
    CHECK(table.text(table.rows[1], table.column("spreading_m")).empty());
    CHECK(table.text(table.rows[1], table.column("field_s_re")).empty());
    CHECK(table.text(table.rows[1], table.column("caustic")) == "true");
    CHECK(text.find("nan") == std::string::npos);
    std::ostringstream streamed;
    write_paths(streamed, PathFormat::csv, context, source, receiver, {direct_path(), caustic_path()});
    CHECK(streamed.str() == text);
}

TEST_CASE("path JSON and text: absent values are null and '-', never NaN", "[output][paths]") {
    const std::string json = format_paths(PathFormat::json, context, source, receiver, {caustic_path()});
    CHECK(json.find("\"spreading_m\": null") != std::string::npos);
    CHECK(json.find("\"field_s\": [null,null]") != std::string::npos);
    CHECK(json.find("nan") == std::string::npos);
    const std::string text = format_paths(PathFormat::text, context, source, receiver, {direct_path(), caustic_path()});
    CHECK(text.find("caustic") != std::string::npos);
    CHECK(text.find("nan") == std::string::npos);
}

TEST_CASE("path outputs refuse a NaN time in every format, naming the field", "[output][paths]") {
    ConnectedPath broken = direct_path();
    broken.time_s = std::numeric_limits<double>::quiet_NaN();
    CHECK_THROWS_WITH(format_paths(PathFormat::csv, context, source, receiver, {broken}), Catch::Contains("time_ns"));
    CHECK_THROWS_WITH(format_paths(PathFormat::json, context, source, receiver, {broken}),
                      Catch::Contains("paths[0].time_ns"));
    CHECK_THROWS_WITH(format_paths(PathFormat::text, context, source, receiver, {broken}), Catch::Contains("time (ns)"));
    ConnectedPath no_field = direct_path();  // not at a caustic, so the field must be finite
    no_field.amplitude.field_p = {std::numeric_limits<double>::infinity(), 0.0};
    CHECK_THROWS_WITH(format_paths(PathFormat::csv, context, source, receiver, {no_field}), Catch::Contains("field_p_re"));
}

TEST_CASE("path batches: ids and errors with commas, quotes and line breaks are quoted (RFC 4180)",
          "[output][paths]") {
    std::vector<PathPair> pairs(2);
    pairs[0].input_line = 2;
    pairs[0].name = "a,\"b\"";
    pairs[0].source = source;
    pairs[0].receiver = receiver;
    pairs[1].input_line = 3;
    pairs[1].name = "c";
    pairs[1].error = "line 3: bad\rvalue";
    const BatchFormatter csv(PathFormat::csv, context, pairs);
    std::string text = csv.begin();
    csv.append_pair(text, 0, pairs[0], PairPaths{{direct_path()}, ""});
    csv.append_pair(text, 1, pairs[1], PairPaths{});
    text += csv.end(2, 1);
    CHECK(text.find("\n2,\"a,\"\"b\"\"\",1,direct,") != std::string::npos);
    CHECK(text.find(",\"line 3: bad\rvalue\"\n") != std::string::npos);
    const BatchFormatter json(PathFormat::json, context, pairs);
    std::string doc = json.begin();
    json.append_pair(doc, 1, pairs[1], PairPaths{});
    CHECK(doc.find("\"error\":\"line 3: bad\\rvalue\"") != std::string::npos);
}

TEST_CASE("path formats parse by name", "[output][paths]") {
    CHECK(parse_path_format("text") == PathFormat::text);
    CHECK(parse_path_format("csv") == PathFormat::csv);
    CHECK(parse_path_format("json") == PathFormat::json);
    CHECK_THROWS_AS(parse_path_format("xml"), DataInputError);
}
