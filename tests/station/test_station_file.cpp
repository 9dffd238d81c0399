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
    CHECK(msg.find("st.toml:7: key 'receiver[1].name'") != std::string::npos);
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
    CHECK(failure_of("[[receiver]\n").find("TOML syntax error") != std::string::npos);
    CHECK(failure_of("name = \"empty\"\n").find("no receivers") != std::string::npos);
    CHECK(failure_of("[[receiver]]\nname = \"R\"\nx_m = nan\ny_m = 0\nz_m = -2\n").find("finite") != std::string::npos);
}

TEST_CASE("station file: a missing file is a model-input error naming the path", "[station][bad-input]") {
    CHECK_THROWS_WITH(load_station_file("/nonexistent/station.toml"), Catch::Contains("/nonexistent/station.toml"));
}

TEST_CASE("station file: misspelt keys get a did-you-mean, as in model files", "[station][bad-input]") {
    CHECK(failure_of("[[receiver]]\nname = \"R\"\nx_m = 0\ny_m = 0\nz_m = -2\ndepht_m = 3\n") ==
          "st.toml:6: key 'receiver[0].depht_m': unknown key (did you mean 'depth_m'?) in a [[receiver]] table; the keys "
          "there are: name, x_m, y_m, z_m, depth_m, in_air");
    CHECK(failure_of("[[recevier]]\nname = \"R\"\n").find("st.toml:1: key 'recevier': unknown key (did you mean "
                                                          "'receiver'?) at the top level of a station file") == 0);
    CHECK(failure_of("[[string]]\nname = \"S\"\nx_m = 0\ny_mm = 0\n").find("(did you mean 'y_m'?)") != std::string::npos);
    // x_m of a receiver in a string belongs to the string: no suggestion, the reason instead.
    CHECK(failure_of("[[string]]\nname = \"S\"\nx_m = 0\ny_m = 0\n[[string.receiver]]\nname = \"a\"\nx_m = 1\nz_m = -1\n")
              .find("st.toml:7: key 'string[0].receiver[0].x_m': not used in a [[string.receiver]] table (x_m and "
                    "y_m are the string's)") == 0);
}

TEST_CASE("station file: positions out of range, wrong types and bad bytes", "[station][bad-input]") {
    CHECK(failure_of("[[receiver]]\nname = \"R\"\nx_m = 1e300\ny_m = 0\nz_m = -2\n")
              .find("st.toml:3: key 'receiver[0].x_m': x_m = 1e+300 m is above 100000 m") == 0);
    CHECK(failure_of("[[receiver]]\nname = \"R\"\nx_m = 0\ny_m = 0\ndepth_m = 1e6\n")
              .find("st.toml:5: key 'receiver[0].depth_m': depth_m = 1e+06 m is above 10000 m") == 0);
    CHECK(failure_of("[[receiver]]\nname = \"R\"\nx_m = 0\ny_m = 0\nz_m = 2e4\nin_air = true\n").find("above 10000 m") !=
          std::string::npos);
    CHECK(failure_of("[[receiver]]\nname = \"R\"\nx_m = 0\ny_m = 0\nz_m = -2\nin_air = \"no\"\n")
              .find("key 'receiver[0].in_air': must be true or false, but is a string") != std::string::npos);
    CHECK(failure_of("name = 5\n[[receiver]]\nname = \"R\"\nx_m = 0\ny_m = 0\nz_m = -2\n")
              .find("st.toml:1: key 'name': must be a string") == 0);
    CHECK(failure_of("[[receiver]]\nname = \"\"\nx_m = 0\ny_m = 0\nz_m = -2\n").find("must not be empty") != std::string::npos);
    CHECK(failure_of("receiver = 3\n").find("must be an array of tables ([[receiver]])") != std::string::npos);
    CHECK(failure_of("[[string]]\nname = \"S\"\nx_m = 0\ny_m = 0\n").find("string 'S' has no receivers") != std::string::npos);
    const std::string binary = failure_of(std::string("\x7f" "ELF\x02\x01\0\0\xff", 9));
    CHECK(binary.find("st.toml:1: TOML syntax error") == 0);
    for (const char ch : binary) CHECK((static_cast<unsigned char>(ch) >= 0x20 && static_cast<unsigned char>(ch) < 0x7f));
}

TEST_CASE("station file: a folder is named as such", "[station][bad-input]") {
    CHECK_THROWS_WITH(load_station_file("/tmp"), Catch::Contains("/tmp: is a folder, not a station file"));
}
