// Edge cases of the shared message helpers.
#include <catch2/catch.hpp>

#include <limits>

#include "core/text.hpp"

using namespace firnray;

TEST_CASE("edit distance of classic pairs (Levenshtein 1966, worked examples)", "[core][text]") {
    CHECK(edit_distance("kitten", "sitting") == 3);
    CHECK(edit_distance("", "abc") == 3);
    CHECK(edit_distance("abc", "") == 3);
    CHECK(edit_distance("same", "same") == 0);
}

TEST_CASE("did you mean suggests only close names", "[core][text]") {
    const std::vector<std::string> kinds{"constant", "exponential", "layered", "table"};
    CHECK(did_you_mean("exponental", kinds) == " (did you mean 'exponential'?)");
    CHECK(did_you_mean("tabel", kinds) == " (did you mean 'table'?)");
    CHECK(did_you_mean("zzzzzzzz", kinds).empty());
    CHECK(did_you_mean("", kinds).empty());
    CHECK(closest_name("shadw", {"shadow", "trace"}) == "shadow");
}

TEST_CASE("printable excerpts escape bytes and cut long text", "[core][text]") {
    CHECK(printable_excerpt("abc") == "abc");
    CHECK(printable_excerpt(std::string("a\0b", 3)) == "a\\x00b");
    CHECK(printable_excerpt("\xff\xfe") == "\\xff\\xfe");
    CHECK(printable_excerpt("tab\there") == "tab\\x09here");
    CHECK(printable_excerpt(std::string(100, 'x'), 10) == std::string(10, 'x') + "...");
    CHECK(printable_excerpt("").empty());
}

TEST_CASE("numbers in messages are short", "[core][text]") {
    CHECK(number_for_message(-5) == "-5");
    CHECK(number_for_message(1500) == "1500");
    CHECK(number_for_message(0.25) == "0.25");
    CHECK(number_for_message(-0.0) == "-0");
    CHECK(number_for_message(1e308) == "1e+308");
    CHECK(number_for_message(std::numeric_limits<double>::max()).size() < 16);
    CHECK(number_for_message(std::numeric_limits<double>::quiet_NaN()) == "nan");
    CHECK(number_for_message(-std::numeric_limits<double>::infinity()) == "-inf");
}
