// Every plot the commands write parses as SVG: rendered with rsvg-convert (librsvg, Debian
// package librsvg2-bin). And an interrupted long run leaves no output file behind.
#include <catch2/catch.hpp>

#include <chrono>
#include <csignal>
#include <cstdlib>
#include <filesystem>
#include <thread>
#include <sys/wait.h>
#include <fcntl.h>
#include <unistd.h>

#include "support/run_cli.hpp"

using namespace firnray::test;
namespace fs = std::filesystem;

namespace {
bool renders(const std::string& svg) {
    const std::string png = svg + ".png";
    const int status = std::system(("rsvg-convert '" + svg + "' -o '" + png + "' 2>/dev/null").c_str());
    return status == 0 && fs::exists(png) && fs::file_size(png) > 1000;
}
}  // namespace

TEST_CASE("profile, fit and trace plots render with rsvg-convert (librsvg)", "[cli][plots]") {
    const std::string dir = temp_folder("plots");
    REQUIRE(run_firnray({"profile", "--to-depth", "150", "--plot", dir + "/profile.svg", "-o", dir + "/p.csv"}).exit_code == 0);
    CHECK(renders(dir + "/profile.svg"));
    REQUIRE(run_firnray({"profile", "--model", source_path("models/demo-site.toml"), "--to-depth", "150", "--plot",
                         dir + "/layered.svg", "-o", dir + "/l.csv"})
                .exit_code == 0);
    CHECK(renders(dir + "/layered.svg"));
    const auto fit = run_firnray({"profile", "--fit", source_path("models/synthetic-density.csv"), "--density-column",
                                  "density_kg_m3", "--density-rule", "kovacs", "--plot", dir + "/fit.svg"});
    INFO(fit.err);
    REQUIRE(fit.exit_code == 0);
    CHECK(renders(dir + "/fit.svg"));
    REQUIRE(run_firnray({"trace", "--from", "0,-60", "--zenith-range", "20:160:10", "--max-distance", "800", "--plot",
                         dir + "/fan.svg", "-o", dir + "/fan.csv"})
                .exit_code == 0);
    CHECK(renders(dir + "/fan.svg"));
    REQUIRE(run_firnray({"trace", "--from", "0,10", "--zenith-deg", "120,150", "--max-distance", "300", "--plot",
                         dir + "/from-air.svg", "-o", dir + "/air.csv"})
                .exit_code == 0);
    CHECK(renders(dir + "/from-air.svg"));
}

TEST_CASE("an interrupted long run (SIGINT) exits 130 and leaves no output file, not even a partial one", "[cli][interrupt]") {
    const std::string dir = temp_folder("interrupt");
    const std::string grid = dir + "/grid.csv";
    const pid_t child = fork();
    REQUIRE(child >= 0);
    if (child == 0) {
        // A delay table far too big to finish in the time allowed: 60 000 sources x 12 channels
        // on the numeric solver (about a millisecond per pair), with little memory.
        const int null = ::open("/dev/null", 0);
        dup2(null, 0);
        const std::string station = source_path("demo/station.toml");
        execl(FIRNRAY_EXE, FIRNRAY_EXE, "delays", "--station", station.c_str(), "--source-distance", "0:2000:10",
              "--source-depth", "1:300:1", "--solver", "numeric", "--quiet", "--threads", "1", "-o", grid.c_str(),
              static_cast<char*>(nullptr));
        _exit(127);
    }
    std::this_thread::sleep_for(std::chrono::milliseconds(700));
    kill(child, SIGINT);
    int status = 0;
    waitpid(child, &status, 0);
    REQUIRE(WIFEXITED(status));
    CHECK(WEXITSTATUS(status) == 130);
    CHECK_FALSE(fs::exists(grid));
    CHECK(fs::is_empty(dir));  // no temporary files left either
}
