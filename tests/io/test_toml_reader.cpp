// The strict TOML reader shared by model and station files: every check it makes, the location
// it gives, the suggestions for misspellings, and printable echoes of whatever bytes a file holds.
#include <cmath>
#include <limits>

#include <catch2/catch.hpp>

#include "core/errors.hpp"
#include "io/toml_reader.hpp"
#include "support/run_cli.hpp"

using namespace firnray;

namespace {

// The message of the ModelInputError that `action` throws ("(no error)" when it throws none).
template <class Action>
std::string message_of(Action&& action) {
    try {
        action();
    } catch (const ModelInputError& e) {
        return e.what();
    }
    return "(no error)";
}

// True when every byte of a message is printable ASCII (what a terminal shows safely).
bool printable(const std::string& text) {
    for (const char ch : text)
        if (static_cast<unsigned char>(ch) < 0x20 || static_cast<unsigned char>(ch) >= 0x7f) return false;
    return true;
}

const char* sample = "name = \"x\"\n"     // 1
                     "[index]\n"          // 2
                     "kind = \"table\"\n" // 3
                     "n = 1.5\n"          // 4
                     "count = 3\n"        // 5
                     "flag = true\n"      // 6
                     "when = 1979-05-27\n"// 7
                     "values = [1, 2.5,\n"// 8
                     "  3]\n"             // 9
                     "[[index.layer]]\n"  // 10
                     "a = 1\n"            // 11
                     "[[index.layer]]\n"  // 12
                     "b = 2\n";           // 13

constexpr NumberRange unit_range{0.0, 1.0, "m", "a test length", "for the test"};

}  // namespace

TEST_CASE("TOML reader: numbers, strings, flags and arrays with their lines", "[io][toml]") {
    const TomlDocument doc = TomlDocument::parse(sample, "s.toml");
    const TomlTable index = *doc.root().optional_table("index");
    CHECK(index.path() == "index");
    CHECK(index.line() == 2);
    CHECK(index.number("n", "n") == 1.5);
    CHECK(index.number("count", "a count") == 3.0);  // integers are numbers
    CHECK(index.text("kind", "the kind") == "table");
    CHECK_FALSE(index.optional_number("absent").has_value());
    const auto values = index.numbers("values");
    REQUIRE(values.size() == 3);
    CHECK(values[2].value == 3.0);
    CHECK(values[2].where.line == 9);
    CHECK(values[2].where.key == "index.values[2]");
    CHECK(index.optional_flag("flag") == std::optional<bool>(true));
    const auto layers = index.tables("layer", "layers");
    REQUIRE(layers.size() == 2);
    CHECK(layers[1].path() == "index.layer[1]");
    CHECK(layers[1].where("b").line == 13);
    CHECK(layers[1].where("missing").line == 12);  // a missing key: the table's line
    CHECK(index.tables("nothing", "x").empty());
    // locate: the deepest part of a relative path that the file holds.
    CHECK(index.locate("layer[1].b").line == 13);
    CHECK(index.locate("layer[1].b").key == "index.layer[1].b");
    CHECK(index.locate("layer[1].zzz").line == 12);
    CHECK(index.locate("nowhere").line == 2);
}

TEST_CASE("TOML reader: mistyped and missing values are named with file, line and key", "[io][toml][errors]") {
    const TomlTable index = *TomlDocument::parse(sample, "s.toml").root().optional_table("index");
    CHECK(message_of([&] { index.number("kind", "k"); }) == "s.toml:3: key 'index.kind': must be a number, but is a string");
    CHECK(message_of([&] { index.number("flag", "f"); }).find("but is a boolean") != std::string::npos);
    CHECK(message_of([&] { index.number("when", "w"); }).find("s.toml:7: key 'index.when': must be a number, but is a date or time") == 0);
    CHECK(message_of([&] { index.number("values", "v"); }).find("but is an array") != std::string::npos);
    CHECK(message_of([&] { index.text("n", "t"); }) == "s.toml:4: key 'index.n': must be a string in quotes, but is a number");
    CHECK(message_of([&] { index.optional_flag("count"); }).find("must be true or false, but is an integer") != std::string::npos);
    CHECK(message_of([&] { index.number("gone", "the gone value"); }) == "s.toml:2: key 'index.gone': missing: give the gone value");
    CHECK(message_of([&] { index.numbers("n"); }).find("must be an array of numbers, but is a number") != std::string::npos);
    CHECK(message_of([&] { index.tables("n", "one or more [[index.n]] tables"); })
              .find("must be one or more [[index.n]] tables, but is a number") != std::string::npos);
    CHECK(message_of([&] { index.optional_table("n"); }).find("must be a table (a [index.n] section)") != std::string::npos);
    const TomlTable root = TomlDocument::parse("a = []\nb = [1, \"two\"]\n", "e.toml").root();
    CHECK(message_of([&] { root.tables("a", "tables"); }).find("but is an empty array") != std::string::npos);
    CHECK(message_of([&] { root.numbers("b"); }) == "e.toml:2: key 'b[1]': must be a number, but is a string");
    CHECK_THROWS_AS(root.numbers("b"), ModelInputError);
}

TEST_CASE("TOML reader: NaN and infinity are refused as numbers", "[io][toml][errors]") {
    const TomlTable root = TomlDocument::parse("a = nan\nb = -inf\nc = [1, +inf]\n", "f.toml").root();
    CHECK(message_of([&] { root.number("a", "a"); }) == "f.toml:1: key 'a': must be a finite number (got nan)");
    CHECK(message_of([&] { root.optional_number("b"); }) == "f.toml:2: key 'b': must be a finite number (got -inf)");
    CHECK(message_of([&] { root.numbers("c"); }).find("key 'c[1]': must be a finite number") != std::string::npos);
}

TEST_CASE("TOML reader: ranges say the bound, the range and why", "[io][toml][errors]") {
    const TomlTable root = TomlDocument::parse("low = -0.5\nhigh = 1e300\nok = 1\nzero = 0\n", "r.toml").root();
    CHECK(message_of([&] { root.number("low", "x", unit_range); }) ==
          "r.toml:1: key 'low': low = -0.5 m is below 0 m: a test length must be between 0 and 1 m (for the test)");
    CHECK(message_of([&] { root.optional_number("high", unit_range); }) ==
          "r.toml:2: key 'high': high = 1e+300 m is above 1 m: a test length must be between 0 and 1 m (for the test)");
    CHECK(root.number("ok", "x", unit_range) == 1.0);  // the bounds belong to the range
    CHECK(root.number("zero", "x", unit_range) == 0.0);
    constexpr double inf = std::numeric_limits<double>::infinity();
    const NumberRange at_most{-inf, 0.5, "", "a count", ""};
    CHECK(message_of([&] { root.number("ok", "x", at_most); }) == "r.toml:3: key 'ok': ok = 1 is above 0.5: a count must be at most 0.5");
    const NumberRange at_least{2.0, inf, "m", "a width", ""};
    CHECK(message_of([&] { root.number("ok", "x", at_least); }).find("must be at least 2 m") != std::string::npos);
    CHECK_THROWS_AS(TomlTable::check_range(-1.0, {"csv.csv", 4, "col"}, "col", unit_range), ModelInputError);
    CHECK(message_of([&] { TomlTable::check_range(-1.0, {"csv.csv", 4, "col"}, "col", unit_range); })
              .rfind("csv.csv:4: key 'col': col = -1 m is below 0 m", 0) == 0);
}

TEST_CASE("TOML reader: unknown keys get the first in file order and a did-you-mean", "[io][toml][errors]") {
    const TomlTable root = TomlDocument::parse("nmae = 1\nname = 2\ncolour = 3\nother = 4\n", "k.toml").root();
    CHECK(message_of([&] { root.allow_only({"name", "other"}, "at the top level"); }) ==
          "k.toml:1: key 'nmae': unknown key (did you mean 'name'?) at the top level; the keys there are: name, other");
    CHECK(message_of([&] { root.allow_only({"name", "nmae", "other"}, "here"); }) ==
          "k.toml:3: key 'colour': unknown key here; the keys there are: name, nmae, other");
    CHECK(message_of([&] { root.allow_only({"name", "nmae", "other"}, "in [x] with kind = \"a\"", {"colour"}); }) ==
          "k.toml:3: key 'colour': not used in [x] with kind = \"a\"; the keys there are: name, nmae, other");
    CHECK_NOTHROW(root.allow_only({"name", "nmae", "colour", "other"}, "here"));
}

TEST_CASE("TOML reader: misspelt enum values get a did-you-mean", "[io][toml][errors]") {
    const TomlTable root = TomlDocument::parse("kind = \"exponental\"\nrule = \"zzz\"\n", "v.toml").root();
    const std::vector<std::string> kinds{"constant", "exponential", "layered", "table"};
    CHECK(message_of([&] { root.choice("kind", kinds, "a profile kind", "kind"); }) ==
          "v.toml:1: key 'kind': \"exponental\" is not a profile kind (did you mean 'exponential'?): use \"constant\" or "
          "\"exponential\" or \"layered\" or \"table\"");
    CHECK(message_of([&] { root.choice("rule", {"kovacs", "looyenga"}, "a density rule", "rule", "one of the two rules"); }) ==
          "v.toml:2: key 'rule': \"zzz\" is not a density rule: use one of the two rules");
    CHECK(message_of([&] { root.choice("absent", kinds, "a kind", "kind = one of them"); }) ==
          "v.toml:1: key 'absent': missing: give kind = one of them");
    CHECK_FALSE(root.optional_choice("absent", kinds, "a kind").has_value());
    const TomlTable good = TomlDocument::parse("kind = \"table\"\n", "g.toml").root();
    CHECK(good.choice("kind", kinds, "a kind", "kind") == "table");
}

TEST_CASE("TOML reader: one of two alternative keys", "[io][toml][errors]") {
    const TomlTable both = TomlDocument::parse("[b]\ndepth_m = 1\nz_m = -1\n", "a.toml").root().optional_table("b").value();
    CHECK(message_of([&] { both.one_of("depth_m", "z_m", "x"); }) == "a.toml:3: key 'b.z_m': give b.depth_m or b.z_m, not both");
    const TomlTable neither = TomlDocument::parse("[b]\n", "a.toml").root().optional_table("b").value();
    CHECK(message_of([&] { neither.one_of("depth_m", "z_m", "a position"); }) == "a.toml:1: key 'b.depth_m': missing: give a position");
    const TomlTable one = TomlDocument::parse("[b]\nz_m = -1\n", "a.toml").root().optional_table("b").value();
    CHECK(one.one_of("depth_m", "z_m", "x") == "z_m");
}

TEST_CASE("TOML reader: bad bytes are echoed only as printable excerpts", "[io][toml][errors]") {
    // A binary file, a control character in a string, invalid UTF-8, a quoted key of control bytes
    // and a long value: every message stays printable and short.
    std::string binary = "\x7f" "ELF\x02\x01\x01";
    binary += std::string("\0\0\0\xff\xfe\x80 = 1\n", 11);
    for (const std::string& text : {binary, std::string("name = \"a\x01z\"\n"), std::string("x = \"\xc3\x28\"\n"),
                                    std::string("k\x1b[31m = 1\n")}) {
        const std::string message = message_of([&] { TomlDocument::parse(text, "bin.toml"); });
        INFO(message);
        CHECK(message.rfind("bin.toml:", 0) == 0);
        CHECK(message.find("TOML syntax error") != std::string::npos);
        CHECK(printable(message));
    }
    const TomlTable root = TomlDocument::parse("\"\\u0007bell\" = 1\nkind = \"e\\u001b[31mx\"\n", "q.toml").root();
    const std::string unknown = message_of([&] { root.allow_only({"kind"}, "here"); });
    CHECK(unknown == "q.toml:1: key '\\x07bell': unknown key here; the keys there are: kind");
    const std::string value = message_of([&] { root.choice("kind", {"exponential"}, "a kind", "k"); });
    CHECK(value.find("\"e\\x1b[31mx\" is not a kind") != std::string::npos);
    CHECK(printable(value));
    const TomlTable long_value = TomlDocument::parse("kind = \"" + std::string(500, 'q') + "\"\n", "l.toml").root();
    const std::string cut = message_of([&] { long_value.choice("kind", {"table"}, "a kind", "k"); });
    CHECK(cut.find("...\" is not a kind") != std::string::npos);
    CHECK(cut.size() < 200);
}

TEST_CASE("TOML reader: syntax errors carry the line and column", "[io][toml][errors]") {
    CHECK(message_of([] { TomlDocument::parse("a = 1\nb = = 2\n", "syn.toml"); })
              .rfind("syn.toml:2: TOML syntax error at column 5: ", 0) == 0);
    CHECK(message_of([] { TomlDocument::parse("a = 1\na = 2\n", "dup.toml"); }).rfind("dup.toml:2: TOML syntax error", 0) == 0);
}

TEST_CASE("TOML reader: files that cannot be read are named", "[io][toml][errors]") {
    CHECK(message_of([] { TomlDocument::read("/nonexistent/x.toml", "model file"); }) ==
          "/nonexistent/x.toml: cannot open the model file (is the path right?)");
    const std::string dir = test::temp_folder("toml-reader");
    CHECK(message_of([&] { TomlDocument::read(dir, "station file"); }) == dir + ": is a folder, not a station file");
    const std::string path = test::write_file(dir + "/ok.toml", "a = 2\n");
    const TomlDocument doc = TomlDocument::read(path, "model file");
    CHECK(doc.origin() == path);
    CHECK(doc.root().number("a", "a") == 2.0);
}

TEST_CASE("TOML reader: tables outlive the document object they came from", "[io][toml]") {
    const TomlTable index = [] {
        const TomlDocument doc = TomlDocument::parse("[index]\nn = 1.25\n", "t.toml");
        return *doc.root().optional_table("index");
    }();
    CHECK(index.number("n", "n") == 1.25);
    CHECK(index.origin() == "t.toml");
}

TEST_CASE("TOML reader: a device or endless stream named as a file is refused, not read forever",
          "[io][toml][errors]") {
    CHECK(message_of([] { TomlDocument::read("/dev/zero", "model file"); }) ==
          "/dev/zero: is larger than 64 MB; a model file is a few kilobytes of text (long tables belong in a CSV file "
          "beside it)");
    CHECK(message_of([] { TomlDocument::read("/dev/null", "station file"); }) == "(no error)");  // empty is valid TOML
}
