// Model faults are refused when the file is read (ModelInputError, exit 3, file:line:key), so that
// a model that loads gives finite answers everywhere (issues 8 and 9); misspelt enum values get a
// did-you-mean; table CSV files are blamed for what is wrong in them.
#include <cmath>
#include <string>

#include <catch2/catch.hpp>
#include <fmt/format.h>

#include "core/errors.hpp"
#include "model/model_file.hpp"
#include "support/run_cli.hpp"

using namespace firnray;
using firnray::test::run_firnray;
using firnray::test::temp_folder;
using firnray::test::write_file;

namespace {

// Parses text that must fail with a ModelInputError at this key and line, containing `fragment`.
std::string expect_refused(const std::string& text, const std::string& key, int line, const std::string& fragment) {
    try {
        parse_model(text, "m.toml");
    } catch (const ModelInputError& e) {
        INFO(e.what());
        CHECK(e.where().file == "m.toml");
        CHECK(e.where().key == key);
        CHECK(e.where().line == line);
        // An array element is also located at its character column.
        const std::string at = e.where().column > 0 ? fmt::format("m.toml:{}:{}", line, e.where().column)
                                                    : fmt::format("m.toml:{}", line);
        CHECK(std::string(e.what()).rfind(fmt::format("{}: key '{}': ", at, key), 0) == 0);
        CHECK(std::string(e.what()).find(fragment) != std::string::npos);
        return e.what();
    }
    FAIL("no error for:\n" << text);
    return "";
}

std::string exponential(const std::string& n_deep, const std::string& n_surface, const std::string& scale) {
    return "[index]\nkind = \"exponential\"\nn_deep = " + n_deep + "\nn_surface = " + n_surface +  // n_deep line 3
           "\nscale_depth_m = " + scale + "\n";                                                     // scale line 5
}

const std::string base = exponential("1.78", "1.35", "37");  // five lines

std::string table(const std::string& depths, const std::string& n) {
    return "[index]\nkind = \"table\"\ndepth_m = " + depths + "\nn = " + n + "\n";  // depth_m line 3, n line 4
}

std::string layered(const std::string& top_bottom, const std::string& top_scale, const std::string& transition = "2") {
    return "[index]\nkind = \"layered\"\nn_surface = 1.35\ntransition_m = " + transition +  // transition line 4
           "\n[[index.layer]]\nbottom_depth_m = " + top_bottom +                           // line 6
           "\nn_deep = 1.8\nscale_depth_m = " + top_scale +                                // scale line 8
           "\n[[index.layer]]\nn_deep = 1.78\nscale_depth_m = 40\n";
}

}  // namespace

TEST_CASE("model bounds: scale depths of 1e-308 or 1e300 m are refused", "[model][model_file][bounds]") {
    expect_refused(exponential("1.78", "1.35", "1e-308"), "index.scale_depth_m", 5,
                   "scale_depth_m = 1e-308 m is below 0.01 m: a scale depth must be between 0.01 and 10000 m");
    expect_refused(exponential("1.78", "1.35", "1e300"), "index.scale_depth_m", 5, "is above 10000 m");
    expect_refused(layered("10", "1e-300"), "index.layer[0].scale_depth_m", 8, "below 0.01 m");
    CHECK_NOTHROW(parse_model(exponential("1.78", "1.35", "0.01"), "m.toml"));
    CHECK_NOTHROW(parse_model(exponential("1.78", "1.35", "10000"), "m.toml"));
}

TEST_CASE("model bounds: an index below 1 or above 2 is refused wherever it is given", "[model][model_file][bounds]") {
    expect_refused(exponential("2.5", "1.35", "37"), "index.n_deep", 3, "n_deep = 2.5 is above 2: an index must be between 1 and 2");
    expect_refused(exponential("1.78", "0.9", "37"), "index.n_surface", 4, "below 1");
    expect_refused("[index]\nkind = \"constant\"\nn = 3.1\n", "index.n", 3, "above 2");
    expect_refused(table("[0, 10, 20, 30]", "[1.3, 1.4, 2.01, 1.6]"), "index.n[2]", 4, "n = 2.01 is above 2");
    expect_refused(base + "[air]\nn = 2.5\n", "air.n", 7, "above 2");
    expect_refused("[index]\nkind = \"layered\"\nn_surface = 1.35\n[[index.layer]]\nn_deep = 7\nscale_depth_m = 40\n",
                   "index.layer[0].n_deep", 5, "above 2");
}

TEST_CASE("model bounds: densities at or below 0 or above 1000 kg/m3 are refused", "[model][model_file][bounds]") {
    const auto density = [](const std::string& values, const std::string& unit) {
        return "[index]\nkind = \"table\"\ndepth_m = [0, 10, 20, 30]\ndensity = " + values +  // density line 4
               "\ndensity_unit = \"" + unit + "\"\ndensity_rule = \"kovacs\"\n";
    };
    expect_refused(density("[400, 0, 600, 700]", "kg/m3"), "index.density[1]", 4,
                   "density 0 kg/m3 is not a snow, firn or ice density (expected 10 to 1000 kg/m3)");
    expect_refused(density("[400, 500, -600, 700]", "kg/m3"), "index.density[2]", 4, "not a snow, firn or ice density");
    expect_refused(density("[400, 500, 600, 1000.5]", "kg/m3"), "index.density[3]", 4, "expected 10 to 1000 kg/m3");
    expect_refused(density("[0.4, 0.5, 1.2, 0.9]", "g/cm3"), "index.density[2]", 4, "expected 0.01 to 1 g/cm3");
    CHECK_NOTHROW(parse_model(density("[400, 500, 600, 1000]", "kg/m3"), "m.toml"));
}

TEST_CASE("model bounds: depths beyond 10 km, 1e308 table depths and absurd layers are refused",
          "[model][model_file][bounds]") {
    expect_refused(table("[0, 10, 20, 1e308]", "[1.3, 1.4, 1.5, 1.6]"), "index.depth_m[3]", 3,
                   "depth = 1e+308 m is above 10000 m: a depth must be between 0 and 10000 m");
    expect_refused("[index]\nkind = \"table\"\nz_m = [0, -10, -20, -20000]\nn = [1.3, 1.4, 1.5, 1.6]\n", "index.z_m[3]", 3,
                   "z = -20000 m is below -10000 m");
    expect_refused(layered("1e300", "20"), "index.layer[0].bottom_depth_m", 6, "is above 10000 m");
    // A layer thinner than its transition zone (the layer's bottom a hair below the surface).
    expect_refused(layered("1e-300", "20"), "index.transition_m", 4, "do not fit");
    expect_refused(layered("10", "20", "1e-9"), "index.transition_m", 4, "below 0.01 m");
    expect_refused(layered("10", "20", "1e300"), "index.transition_m", 4, "above 1000 m");
    expect_refused(base + "[bottom]\ndepth_m = 1e300\npower_reflectivity = 0.5\n", "bottom.depth_m", 7,
                   "depth_m = 1e+300 m is above 10000 m");
    expect_refused(base + "[bottom]\nz_m = -1e5\npower_reflectivity = 0.5\n", "bottom.z_m", 7, "below -10000 m");
    CHECK_NOTHROW(parse_model(base + "[bottom]\ndepth_m = 10000\npower_reflectivity = 0.5\n", "m.toml"));
}

TEST_CASE("model bounds: attenuation lengths of 1e-300 or 1e300 m are refused", "[model][model_file][bounds]") {
    expect_refused(base + "[attenuation]\nkind = \"constant\"\nlength_m = 1e-300\n", "attenuation.length_m", 8,
                   "length_m = 1e-300 m is below 1 m: an attenuation length must be between 1 and 100000 m");
    expect_refused(base + "[attenuation]\nkind = \"constant\"\nlength_m = 1e300\n", "attenuation.length_m", 8,
                   "above 100000 m");
    expect_refused(base + "[attenuation]\nkind = \"table\"\ndepth_m = [0, 10]\nlength_m = [900, 1e300]\n",
                   "attenuation.length_m[1]", 9, "above 100000 m");
}

TEST_CASE("model bounds: table depths that do not grow or are closer than 1 mm", "[model][model_file][bounds]") {
    expect_refused(table("[0, 10, 10, 30]", "[1.3, 1.4, 1.5, 1.6]"), "index.depth_m[2]", 3,
                   "depth 10 m after depth 10 m (line 3): the points must run strictly monotone");
    expect_refused(table("[0, 10, 10.0000001, 30]", "[1.3, 1.4, 1.5, 1.6]"), "index.depth_m[2]", 3,
                   "depth 10 m is only 1e-07 m from depth 10 m (line 3): points closer than 0.001 m");
    // In a CSV file: the file, the line and the column.
    const std::string dir = temp_folder("bounds-csv");
    write_file(dir + "/log.csv", "depth,n\n0,1.3\n10,1.4\n\n9,1.5\n30,1.6\n");
    const std::string model = write_file(dir + "/m.toml", "[index]\nkind = \"table\"\nfile = \"log.csv\"\n"
                                                          "depth_column = \"depth\"\nn_column = \"n\"\n");
    try {
        load_model_file(model);
        FAIL("no error");
    } catch (const ModelInputError& e) {
        CHECK(std::string(e.what()) == dir + "/log.csv:5:1: key 'depth': depth 9 m after depth 10 m (line 3): the points "
                                             "must run strictly monotone (deeper throughout)");
    }
    write_file(dir + "/log.csv", "depth,n\n0,1.3\n10,2.4\n20,1.5\n30,1.6\n");
    try {
        load_model_file(model);
        FAIL("no error");
    } catch (const ModelInputError& e) {
        CHECK(e.where().file == dir + "/log.csv");
        CHECK(e.where().line == 3);
        CHECK(e.where().key == "n");
        CHECK(e.reason().find("n = 2.4 is above 2") == 0);
    }
}

TEST_CASE("model files: misspelt enum values get a did-you-mean", "[model][model_file][errors]") {
    expect_refused("[index]\nkind = \"exponental\"\n", "index.kind", 2,
                   "\"exponental\" is not a profile kind (did you mean 'exponential'?): use one of constant, "
                   "exponential, layered, table");
    expect_refused(base + "[attenuation]\nkind = \"constnat\"\n", "attenuation.kind", 7,
                   "is not an attenuation kind (did you mean 'constant'?)");
    const std::string density = "[index]\nkind = \"table\"\ndepth_m = [0, 10, 20, 30]\ndensity = [400, 500, 600, 700]\n";
    expect_refused(density + "density_unit = \"kg/m^3\"\ndensity_rule = \"kovacs\"\n", "index.density_unit", 5,
                   "\"kg/m^3\" is not a density unit here (did you mean 'kg/m3'?)");
    expect_refused(density + "density_unit = \"kg/m3\"\ndensity_rule = \"kovac\"\n", "index.density_rule", 6,
                   "(did you mean 'kovacs'?)");
    expect_refused(table("[0, 10, 20, 30]", "[1.3, 1.4, 1.5, 1.6]") + "interpolation = \"splin\"\n",
                   "index.interpolation", 5, "(did you mean 'spline'?)");
    // Far from every name: no suggestion, the list only.
    const std::string far = expect_refused("[index]\nkind = \"zzzz\"\n", "index.kind", 2, "is not a profile kind: use");
    CHECK(far.find("did you mean") == std::string::npos);
}

TEST_CASE("model files: an empty or header-only table CSV is blamed on the CSV file", "[model][model_file][errors]") {
    const std::string dir = temp_folder("empty-csv");
    const std::string model = write_file(dir + "/m.toml", "[index]\nkind = \"table\"\nfile = \"log.csv\"\n"
                                                          "depth_column = \"depth\"\nn_column = \"n\"\n");
    write_file(dir + "/log.csv", "# nothing but comments\n\ndepth,n\n# and more\n");
    try {
        load_model_file(model);
        FAIL("no error");
    } catch (const ModelInputError& e) {
        CHECK(std::string(e.what()) == dir + "/log.csv:3: key 'n': the table has a header but no data rows; an index "
                                             "table needs at least 4 points (it is named by key 'index.file' of '" +
                                             model + "')");
    }
    write_file(dir + "/log.csv", "");
    try {
        load_model_file(model);
        FAIL("no error");
    } catch (const ModelInputError& e) {
        CHECK(e.where().file == dir + "/log.csv");
        CHECK(std::string(e.what()).find("m.toml") == std::string::npos);
    }
    const std::string attenuation = write_file(
        dir + "/a.toml", "[index]\nkind = \"constant\"\nn = 1.78\n[attenuation]\nkind = \"table\"\nfile = \"att.csv\"\n"
                         "depth_column = \"d\"\nlength_column = \"L\"\n");
    write_file(dir + "/att.csv", "d,L\n0,900\n");
    try {
        load_model_file(attenuation);
        FAIL("no error");
    } catch (const ModelInputError& e) {
        CHECK(std::string(e.what()).rfind(dir + "/att.csv:2: key 'L': the table has 1 data row; an attenuation table "
                                                "needs at least 2 points", 0) == 0);
    }
}

TEST_CASE("model files: bad bytes are echoed as printable excerpts", "[model][model_file][errors]") {
    auto printable = [](const std::string& text) {
        for (const char ch : text)
            if (static_cast<unsigned char>(ch) < 0x20 || static_cast<unsigned char>(ch) >= 0x7f) return false;
        return true;
    };
    for (const std::string& text : {std::string("\x7f" "ELF\x02\x01\x01\0\0\xff\xfe", 11),
                                   std::string("[index]\nkind = \"exp\\u0007\\u001b[2J\"\n"),
                                   std::string("[index]\nkind = \"constant\"\nn = 1.5\n\"\\u0001\\u00ff\" = 2\n")}) {
        try {
            parse_model(text, "b.toml");
            FAIL("no error");
        } catch (const ModelInputError& e) {
            INFO(e.what());
            CHECK(printable(e.what()));
            CHECK(std::string(e.what()).rfind("b.toml:", 0) == 0);
        }
    }
}

TEST_CASE("model files: a model fault is exit code 3 with file, line and key", "[model][model_file][bounds][cli]") {
    const std::string dir = temp_folder("bounds-cli");
    const std::string model = write_file(dir + "/tiny.toml", exponential("1.78", "1.35", "1e-308"));
    const auto r = run_firnray({"connect", "--model", model, "--source", "0,-10", "--receiver", "100,-20"});
    CHECK(r.exit_code == 3);
    CHECK(r.err.find(model + ":5: key 'index.scale_depth_m': scale_depth_m = 1e-308 m is below 0.01 m") !=
          std::string::npos);
    const std::string deep = write_file(dir + "/deep.toml", table("[0, 10, 20, 1e308]", "[1.3, 1.4, 1.5, 1.6]"));
    const auto d = run_firnray({"profile", "--model", deep});
    CHECK(d.exit_code == 3);
    CHECK(d.err.find(deep + ":3:23: key 'index.depth_m[3]'") != std::string::npos);
}

TEST_CASE("model files: every message about a table CSV names the CSV file", "[model][model_file][errors]") {
    const std::string dir = temp_folder("csv-names");
    const std::string model = write_file(dir + "/m.toml", "[index]\nkind = \"table\"\ninterpolation = \"spline\"\n"
                                                          "file = \"log.csv\"\ndepth_column = \"depth\"\nn_column = \"n\"\n");
    auto failure = [&]() -> ModelInputError {
        try {
            load_model_file(model);
        } catch (const ModelInputError& e) {
            return e;
        }
        FAIL("no error");
        throw;
    };
    // Data whose C² spline dips below 1: the data are at fault, so the CSV is named (at its header).
    write_file(dir + "/log.csv", "# wild\ndepth,n\n0,1.7\n1,1.0\n2,1.7\n3,1.0\n4,1.7\n");
    const ModelInputError dip = failure();
    CHECK(dip.where().file == dir + "/log.csv");
    CHECK(dip.where().line == 2);
    CHECK(dip.reason().find("below 1") != std::string::npos);
    // A column the model file asks for but the CSV lacks: the CSV's header line.
    write_file(dir + "/log.csv", "depth,index\n0,1.3\n1,1.4\n2,1.5\n3,1.6\n");
    const ModelInputError column = failure();
    CHECK(column.where().file == dir + "/log.csv");
    CHECK(column.where().line == 1);
    CHECK(column.reason().find("no column named 'n'") != std::string::npos);
    // A table file that does not exist: the model file's `file` key.
    write_file(model, "[index]\nkind = \"table\"\nfile = \"none.csv\"\ndepth_column = \"depth\"\nn_column = \"n\"\n");
    const ModelInputError missing = failure();
    CHECK(missing.where().file == model);
    CHECK(missing.where().line == 3);
    CHECK(missing.where().key == "index.file");
}
