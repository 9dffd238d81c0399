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
