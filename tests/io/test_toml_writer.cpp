// The TOML writer: escaping and numbers that read back exactly through the TOML reader, with the
// edge cases (−0.0, tiny, huge, non-finite) of tests/plot/test_ticks.cpp's kind.
#include <cmath>
#include <cstring>
#include <limits>
#include <random>

#include <catch2/catch.hpp>

#include "core/errors.hpp"
#include "io/toml_reader.hpp"
#include "io/toml_writer.hpp"

using namespace firnray;

namespace {

std::uint64_t bits_of(double value) {
    std::uint64_t bits;
    std::memcpy(&bits, &value, sizeof bits);
    return bits;
}

double read_back(const std::string& number_text) {
    return TomlDocument::parse("v = " + number_text + "\n", "w.toml").root().number("v", "v");
}

}  // namespace

TEST_CASE("TOML writer: strings are quoted and escaped, and read back unchanged", "[io][toml]") {
    CHECK(toml_string("plain") == "\"plain\"");
    CHECK(toml_string("") == "\"\"");
    CHECK(toml_string("q\"b\\") == "\"q\\\"b\\\\\"");
    CHECK(toml_string("a\nb\tc\rd") == "\"a\\nb\\tc\\rd\"");
    CHECK(toml_string(std::string("\x01\x1f\x7f", 3)) == "\"\\u0001\\u001f\\u007f\"");
    CHECK(toml_string("Halvard Dome (fictional) — ü") == "\"Halvard Dome (fictional) — ü\"");  // UTF-8 kept
    for (const std::string& text : {std::string("quote \" and backslash \\ and tab\t"), std::string("nul\0inside", 10),
                                   std::string("\x01\x02 bell \x07 del \x7f"), std::string("ü ö — ∞")}) {
        const std::string file = "s = " + toml_string(text) + "\n";
        CHECK(TomlDocument::parse(file, "s.toml").root().text("s", "s") == text);
    }
}

TEST_CASE("TOML writer: numbers are TOML floats that read back to the same bits", "[io][toml]") {
    CHECK(toml_number(37.0) == "37.0");
    CHECK(toml_number(1.78) == "1.78");
    CHECK(toml_number(-5.0) == "-5.0");
    CHECK(toml_number(0.0) == "0.0");
    CHECK(toml_number(-0.0) == "-0.0");
    CHECK(toml_number(1e-5) == "1e-05");
    CHECK(toml_number(1e300) == "1e+300");
    CHECK(toml_number(123456789012.0) == "123456789012.0");
    const std::vector<double> edge{0.0, -0.0, 5e-324, -5e-324, 2.2250738585072014e-308,
                                   std::numeric_limits<double>::max(), -std::numeric_limits<double>::max(),
                                   0.1, 1.0 / 3.0, 1.7800000000000002, 2800.0, 1e22, 1e23};
    for (const double value : edge) {
        INFO(toml_number(value));
        CHECK(bits_of(read_back(toml_number(value))) == bits_of(value));
    }
    std::mt19937_64 random(7);
    std::uniform_int_distribution<std::uint64_t> any_bits;
    for (int i = 0; i < 2000; ++i) {
        double value;
        const std::uint64_t bits = any_bits(random);
        std::memcpy(&value, &bits, sizeof value);
        if (!std::isfinite(value)) continue;
        CHECK(bits_of(read_back(toml_number(value))) == bits);
    }
}

TEST_CASE("TOML writer: NaN and infinity are refused as an output error", "[io][toml][errors]") {
    CHECK_THROWS_AS(toml_number(std::nan("")), OutputError);
    CHECK_THROWS_AS(toml_number(std::numeric_limits<double>::infinity()), OutputError);
    CHECK_THROWS_AS(toml_number(-std::numeric_limits<double>::infinity()), OutputError);
    TomlWriter out;
    CHECK_THROWS_AS(out.value("x", std::vector<double>{1.0, std::nan("")}), OutputError);
}

TEST_CASE("TOML writer: comments, tables, arrays of tables and number arrays", "[io][toml]") {
    TomlWriter out;
    out.comment("first\n\nthird\n").value("name", "n").table("index").value("kind", "table");
    out.value("depth_m", std::vector<double>{0, 1, 2, 3, 4, 5, 6, 7, 8.5});
    out.array_table("index.layer").value("a", 1.0);
    CHECK(out.text() ==
          "# first\n#\n# third\n"
          "name = \"n\"\n"
          "\n[index]\nkind = \"table\"\n"
          "depth_m = [\n    0.0, 1.0, 2.0, 3.0, 4.0, 5.0, 6.0, 7.0, \n    8.5,\n]\n"
          "\n[[index.layer]]\na = 1.0\n");
    const TomlTable index = *TomlDocument::parse(out.text(), "w.toml").root().optional_table("index");
    CHECK(index.numbers("depth_m").size() == 9);
    CHECK(index.tables("layer", "layers").size() == 1);
    TomlWriter empty;
    empty.comment("");
    CHECK(empty.text().empty());
}
