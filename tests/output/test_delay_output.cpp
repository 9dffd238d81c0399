// Rendering delay tables (src/output/delay_output.*): the long CSV and the JSON, with an error row
// for a bad source and one for a failed channel that names its receiver. Expected times are
// distance × n / c in a homogeneous medium (definition).
#include <catch2/catch.hpp>

#include <cmath>
#include <sstream>
#include <string>
#include <vector>

#include "core/constants.hpp"
#include "core/errors.hpp"
#include "io/csv_reader.hpp"
#include "model/model_file.hpp"
#include "output/delay_output.hpp"
#include "solver/closed_form_solver.hpp"
#include "support/straight_line_solver.hpp"

using namespace firnray;

namespace {

std::vector<Receiver> two_receivers() {
    std::vector<Receiver> receivers(2);
    receivers[0].name = "A, the first";  // a comma: the field must be quoted
    receivers[0].z_m = -40.0;
    receivers[1].name = "B";
    receivers[1].x_m = 30.0;
    receivers[1].z_m = -90.0;
    return receivers;
}

struct Computed {
    std::vector<Receiver> receivers = two_receivers();
    std::vector<DelaySource> sources;
    std::vector<SourceDelays> delays;
};

// Three sources: one at receiver A (its channel fails), one ordinary, one bad input row.
Computed computed() {
    Computed c;
    ClosedFormSolver solver(test::homogeneous_model(1.78));
    c.sources.resize(3);
    c.sources[0].name = "at A";
    c.sources[0].input_line = 2;
    c.sources[0].position = {0.0, 0.0, -40.0};
    c.sources[1].name = "far \"one\"";
    c.sources[1].input_line = 3;
    c.sources[1].position = {200.0, 0.0, -60.0};
    c.sources[2].name = "broken";
    c.sources[2].input_line = 4;
    c.sources[2].error = "sources.csv:4: key 'x_m': not a number";
    DelayOptions options;
    options.reference = 1;
    c.delays = compute_delays(solver, c.receivers, c.sources, options);
    return c;
}

}  // namespace

TEST_CASE("delay CSV: a failed channel gets an error row naming its receiver, the other channel its paths",
          "[output][delays]") {
    const Computed c = computed();
    DelayOptions options;
    options.reference = 1;
    for (const bool derivatives : {false, true}) {
        const std::string text = delay_table_csv(c.sources, c.delays, c.receivers, options, derivatives);
        const CsvTable table = parse_csv(text, "delays.csv");
        const std::size_t columns = derivatives ? 16 : 13;  // with the events column
        REQUIRE(table.columns.size() == columns);
        const std::size_t source = table.column("name"), receiver = table.column("receiver"),
                          kind = table.column("kind"), time = table.column("time_ns"), error = table.column("error");
        // at A: an error row for A, then B's paths; far: both receivers' paths; broken: one error row.
        const CsvRow& failed = table.rows.front();
        CHECK(table.text(failed, source) == "at A");
        CHECK(table.text(failed, receiver) == "A, the first");
        CHECK(table.text(failed, kind).empty());
        CHECK(table.text(failed, error).find("receiver 'A, the first'") != std::string::npos);
        const CsvRow& next = table.rows[1];
        CHECK(table.text(next, source) == "at A");
        CHECK(table.text(next, receiver) == "B");
        CHECK(table.text(next, kind) == "direct");
        CHECK(table.number(next, time) ==
              Approx(1.78 * std::hypot(30.0, 50.0) / speed_of_light * seconds_to_ns).epsilon(1e-9));
        CHECK(table.text(next, error).empty());
        std::size_t far_rows = 0, far_a_rows = 0;
        for (const CsvRow& row : table.rows) {
            if (table.text(row, source) != "far \"one\"") continue;
            ++far_rows;
            far_a_rows += table.text(row, receiver) == "A, the first";
            CHECK(table.text(row, error).empty());
        }
        CHECK(far_rows >= 2);
        CHECK(far_a_rows >= 1);
        const CsvRow& broken = table.rows.back();
        CHECK(table.text(broken, source) == "broken");
        CHECK(table.text(broken, receiver).empty());
        CHECK(table.text(broken, error) == "sources.csv:4: key 'x_m': not a number");
        // Every row has every column.
        for (const CsvRow& row : table.rows) CHECK(row.fields.size() == columns);
    }
}

TEST_CASE("delay CSV: quotes are doubled and line breaks kept inside quotes (RFC 4180)", "[output][delays]") {
    Computed c = computed();
    c.delays[2].error = c.sources[2].error = "sources.csv:4: key 'x_m': not a number\r\nsecond line";
    DelayOptions options;
    options.reference = 1;
    const std::string text = delay_table_csv(c.sources, c.delays, c.receivers, options, false);
    CHECK(text.find("\"far \"\"one\"\"\",3,") != std::string::npos);
    CHECK(text.find("\"sources.csv:4: key 'x_m': not a number\r\nsecond line\"\n") != std::string::npos);
    CHECK(text.find("\"at A\"") == std::string::npos);  // a plain name stays plain
}

TEST_CASE("delay JSON: a failed channel has an error instead of paths", "[output][delays]") {
    Computed c = computed();
    c.delays[2].error = c.sources[2].error = "sources.csv:4: key 'x_m': not a number\r\nsecond line";
    DelayOptions options;
    options.reference = 1;
    const std::string json = delay_table_json(c.sources, c.delays, c.receivers, options, true, default_model());
    CHECK(json.find("\"receiver\": \"A, the first\",\n          \"error\": \"receiver 'A, the first'") != std::string::npos);
    CHECK(json.find("\"error\": \"sources.csv:4: key 'x_m': not a number\\r\\nsecond line\"") != std::string::npos);
    CHECK(json.find("nan") == std::string::npos);
    // Streaming and in-memory forms agree.
    std::ostringstream streamed;
    write_delay_table_json(streamed, c.sources, c.delays, c.receivers, options, true, default_model());
    CHECK(streamed.str() == json);
}

TEST_CASE("delay outputs refuse a NaN time with a NumericalError naming the field", "[output][delays]") {
    Computed c = computed();
    c.delays[1].receivers[0].paths[0].time_s = std::nan("");  // receiver 1 is the reference
    DelayOptions options;
    options.reference = 1;
    CHECK_THROWS_WITH(delay_table_csv(c.sources, c.delays, c.receivers, options, false), Catch::Contains("'time_ns' is NaN"));
    CHECK_THROWS_WITH(delay_table_json(c.sources, c.delays, c.receivers, options, false, default_model()),
                      Catch::Contains("sources[1].receivers[0].first_minus_reference_first_ns"));
}
