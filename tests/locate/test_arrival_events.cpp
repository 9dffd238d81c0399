// The arrivals file of `firnray locate`: every bad row (unknown channel, a NaN time, one pulse
// only, a channel three times in an event) fails its own event with a message naming the line,
// and the rest of the batch is fitted; a missing column fails the whole file.
#include <catch2/catch.hpp>

#include <random>
#include <sstream>

#include <fmt/format.h>

#include "core/errors.hpp"
#include "locate/arrival_events.hpp"
#include "locate/locate_test_support.hpp"
#include "locate/source_fit.hpp"
#include "model/model_file.hpp"
#include "solver/closed_form_solver.hpp"
#include "support/run_cli.hpp"

using namespace firnray;

namespace {

// The rows of a good event at `source`, as ARRIVALS.csv lines.
std::string good_rows(const RaySolver& solver, const Station& station, const std::string& name, const Point& source) {
    std::mt19937_64 rng(3);
    const ArrivalEvent event = test::synthetic_event(solver, station, source, 0.3, 1000.0, rng);
    std::string rows;
    for (const MeasuredPulse& p : event.pulses)
        rows += fmt::format("{},{},{:.4f}\n", name, station.receivers[p.channel].name, p.time_s * 1e9);
    return rows;
}

const ArrivalEvent& event_named(const std::vector<ArrivalEvent>& events, const std::string& name) {
    for (const ArrivalEvent& e : events)
        if (e.name == name) return e;
    FAIL("no event " << name);
    return events.front();
}

}  // namespace

TEST_CASE("bad rows of an arrivals file fail their own event with the line, the rest is fitted", "[locate][input]") {
    ClosedFormSolver solver(std::make_shared<const FirnModel>(default_model()));
    const Station station = test::three_string_station();
    const std::string folder = test::temp_folder("arrivals");
    std::string text = "event,channel,time_ns\n";            // line 1
    text += "unknown,A1,100\nunknown,Z9,120\nunknown,B1,130\nunknown,C1,140\n";  // lines 2-5: Z9 unknown
    text += "nan-time,A1,100\nnan-time,B1,nan\nnan-time,C1,1\nnan-time,A2,3\n";  // lines 6-9
    text += "single,A1,100\n";                                                    // line 10
    text += "triple,A1,100\ntriple,A1,110\ntriple,A1,120\ntriple,B1,5\ntriple,C1,6\n";  // lines 11-15
    text += good_rows(solver, station, "good", Point{200.0, 100.0, -120.0});
    const std::string path = test::write_file(folder + "/arrivals.csv", text);

    const auto events = read_arrival_events(path, station, 0.5);
    REQUIRE(events.size() == 5);
    CHECK_THAT(event_named(events, "unknown").error, Catch::Contains(":3:") && Catch::Contains("'Z9'") &&
                                                         Catch::Contains("channel"));
    CHECK_THAT(event_named(events, "nan-time").error, Catch::Contains(":7:") && Catch::Contains("time_ns") &&
                                                          Catch::Contains("not a finite number"));
    CHECK_THAT(event_named(events, "single").error, Catch::Contains(":10:") && Catch::Contains("1 pulse"));
    CHECK_THAT(event_named(events, "triple").error, Catch::Contains(":13:") && Catch::Contains("third pulse") &&
                                                        Catch::Contains("'A1'"));
    CHECK(event_named(events, "good").error.empty());

    const SourceLocator locator(solver, station, test::small_search_options());
    const auto fits = locate_events(locator, events, 1, {});
    std::size_t fitted = 0;
    for (const EventFit& f : fits) {
        if (f.event == "good") {
            REQUIRE(f.best);
            ++fitted;
        } else {
            CHECK_FALSE(f.best);
            CHECK_FALSE(f.error.empty());
        }
    }
    CHECK(fitted == 1);
}

TEST_CASE("an unknown channel gets a did-you-mean, a bad sigma is named, pulses on one string are refused",
          "[locate][input]") {
    const Station station = test::three_string_station();
    const std::string folder = test::temp_folder("arrivals-more");
    const std::string path = test::write_file(folder + "/a.csv",
                                              "event,channel,time_ns,sigma_ns\n"
                                              "e1,A11,1,\n"
                                              "e2,A1,1,-2\n"
                                              "e3,A1,1,\ne3,A2,2,\ne3,A3,3,\ne3,A4,4,\n");
    const auto events = read_arrival_events(path, station, 0.5);
    REQUIRE(events.size() == 3);
    CHECK_THAT(events[0].error, Catch::Contains("did you mean 'A1'"));
    CHECK_THAT(events[1].error, Catch::Contains(":3:") && Catch::Contains("sigma_ns"));
    CHECK_THAT(events[2].error, Catch::Contains("one vertical line") && Catch::Contains("azimuth"));
}

TEST_CASE("an arrivals file without a required column is refused naming the column", "[locate][input]") {
    const Station station = test::three_string_station();
    const std::string folder = test::temp_folder("arrivals-columns");
    const std::string path = test::write_file(folder + "/a.csv", "event,channel,time\ne,A1,1\n");
    CHECK_THROWS_WITH(read_arrival_events(path, station, 0.5), Catch::Contains("time_ns"));
    CHECK_THROWS_AS(read_arrival_events(path, station, 0.5), DataInputError);
    CHECK_THROWS_AS(read_arrival_events(path, station, 0.0), DataInputError);
}
