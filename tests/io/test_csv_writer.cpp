// The CSV field escaper and the finite-number check every output uses. Quoting follows RFC 4180
// (fields with a comma, a double quote, CR or LF are quoted, quotes doubled); expected texts are
// written out by hand.
#include <catch2/catch.hpp>

#include <cmath>
#include <limits>
#include <string>

#include <fmt/format.h>

#include "core/errors.hpp"
#include "io/csv_reader.hpp"
#include "io/csv_writer.hpp"

using namespace firnray;

TEST_CASE("CSV fields: plain text is kept as it is", "[io][csv]") {
    CHECK(csv_field("") == "");
    CHECK(csv_field("A1") == "A1");
    CHECK(csv_field("pulser D 150m") == "pulser D 150m");
    CHECK(csv_field(" leading and trailing ") == " leading and trailing ");
    CHECK(csv_field("semi;colon\ttab") == "semi;colon\ttab");
    CHECK(csv_field("névé") == "névé");           // UTF-8 passes through
    CHECK(csv_field("\xff\x01") == "\xff\x01");    // so does any other byte
}

TEST_CASE("CSV fields: commas, quotes, CR and LF are quoted and quotes doubled (RFC 4180)", "[io][csv]") {
    CHECK(csv_field("a,b") == "\"a,b\"");
    CHECK(csv_field(",") == "\",\"");
    CHECK(csv_field("say \"hi\"") == "\"say \"\"hi\"\"\"");
    CHECK(csv_field("\"") == "\"\"\"\"");
    CHECK(csv_field("\"\"") == "\"\"\"\"\"\"");
    CHECK(csv_field("line\nbreak") == "\"line\nbreak\"");
    CHECK(csv_field("carriage\rreturn") == "\"carriage\rreturn\"");
    CHECK(csv_field("crlf\r\n") == "\"crlf\r\n\"");
    CHECK(csv_needs_quotes("x\ry"));
    CHECK_FALSE(csv_needs_quotes("x y"));
}

TEST_CASE("CSV fields: the escaper writes into strings and fmt buffers alike", "[io][csv]") {
    std::string text = "name,";
    append_csv_field(text, "a \"b\", c");
    CHECK(text == "name,\"a \"\"b\"\", c\"");
    fmt::memory_buffer buffer;
    append_csv_field(buffer, "a \"b\", c");
    CHECK(fmt::to_string(buffer) == "\"a \"\"b\"\", c\"");
}

TEST_CASE("CSV fields: what the writer quotes, the reader reads back", "[io][csv]") {
    const std::string awkward = "x, \"quoted\" y";
    const CsvTable table = parse_csv("name,value\n" + csv_field(awkward) + ",1\n", "round-trip.csv");
    REQUIRE(table.rows.size() == 1);
    CHECK(table.text(table.rows[0], table.column("name")) == awkward);
}

TEST_CASE("require_finite: finite values pass, -0.0 tiny and huge included, NaN and infinities are refused "
          "naming the field",
          "[io][csv]") {
    CHECK(require_finite(0.0, "x") == 0.0);
    CHECK(std::signbit(require_finite(-0.0, "x")));
    CHECK(require_finite(5e-324, "x") == 5e-324);
    CHECK(require_finite(std::numeric_limits<double>::max(), "x") == std::numeric_limits<double>::max());
    CHECK_THROWS_AS(require_finite(std::nan(""), "time_ns"), NumericalError);
    CHECK_THROWS_WITH(require_finite(std::nan(""), "time_ns"), Catch::Contains("'time_ns' is NaN"));
    CHECK_THROWS_WITH(require_finite(std::numeric_limits<double>::infinity(), "amplitude_per_m"),
                      Catch::Contains("'amplitude_per_m' is +infinite"));
    CHECK_THROWS_WITH(require_finite(-std::numeric_limits<double>::infinity(), "z_m"),
                      Catch::Contains("'z_m' is -infinite"));
}
