#include <catch2/catch.hpp>

#include "support/run_cli.hpp"

using firnray::test::run_firnray;

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
