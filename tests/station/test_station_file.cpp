// Station files: what loads, and every bad input named by file, line and key (issue: station design).
#include <catch2/catch.hpp>

#include "core/errors.hpp"
#include "station/station.hpp"

using namespace firnray;

namespace {
const char* good = R"(name = "test station"
[[string]]
name = "A"
x_m = 10.0
y_m = -5
[[string.receiver]]
name = "A1"
depth_m = 40
[[string.receiver]]
name = "A2"
z_m = -60.0

[[receiver]]
name = "P"
x_m = 0
y_m = 0
z_m = 3.0
in_air = true
)";

std::string failure_of(const std::string& text) {
    try {
        parse_station(text, "st.toml");
    } catch (const ModelInputError& e) {
        return e.what();
    }
    return "(no error)";
}
}  // namespace

TEST_CASE("station file: strings share their x, y, depth_m and z_m both work", "[station]") {
    const Station s = parse_station(good, "st.toml");
    REQUIRE(s.receivers.size() == 3);
    CHECK(s.name == "test station");
    CHECK(s.receivers[0].name == "A1");
    CHECK(s.receivers[0].string_name == "A");
    CHECK(s.receivers[0].x_m == 10.0);
    CHECK(s.receivers[0].y_m == -5.0);
    CHECK(s.receivers[0].z_m == -40.0);
    CHECK(s.receivers[1].z_m == -60.0);
    CHECK(s.receiver("P").in_air);
    CHECK(s.index_of("A2") == 1);
    CHECK_THROWS_AS(s.receiver("nope"), DataInputError);
}

TEST_CASE("station file: duplicate receiver names are refused with the line", "[station][bad-input]") {
    const std::string text = "[[receiver]]\nname = \"R\"\nx_m = 0\ny_m = 0\nz_m = -10\n"
                             "[[receiver]]\nname = \"R\"\nx_m = 1\ny_m = 0\nz_m = -10\n";
    const std::string msg = failure_of(text);
    CHECK(msg.find("duplicate receiver name 'R'") != std::string::npos);
    CHECK(msg.find("st.toml:6") != std::string::npos);
}

TEST_CASE("station file: a receiver above the surface must say in_air", "[station][bad-input]") {
    const std::string msg = failure_of("[[receiver]]\nname = \"R\"\nx_m = 0\ny_m = 0\nz_m = 2\n");
    CHECK(msg.find("above the surface") != std::string::npos);
    CHECK(msg.find("receiver[0].z_m") != std::string::npos);
}

TEST_CASE("station file: missing coordinates are named", "[station][bad-input]") {
    CHECK(failure_of("[[receiver]]\nname = \"R\"\ny_m = 0\nz_m = -2\n").find("receiver[0].x_m") != std::string::npos);
    CHECK(failure_of("[[receiver]]\nname = \"R\"\nx_m = 0\ny_m = 0\n").find("receiver[0].z_m") != std::string::npos);
    CHECK(failure_of("[[string]]\nname = \"S\"\nx_m = 0\n[[string.receiver]]\nname = \"a\"\nz_m = -1\n")
              .find("string[0].y_m") != std::string::npos);
}

TEST_CASE("station file: unknown and mistyped keys, bad TOML, empty station", "[station][bad-input]") {
    CHECK(failure_of("[[receiver]]\nname = \"R\"\nx_m = 0\ny_m = 0\nz_m = -2\ndepht_m = 3\n").find("st.toml:6: key 'receiver[0].depht_m'") !=
          std::string::npos);
    CHECK(failure_of("[[receiver]]\nname = \"R\"\nx_m = \"zero\"\ny_m = 0\nz_m = -2\n").find("must be a number") !=
          std::string::npos);
    CHECK(failure_of("[[receiver]\n").find("not valid TOML") != std::string::npos);
    CHECK(failure_of("name = \"empty\"\n").find("no receivers") != std::string::npos);
    CHECK(failure_of("[[receiver]]\nname = \"R\"\nx_m = nan\ny_m = 0\nz_m = -2\n").find("finite") != std::string::npos);
}

TEST_CASE("station file: a missing file is a model-input error naming the path", "[station][bad-input]") {
    CHECK_THROWS_WITH(load_station_file("/nonexistent/station.toml"), Catch::Contains("/nonexistent/station.toml"));
}
