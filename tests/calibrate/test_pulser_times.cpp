// Reading TIMES.csv: pulses grouped by pulser, and every bad row reported at its file, line,
// column and character column.
#include <catch2/catch.hpp>

#include <string>

#include "calibrate/pulser_times.hpp"
#include "core/errors.hpp"
#include "locate/locate_test_support.hpp"
#include "support/run_cli.hpp"

using namespace firnray;

namespace {

const std::string header = "pulser,pulser_x_m,pulser_y_m,pulser_z_m,channel,time_ns,sigma_ns\n";

std::string times_file(const std::string& name, const std::string& rows) {
    return test::write_file(test::temp_folder("pulser-times") + "/" + name, header + rows);
}

// The error that reading `rows` raises.
DataInputError read_error(const std::string& rows) {
    const Station station = test::three_string_station();
    try {
        read_pulser_times(times_file("bad.csv", rows), station, 0.5);
    } catch (const DataInputError& e) {
        return e;
    }
    FAIL("no error");
    return DataInputError("");
}

}  // namespace

TEST_CASE("pulser times group rows by pulser in the order of their first row, with the default sigma", "[calibrate]") {
    const Station station = test::three_string_station();
    const std::string path = times_file("good.csv",
                                        "# a comment\n"
                                        "hole-30m,100,20,-30,A1,1200.5,\n"
                                        "surface,50,0,-2,A1,900,0.8\n"
                                        "hole-30m,100,20,-30,B2,1250,0.4\n"
                                        "surface,50,0,-2,C3,950,\n"
                                        "hole-30m,100,20,-30,A1,1300,\n");
    const PulserTimes times = read_pulser_times(path, station, 0.5);
    REQUIRE(times.pulsers.size() == 2);
    CHECK(times.pulse_count() == 5);
    const Pulser& hole = times.pulsers[0];
    CHECK(hole.name == "hole-30m");
    CHECK(hole.position.z == -30.0);
    REQUIRE(hole.pulses.size() == 3);
    CHECK(hole.pulses[0].sigma_ns == 0.5);
    CHECK(hole.pulses[1].sigma_ns == 0.4);
    CHECK(hole.pulses[1].channel == station.index_of("B2"));
    CHECK(hole.pulses[2].line == 7);
    CHECK(times.pulsers[1].pulses[0].sigma_ns == 0.8);
}

TEST_CASE("pulser times name the line and column of an unknown channel with a did-you-mean", "[calibrate]") {
    const DataInputError e = read_error("p,0,0,-30,A1,100,\np,0,0,-30,B5,120,\n");
    CHECK_THAT(e.what(), Catch::Contains("'B5' is not a receiver") && Catch::Contains("did you mean"));
    CHECK(e.where().line == 3);
    CHECK(e.where().key == "channel");
    CHECK(e.where().column == 11);
}

TEST_CASE("pulser times refuse a pulser with one pulse only, naming it and its line", "[calibrate]") {
    const DataInputError e = read_error("p,0,0,-30,A1,100,\np,0,0,-30,B1,120,\nlonely,5,5,-40,A1,90,\n");
    CHECK_THAT(e.what(), Catch::Contains("pulser 'lonely' has one pulse only"));
    CHECK(e.where().line == 4);
    CHECK(e.where().key == "pulser");
}

TEST_CASE("pulser times refuse a pulser whose position differs between rows, a third pulse on a channel and bad numbers",
          "[calibrate]") {
    DataInputError e = read_error("p,0,0,-30,A1,100,\np,0,0,-31,B1,120,\n");
    CHECK_THAT(e.what(), Catch::Contains("pulser 'p' is at (0, 0, -31) m here but at (0, 0, -30) m on line 2"));
    CHECK(e.where().key == "pulser_z_m");
    e = read_error("p,0,0,-30,A1,100,\np,0,0,-30,A1,120,\np,0,0,-30,A1,140,\n");
    CHECK_THAT(e.what(), Catch::Contains("channel 'A1' has a third pulse of pulser 'p'"));
    CHECK(e.where().line == 4);
    e = read_error("p,0,0,-30,A1,nan,\np,0,0,-30,B1,120,\n");
    CHECK(e.where().key == "time_ns");
    CHECK(e.where().line == 2);
    e = read_error("p,0,0,-30,A1,100,0\np,0,0,-30,B1,120,\n");
    CHECK_THAT(e.what(), Catch::Contains("must be above 0 ns"));
    CHECK(e.where().key == "sigma_ns");
    e = read_error(",0,0,-30,A1,100,\n");
    CHECK_THAT(e.what(), Catch::Contains("the pulser name is empty"));
    const Station station = test::three_string_station();
    const std::string no_time =
        test::write_file(test::temp_folder("pulser-times") + "/no-time.csv", "pulser,pulser_x_m,pulser_y_m,pulser_z_m,channel\n");
    CHECK_THROWS_WITH(read_pulser_times(no_time, station, 0.5), Catch::Contains("no column named 'time_ns'"));
    CHECK_THROWS_AS(read_pulser_times(times_file("ok.csv", "p,0,0,-30,A1,100,\np,0,0,-30,B1,120,\n"), station, 0.0),
                    DataInputError);
}
