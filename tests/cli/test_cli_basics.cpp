#include <catch2/catch.hpp>

#include "support/json_reader.hpp"
#include "support/run_cli.hpp"

using firnray::test::run_firnray;
using firnray::test::source_path;
using firnray::test::JsonValue;
using firnray::test::parse_json;

TEST_CASE("firnray --version names the program", "[cli]") {
    const auto r = run_firnray({"--version"});
    CHECK(r.exit_code == 0);
    CHECK(r.out.find("firnray") != std::string::npos);
}

TEST_CASE("an unknown command is a usage error with exit code 2", "[cli]") {
    const auto r = run_firnray({"no-such-command"});
    CHECK(r.exit_code == 2);
    CHECK_FALSE(r.err.empty());
}

#include <cstdlib>
#include <fstream>
#include <sstream>

TEST_CASE("no test title contains a semicolon, so CTest runs every test case (catch_discover_tests splits titles at semicolons)",
          "[cli][suite]") {
    // Lists the test cases through the test binary itself (Catch2 v2 --list-test-names-only).
    const std::string list = firnray::test::temp_folder("list") + "/names.txt";
    const std::string self = FIRNRAY_TEST_EXE;
    REQUIRE(std::system(("'" + self + "' --list-test-names-only > '" + list + "'").c_str()) >= 0);
    std::ifstream in(list);
    std::string line;
    int names = 0;
    while (std::getline(in, line)) {
        if (line.empty()) continue;
        ++names;
        INFO(line);
        CHECK(line.find(';') == std::string::npos);
    }
    CHECK(names > 100);
}

TEST_CASE("one name per idea: every JSON output describes its model as an object, batch outputs name rows `name`",
          "[cli][vocabulary]") {
    const std::string station = source_path("demo/station.toml");
    const std::vector<std::vector<std::string>> runs = {
        {"connect", "--source", "250,-20", "--receiver", "0,-100", "--format", "json"},
        {"connect", "--pairs", source_path("demo/pairs.csv"), "--format", "json"},
        {"trace", "--from", "0,-60", "--zenith-range", "60:120:30", "--max-distance", "300", "--format", "json"},
        {"profile", "--depths", "0:10:5", "--format", "json"},
        {"depths", "--depths", "40,80", "--distance-cells", "20", "--depth-cells", "10", "--format", "json", "--quiet"},
        {"delays", "--station", station, "--sources", source_path("demo/calibration-sources.csv"), "--format", "json",
         "--quiet"},
    };
    for (const auto& args : runs) {
        INFO(args[0] << " " << args[1]);
        const auto r = run_firnray(args);
        REQUIRE(r.exit_code == 0);
        const JsonValue json = parse_json(r.out);
        REQUIRE(json["model"].type == JsonValue::Type::object);
        CHECK(json["model"]["name"].str() == "generic polar firn (built-in; not a real site)");
        CHECK(json["model"]["origin"].str() == "built-in");
        CHECK(json["model"].has("index"));
    }
    const auto pairs = run_firnray({"connect", "--pairs", source_path("demo/pairs.csv"), "--format", "csv"});
    CHECK(pairs.out.rfind("input_line,name,", 0) == 0);
    CHECK(parse_json(run_firnray({"connect", "--pairs", source_path("demo/pairs.csv"), "--format", "json"}).out)["pairs"][0]["name"]
              .str() == "refracted-and-reflected");
    const auto delays = run_firnray({"delays", "--station", station, "--sources",
                                     source_path("demo/calibration-sources.csv"), "--quiet"});
    CHECK(delays.out.rfind("name,input_line,receiver,", 0) == 0);
    // The fit report's formula is not a site model: it has a member of its own.
    const auto fit = run_firnray({"profile", "--fit", source_path("models/synthetic-density.csv"), "--density-column",
                                  "density_kg_m3", "--density-rule", "kovacs", "--format", "json"});
    REQUIRE(fit.exit_code == 0);
    CHECK(parse_json(fit.out)["formula"].str().rfind("n(z) = ", 0) == 0);
    CHECK_FALSE(parse_json(fit.out).has("model"));
}
