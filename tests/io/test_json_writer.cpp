// The JSON writer and its string escaper. The grammar checked against is RFC 8259 (JSON); the
// shortest round-trip form of doubles is {fmt}'s default ("{}"). Expected texts are written out
// by hand.
#include <catch2/catch.hpp>

#include <cmath>
#include <complex>
#include <limits>
#include <optional>
#include <sstream>
#include <string>

#include "core/errors.hpp"
#include "io/json_writer.hpp"

using namespace firnray;

namespace {

// One value alone in a compact document.
std::string compact_value(double v) {
    JsonWriter json(false);
    json.value(v);
    return json.str();
}

constexpr double inf = std::numeric_limits<double>::infinity();
const double not_a_number = std::numeric_limits<double>::quiet_NaN();

}  // namespace

TEST_CASE("JSON numbers: shortest round-trip text, -0.0 kept, tiny and huge values exact (RFC 8259)", "[io][json]") {
    CHECK(compact_value(0.0) == "0");
    CHECK(compact_value(-0.0) == "-0");
    CHECK(compact_value(0.1) == "0.1");
    CHECK(compact_value(1.0 / 3.0) == "0.3333333333333333");
    CHECK(compact_value(1500.0) == "1500");
    CHECK(compact_value(5e-324) == "5e-324");  // the smallest subnormal
    CHECK(compact_value(1.7976931348623157e308) == "1.7976931348623157e+308");
    CHECK(std::stod(compact_value(2.0 / 3.0)) == 2.0 / 3.0);
}

TEST_CASE("JSON numbers: NaN and infinities are refused with a NumericalError naming the field", "[io][json]") {
    for (const double bad : {not_a_number, inf, -inf}) {
        JsonWriter json;
        json.begin_object().key("rays").begin_array().begin_object();
        json.field("x_m", 1.0);
        try {
            json.field("time_ns", bad);
            FAIL("a non-finite number was written");
        } catch (const NumericalError& e) {
            const std::string message = e.what();
            CHECK(message.find("rays[0].time_ns") != std::string::npos);
            CHECK(message.find(std::isnan(bad) ? "NaN" : "infinite") != std::string::npos);
        }
    }
    // Inside arrays the index is named; complex numbers are arrays of two.
    JsonWriter json(false);
    json.begin_object().key("paths").begin_array().value(1.0).value(2.0);
    CHECK_THROWS_WITH(json.value(not_a_number), Catch::Contains("paths[2]"));
    JsonWriter field(false);
    field.begin_object();
    CHECK_THROWS_WITH(field.field("field_s", std::complex<double>(1.0, not_a_number)), Catch::Contains("field_s[1]"));
    JsonWriter top(false);
    CHECK_THROWS_AS(top.value(inf), NumericalError);
}

TEST_CASE("JSON: absent values are written as null on purpose", "[io][json]") {
    JsonWriter json(false);
    json.begin_object();
    json.field("turning_z_m", std::optional<double>{});
    json.field("depth_m", std::optional<double>{12.5});
    json.key("child_branch").null();
    json.end_object();
    CHECK(json.str() == R"({"turning_z_m":null,"depth_m":12.5,"child_branch":null})");
}

TEST_CASE("JSON strings: quotes, backslashes and control characters escaped, other bytes kept (RFC 8259)",
          "[io][json]") {
    CHECK(json_escape("") == "\"\"");
    CHECK(json_escape("plain, with commas") == "\"plain, with commas\"");
    CHECK(json_escape("say \"hi\"") == R"("say \"hi\"")");
    CHECK(json_escape("C:\\firn") == R"("C:\\firn")");
    CHECK(json_escape("a\nb\rc\td") == R"("a\nb\rc\td")");
    CHECK(json_escape(std::string("nul\0byte", 8)) == R"("nul\u0000byte")");
    CHECK(json_escape("\x01\x1f") == R"("\u0001\u001f")");
    CHECK(json_escape("\x7f") == "\"\x7f\"");  // DEL is not a control character in JSON
    CHECK(json_escape("névé 𝜉") == "\"névé 𝜉\"");  // UTF-8 passes through
    CHECK(json_escape("\xff\xfe") == "\"\xff\xfe\"");  // bytes are not re-encoded
    // Keys go through the same escaper.
    JsonWriter json(false);
    json.begin_object().field("a\"b", "c\nd").end_object();
    CHECK(json.str() == R"({"a\"b":"c\nd"})");
}

TEST_CASE("JSON layout: pretty and compact forms, empty containers, nested arrays", "[io][json]") {
    JsonWriter pretty;
    pretty.begin_object().field("n", 1).key("empty").begin_array().end_array().key("obj").begin_object().end_object();
    pretty.key("xs").begin_array().value(1.5).value(true).value("s").end_array().end_object();
    CHECK(pretty.str() == "{\n  \"n\": 1,\n  \"empty\": [],\n  \"obj\": {},\n  \"xs\": [\n    1.5,\n    true,\n    \"s\"\n  ]\n}");
    JsonWriter compact(false);
    compact.begin_array().value(std::complex<double>(1.0, -2.0)).value(3UL).value(-4L).end_array();
    CHECK(compact.str() == "[[1,-2],3,-4]");
    JsonWriter complex_in_pretty;
    complex_in_pretty.begin_object().field("f", std::complex<double>(0.5, 0.25)).end_object();
    CHECK(complex_in_pretty.str() == "{\n  \"f\": [0.5,0.25]\n}");
}

TEST_CASE("JSON to a stream: the text arrives in pieces and is the same as in memory", "[io][json]") {
    std::ostringstream sink;
    JsonWriter streamed(sink, false);
    JsonWriter in_memory(false);
    for (JsonWriter* json : {&streamed, &in_memory}) {
        json->begin_array();
        for (int i = 0; i < 20000; ++i) json->value(i * 0.25);
        json->end_array();
    }
    CHECK(sink.str().size() > 0);  // large documents are sent before the end
    streamed.flush();
    CHECK(streamed.str().empty());
    CHECK(sink.str() == in_memory.str());
}

TEST_CASE("JSON: an absent complex value is [null,null] on one line", "[io][json]") {
    JsonWriter json;
    json.begin_object().field("field_s", std::optional<std::complex<double>>{}).end_object();
    CHECK(json.str() == "{\n  \"field_s\": [null,null]\n}");
}
