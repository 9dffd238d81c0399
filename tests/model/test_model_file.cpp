// Model files: every kind loads, and every bad input is reported with the file, the line and the
// key (docs/model-files.md lists the messages).
#include <cmath>
#include <filesystem>

#include <catch2/catch.hpp>
#include <fmt/format.h>

#include "core/errors.hpp"
#include "model/attenuation.hpp"
#include "model/layered_profile.hpp"
#include "model/model_file.hpp"
#include "model/table_profile.hpp"
#include "support/run_cli.hpp"

using namespace firnray;
using firnray::test::read_file;
using firnray::test::source_path;
using firnray::test::temp_folder;
using firnray::test::write_file;

namespace {

const std::string good_exponential =
    "name = \"x\"\n"                // 1
    "[index]\n"                     // 2
    "kind = \"exponential\"\n"      // 3
    "n_deep = 1.78\n"               // 4
    "n_surface = 1.35\n"            // 5
    "scale_depth_m = 37\n";         // 6  (an integer where a float is expected is fine)

// Parses text that must fail; checks the key, the line and that the message says both.
ModelInputError expect_error(const std::string& text, const std::string& key, int line, const std::string& fragment,
                             const std::string& origin = "sites/m.toml") {
    try {
        parse_model(text, origin);
    } catch (const ModelInputError& e) {
        INFO(e.what());
        CHECK(e.where().file == origin);
        CHECK(e.where().key == key);
        CHECK(e.where().line == line);
        // An array element or a CSV cell is also located at its character column.
        const std::string at = e.where().column > 0 ? fmt::format("{}:{}:{}", origin, line, e.where().column)
                                                    : fmt::format("{}:{}", origin, line);
        const std::string expected_place = key.empty() ? at + ": " : fmt::format("{}: key '{}': ", at, key);
        CHECK(std::string(e.what()).rfind(expected_place, 0) == 0);
        CHECK(std::string(e.what()).find(fragment) != std::string::npos);
        return e;
    }
    FAIL("no error for:\n" << text);
    throw;
}

std::string replace(std::string text, const std::string& from, const std::string& to) {
    const auto at = text.find(from);
    REQUIRE(at != std::string::npos);
    return text.replace(at, from.size(), to);
}

}  // namespace

TEST_CASE("model file: the exponential example loads", "[model][model_file]") {
    const FirnModel m = parse_model(good_exponential, "m.toml");
    CHECK(m.name == "x");
    CHECK(m.origin == "m.toml");
    REQUIRE(m.index->kind() == "exponential");
    const auto& p = dynamic_cast<const ExponentialProfile&>(*m.index);
    CHECK(p.n_deep() == 1.78);
    CHECK(p.scale_depth_m() == 37.0);
    CHECK(m.n_air == 1.0);
    CHECK_FALSE(m.bottom.has_value());
    CHECK(m.attenuation == nullptr);
}

TEST_CASE("model file: the built-in model is models/default.toml, values in published ranges", "[model][model_file]") {
    CHECK(read_file(source_path("models/default.toml")) == std::string(default_model_toml()));
    const FirnModel m = default_model();
    CHECK(m.origin == "built-in");
    CHECK(m.name.find("not a real site") != std::string::npos);
    const auto& p = dynamic_cast<const ExponentialProfile&>(*m.index);
    // Published polar-firn ranges (docs/physics.md §1, from memory).
    CHECK(p.n_deep() == 1.78);
    CHECK(p.n_surface() == 1.35);
    CHECK(p.scale_depth_m() == 37.0);
    CHECK(m.n_air == 1.0);
    REQUIRE(m.attenuation != nullptr);
    CHECK(m.attenuation->length_m(-100.0) == 1000.0);  // order 1 km: common practice
}

TEST_CASE("model file: every example in models/ loads", "[model][model_file]") {
    for (const char* name : {"default.toml", "solid-ice.toml", "ice-shelf.toml", "table-density.toml", "demo-site.toml"}) {
        INFO(name);
        const FirnModel m = load_model_file(source_path(std::string("models/") + name));
        CHECK_FALSE(m.name.empty());
        CHECK(m.index->index(-200.0) >= m.index->index(0.0));
    }
    const FirnModel demo = load_model_file(source_path("models/demo-site.toml"));
    CHECK(demo.name.find("fictional") != std::string::npos);
    CHECK(demo.index->kind() == "layered");
    REQUIRE(demo.bottom.has_value());
    CHECK(demo.bottom->z_m == -2800.0);
    CHECK(dynamic_cast<const TableAttenuation*>(demo.attenuation.get()) != nullptr);
    const FirnModel shelf = load_model_file(source_path("models/ice-shelf.toml"));
    CHECK(shelf.bottom->z_m == -420.0);
    CHECK(shelf.bottom->power_reflectivity == 0.9);
    const FirnModel table = load_model_file(source_path("models/table-density.toml"));
    CHECK(table.index->kind() == "table");
    // First CSV row: 377.3 kg/m3 at the surface, Kovacs et al. (1995): n = 1 + 0.845 * 0.3773.
    CHECK(table.index->index(0.0) == Approx(1.0 + 0.845 * 0.3773).epsilon(1e-12));
}

TEST_CASE("model file: constant, layered, inline and CSV tables, attenuation, bottom", "[model][model_file]") {
    const FirnModel constant = parse_model("[index]\nkind = \"constant\"\nn = 1.5\n[air]\nn = 1.0003\n", "c.toml");
    CHECK(constant.index->index(-3.0) == 1.5);
    CHECK(constant.n_air == 1.0003);
    CHECK(constant.name == "c");  // no name: the file's stem

    const FirnModel layered = parse_model(
        "[index]\nkind = \"layered\"\nn_surface = 1.35\n"
        "[[index.layer]]\nbottom_z_m = -12\nn_deep = 1.85\nscale_depth_m = 20\n"
        "[[index.layer]]\nn_deep = 1.78\nscale_depth_m = 40\n"
        "[bottom]\nz_m = -300\npower_reflectivity = 0.5\n",
        "l.toml");
    const auto& lp = dynamic_cast<const LayeredProfile&>(*layered.index);
    CHECK(lp.layers().size() == 2);
    CHECK(lp.layers()[0].bottom_depth_m == 12.0);
    CHECK(lp.transition_m() == LayeredProfile::default_transition_m);
    CHECK(layered.bottom->z_m == -300.0);

    const FirnModel inline_table = parse_model(
        "[index]\nkind = \"table\"\nz_m = [0, -10, -20, -40, -80]\ndensity = [0.4, 0.55, 0.65, 0.8, 0.9]\n"
        "density_unit = \"g/cm3\"\ndensity_rule = \"looyenga\"\n"
        "[attenuation]\nkind = \"table\"\nz_m = [0, -1000]\nlength_m = [1200, 800]\n",
        "t.toml");
    CHECK(inline_table.index->index(-20.0) == Approx(std::pow(1.0 + 0.65 / 0.917 * (std::cbrt(3.15) - 1.0), 1.5)));
    CHECK(inline_table.attenuation->length_m(-1000.0) == Approx(800.0));

    // A table listed from the bottom up is accepted (it is monotone).
    const FirnModel reversed =
        parse_model("[index]\nkind = \"table\"\ndepth_m = [30, 20, 10, 0]\nn = [1.7, 1.6, 1.5, 1.4]\n", "r.toml");
    CHECK(reversed.index->index(-10.0) == Approx(1.5));

    const std::string dir = temp_folder("model");
    write_file(dir + "/log.csv", "# synthetic\nz,index\n0,1.35\n-5,1.42\n-10,1.48\n-20,1.56\n-60,1.72\n");
    write_file(dir + "/atten.csv", "depth,L\n0,1500\n3000,500\n");
    write_file(dir + "/m.toml",
               "[index]\nkind = \"table\"\nfile = \"log.csv\"\nz_column = \"z\"\nn_column = \"index\"\n"
               "[attenuation]\nkind = \"table\"\nfile = \"atten.csv\"\nz_column = \"depth\"\nlength_column = \"L\"\n");
    // (the attenuation CSV's column is called "depth" but is declared as z; values >= 0 are then above the surface)
    CHECK_THROWS_AS(load_model_file(dir + "/m.toml"), ModelInputError);
    write_file(dir + "/m.toml",
               "[index]\nkind = \"table\"\nfile = \"log.csv\"\nz_column = \"z\"\nn_column = \"index\"\n");
    const FirnModel from_csv = load_model_file(dir + "/m.toml");
    CHECK(from_csv.index->index(-10.0) == Approx(1.48));
    CHECK(from_csv.index->index(-100.0) == Approx(1.72));
}

TEST_CASE("model_to_toml writes files that load back to the same model", "[model][model_file]") {
    const std::vector<std::string> sources{"models/default.toml", "models/solid-ice.toml", "models/ice-shelf.toml",
                                           "models/table-density.toml", "models/demo-site.toml"};
    for (const auto& source : sources) {
        INFO(source);
        const FirnModel original = load_model_file(source_path(source));
        const std::string text = model_to_toml(original, "written by a test\n\nsecond line");
        CHECK(text.rfind("# written by a test\n#\n# second line\n", 0) == 0);
        const FirnModel back = parse_model(text, "back.toml");
        CHECK(back.name == original.name);
        CHECK(back.n_air == original.n_air);
        CHECK(back.index->describe() == original.index->describe());
        for (double z = 0.0; z >= -3000.0; z -= 7.3) {
            CHECK(back.index->index(z) == original.index->index(z));
            CHECK(back.index->gradient(z) == original.index->gradient(z));
            if (original.attenuation) CHECK(back.attenuation->length_m(z) == original.attenuation->length_m(z));
        }
        CHECK(back.bottom.has_value() == original.bottom.has_value());
        if (back.bottom) CHECK(back.bottom->z_m == original.bottom->z_m);
    }
    FirnModel odd = default_model();
    odd.name = "quote \" and backslash \\ and tab\t";
    CHECK(parse_model(model_to_toml(odd), "o.toml").name == odd.name);
}

TEST_CASE("model file errors: unknown keys, including misspellings", "[model][model_file][errors]") {
    expect_error(replace(good_exponential, "n_surface", "n_surfce"), "index.n_surfce", 5, "did you mean 'n_surface'?");
    expect_error(good_exponential + "colour = \"blue\"\n", "index.colour", 7, "unknown key in [index]");
    expect_error("nmae = \"x\"\n" + good_exponential.substr(11), "nmae", 1, "did you mean 'name'?");
    expect_error(good_exponential + "[air]\nn = 1.0\nhumidity = 3\n", "air.humidity", 9, "unknown key");
    expect_error(good_exponential + "[atmosphere]\nn = 1.0\n", "atmosphere", 7, "unknown key at the top level");
    expect_error(good_exponential + "n = 1.5\n", "index.n", 7, "not used in [index] with kind = \"exponential\"");
    expect_error(good_exponential + "[attenuation]\nkind = \"constant\"\nlength = 900\n", "attenuation.length", 9,
                 "did you mean 'length_m'?");
    expect_error(good_exponential + "[bottom]\ndepth_m = 100\npower_reflectivty = 0.5\n", "bottom.power_reflectivty", 9,
                 "did you mean 'power_reflectivity'?");
    expect_error("[index]\nkind = \"layered\"\nn_surface = 1.35\n[[index.layer]]\nbottom_depth_m = 10\nn_deep = 1.8\n"
                 "scale_depht_m = 20\n[[index.layer]]\nn_deep = 1.78\nscale_depth_m = 40\n",
                 "index.layer[0].scale_depht_m", 7, "did you mean 'scale_depth_m'?");
}

TEST_CASE("model file errors: missing keys and tables", "[model][model_file][errors]") {
    expect_error("name = \"x\"\n", "index", 1, "missing: the file needs an [index] table");
    expect_error("[index]\nn_deep = 1.78\n", "index.kind", 1, "missing: give kind");
    expect_error(replace(good_exponential, "n_surface = 1.35\n", ""), "index.n_surface", 2, "missing");
    expect_error(replace(good_exponential, "scale_depth_m = 37\n", ""), "index.scale_depth_m", 2, "missing");
    expect_error("[index]\nkind = \"constant\"\n", "index.n", 1, "missing");
    expect_error(good_exponential + "[air]\n", "air.n", 7, "missing");
    expect_error(good_exponential + "[attenuation]\nkind = \"constant\"\n", "attenuation.length_m", 7, "missing");
    expect_error(good_exponential + "[attenuation]\nlength_m = 5\n", "attenuation.kind", 7, "missing");
    expect_error(good_exponential + "[bottom]\ndepth_m = 100\n", "bottom.power_reflectivity", 7, "missing");
    expect_error(good_exponential + "[bottom]\npower_reflectivity = 0.5\n", "bottom.depth_m", 7, "missing");
    expect_error("[index]\nkind = \"layered\"\nn_surface = 1.35\n", "index.layer", 1, "missing");
    expect_error("[index]\nkind = \"layered\"\nn_surface = 1.35\n[[index.layer]]\nn_deep = 1.8\nscale_depth_m = 20\n"
                 "[[index.layer]]\nn_deep = 1.78\nscale_depth_m = 40\n",
                 "index.layer[0].bottom_depth_m", 4, "missing");
    expect_error("[index]\nkind = \"table\"\n", "index.file", 1, "missing: give the table");
    expect_error("[index]\nkind = \"table\"\ndepth_m = [0, 1, 2, 3]\n", "index.n", 1, "missing");
    expect_error("[index]\nkind = \"table\"\nn = [1.3, 1.4, 1.5, 1.6]\n", "index.depth_m", 1, "missing");
    expect_error("[index]\nkind = \"table\"\ndepth_m = [0, 1, 2, 3]\ndensity = [0.4, 0.5, 0.6, 0.7]\n"
                 "density_rule = \"kovacs\"\n",
                 "index.density_unit", 1, "missing");
    expect_error("[index]\nkind = \"table\"\ndepth_m = [0, 1, 2, 3]\ndensity = [400, 500, 600, 700]\n"
                 "density_unit = \"kg/m3\"\n",
                 "index.density_rule", 1, "missing");
}

TEST_CASE("model file errors: mistyped values", "[model][model_file][errors]") {
    expect_error(replace(good_exponential, "1.78", "\"1.78\""), "index.n_deep", 4, "must be a number, but is a string");
    expect_error(replace(good_exponential, "1.35", "true"), "index.n_surface", 5, "must be a number, but is a boolean");
    expect_error(replace(good_exponential, "= 37", "= [37]"), "index.scale_depth_m", 6, "but is an array");
    expect_error(replace(good_exponential, "\"x\"", "7"), "name", 1, "must be a string");
    expect_error(replace(good_exponential, "\"exponential\"", "1"), "index.kind", 3, "must be a string");
    expect_error("index = 3\n", "index", 1, "must be a table");
    expect_error(good_exponential + "[air]\nn = 1979-05-27\n", "air.n", 8, "but is a date or time");
    expect_error("[index]\nkind = \"table\"\ndepth_m = [0, 1, \"2\", 3]\nn = [1.3, 1.4, 1.5, 1.6]\n", "index.depth_m[2]", 3,
                 "must be a number");
    expect_error("[index]\nkind = \"table\"\ndepth_m = 5\nn = [1.3, 1.4, 1.5, 1.6]\n", "index.depth_m", 3,
                 "must be an array of numbers");
    expect_error("[index]\nkind = \"layered\"\nn_surface = 1.35\nlayer = 4\n", "index.layer", 4,
                 "must be one or more [[index.layer]] tables");
    expect_error("[index]\nkind = \"exponetial\"\n", "index.kind", 2, "not a profile kind");
    expect_error(good_exponential + "[attenuation]\nkind = \"linear\"\n", "attenuation.kind", 8, "not an attenuation kind");
}

TEST_CASE("model file errors: indexes below 1 and n_surface above n_deep", "[model][model_file][errors]") {
    expect_error(replace(good_exponential, "1.78", "0.95"), "index.n_deep", 4, "below 1");
    expect_error(replace(good_exponential, "1.35", "0.5"), "index.n_surface", 5, "below 1");
    expect_error("[index]\nkind = \"constant\"\nn = 0.99\n", "index.n", 3, "below 1");
    expect_error(good_exponential + "[air]\nn = 0.9\n", "air.n", 8, "below 1");
    expect_error(replace(good_exponential, "1.35", "1.9"), "index.n_surface", 5, "exceeds n_deep");
    expect_error("[index]\nkind = \"table\"\ndepth_m = [0, 1, 2, 3]\nn = [1.3, 0.4, 1.5, 1.6]\n", "index.n[1]", 4,
                 "below 1");
    expect_error("[index]\nkind = \"layered\"\nn_surface = 0.8\n[[index.layer]]\nn_deep = 1.78\nscale_depth_m = 40\n",
                 "index.n_surface", 3, "below 1");
    // A lower layer whose asymptote is below the n reached at its top: n would fall with depth.
    expect_error("[index]\nkind = \"layered\"\nn_surface = 1.35\n[[index.layer]]\nbottom_depth_m = 30\nn_deep = 1.8\n"
                 "scale_depth_m = 10\n[[index.layer]]\nn_deep = 1.6\nscale_depth_m = 40\n",
                 "index.layer[1].n_deep", 9, "would fall with depth");
    expect_error("[index]\nkind = \"layered\"\nn_surface = 1.5\n[[index.layer]]\nn_deep = 1.4\nscale_depth_m = 40\n",
                 "index.layer[0].n_deep", 5, "would fall with depth");
}

TEST_CASE("model file errors: scale depths and other lengths not positive", "[model][model_file][errors]") {
    expect_error(replace(good_exponential, "= 37", "= 0"), "index.scale_depth_m", 6, "scale_depth_m = 0 m is below 0.01 m");
    expect_error(replace(good_exponential, "= 37", "= -5.0"), "index.scale_depth_m", 6, "below 0.01 m");
    expect_error("[index]\nkind = \"layered\"\nn_surface = 1.35\n[[index.layer]]\nn_deep = 1.78\nscale_depth_m = -4\n",
                 "index.layer[0].scale_depth_m", 6, "below 0.01 m");
    expect_error("[index]\nkind = \"layered\"\nn_surface = 1.35\ntransition_m = 0\n[[index.layer]]\nn_deep = 1.78\n"
                 "scale_depth_m = 40\n",
                 "index.transition_m", 4, "transition_m = 0 m is below 0.01 m");
    expect_error("[index]\nkind = \"layered\"\nn_surface = 1.35\ntransition_m = 30\n[[index.layer]]\nbottom_depth_m = 10\n"
                 "n_deep = 1.8\nscale_depth_m = 20\n[[index.layer]]\nn_deep = 1.78\nscale_depth_m = 40\n",
                 "index.transition_m", 4, "do not fit");
    expect_error(good_exponential + "[attenuation]\nkind = \"constant\"\nlength_m = 0\n", "attenuation.length_m", 9,
                 "length_m = 0 m is below 1 m");
    expect_error(good_exponential + "[bottom]\ndepth_m = -10\npower_reflectivity = 0.5\n", "bottom.depth_m", 8,
                 "not below the surface");
    expect_error(good_exponential + "[bottom]\ndepth_m = 100\npower_reflectivity = 1.5\n", "bottom.power_reflectivity",
                 9, "between 0 and 1");
}

TEST_CASE("model file errors: NaN and infinity literals", "[model][model_file][errors]") {
    expect_error(replace(good_exponential, "1.78", "nan"), "index.n_deep", 4, "finite");
    expect_error(replace(good_exponential, "1.35", "-inf"), "index.n_surface", 5, "finite");
    expect_error(replace(good_exponential, "= 37", "= inf"), "index.scale_depth_m", 6, "finite");
    expect_error("[index]\nkind = \"table\"\ndepth_m = [0, 1, 2, 3]\nn = [1.3, 1.4,\n  +nan, 1.6]\n", "index.n[2]", 5,
                 "finite");
    expect_error(good_exponential + "[bottom]\ndepth_m = inf\npower_reflectivity = 0.5\n", "bottom.depth_m", 8, "finite");
}

TEST_CASE("model file errors: table depths not monotone, too few points, bad values", "[model][model_file][errors]") {
    expect_error("[index]\nkind = \"table\"\ndepth_m = [0, 10,\n 20,\n 15,\n 30]\nn = [1.3, 1.4, 1.5, 1.6, 1.7]\n",
                 "index.depth_m[3]", 5, "strictly monotone");
    expect_error("[index]\nkind = \"table\"\ndepth_m = [0, 10, 10, 30]\nn = [1.3, 1.4, 1.5, 1.6]\n", "index.depth_m[2]",
                 3, "strictly monotone");
    expect_error("[index]\nkind = \"table\"\ndepth_m = [0, 10, 20]\nn = [1.3, 1.4, 1.5]\n", "index.depth_m", 3,
                 "at least 4");
    expect_error("[index]\nkind = \"table\"\ndepth_m = [0, 10, 20, 30]\nn = [1.3, 1.4, 1.5]\n", "index.n", 4,
                 "has 3 values but index.depth_m has 4");
    expect_error("[index]\nkind = \"table\"\nz_m = [0, -10, 5, -30]\nn = [1.3, 1.4, 1.5, 1.6]\n", "index.z_m[2]", 3,
                 "above the surface");
    expect_error("[index]\nkind = \"table\"\ndepth_m = [0, 10, 20, 30]\ndensity = [400, 500, 0.6, 700]\n"
                 "density_unit = \"kg/m3\"\ndensity_rule = \"kovacs\"\n",
                 "index.density[2]", 4, "is density_unit right?");
    expect_error("[index]\nkind = \"table\"\ndepth_m = [0, 10, 20, 30]\ndensity = [400, 500, 600, 700]\n"
                 "density_unit = \"kg/m^3\"\ndensity_rule = \"kovacs\"\n",
                 "index.density_unit", 5, "not a density unit");
    expect_error("[index]\nkind = \"table\"\ndepth_m = [0, 10, 20, 30]\ndensity = [400, 500, 600, 700]\n"
                 "density_unit = \"kg/m3\"\ndensity_rule = \"maxwell\"\n",
                 "index.density_rule", 6, "not a density rule");
    expect_error("[index]\nkind = \"table\"\ndepth_m = [0, 10, 20, 30]\nn = [1.3, 1.4, 1.5, 1.6]\ndensity_rule = \"kovacs\"\n",
                 "index.density_rule", 5, "only goes with density");
    expect_error(good_exponential + "[attenuation]\nkind = \"table\"\ndepth_m = [0, 100, 50]\nlength_m = [900, 800, 700]\n",
                 "attenuation.depth_m[2]", 9, "strictly monotone");
    expect_error(good_exponential + "[attenuation]\nkind = \"table\"\ndepth_m = [0]\nlength_m = [900]\n",
                 "attenuation.depth_m", 9, "at least 2");
    expect_error(good_exponential + "[attenuation]\nkind = \"table\"\ndepth_m = [0, 10]\nlength_m = [900, -1]\n",
                 "attenuation.length_m[1]", 10, "below 1 m");
    // A C² spline through wild data dips below 1: reported at the table.
    expect_error("[index]\nkind = \"table\"\ninterpolation = \"spline\"\ndepth_m = [0, 1, 2, 3, 4]\n"
                 "n = [1.7, 1.0, 1.7, 1.0, 1.7]\n",
                 "index.depth_m", 4, "below 1");
    expect_error("[index]\nkind = \"table\"\ninterpolation = \"linear\"\ndepth_m = [0, 1, 2, 3]\nn = [1.3, 1.4, 1.5, 1.6]\n",
                 "index.interpolation", 3, "monotone");
    expect_error("[index]\nkind = \"table\"\nfile = \"a.csv\"\ndepth_m = [0, 1, 2, 3]\n", "index.depth_m", 4,
                 "not both");
    expect_error("[index]\nkind = \"table\"\ndepth_column = \"d\"\ndepth_m = [0, 1, 2, 3]\nn = [1.3, 1.4, 1.5, 1.6]\n",
                 "index.depth_column", 3, "only goes with file");
}

TEST_CASE("model file errors: tables in CSV files", "[model][model_file][errors]") {
    const std::string dir = temp_folder("model-csv");
    const std::string model = dir + "/site.toml";
    auto csv_model = [&](const std::string& extra) {
        return "[index]\nkind = \"table\"\nfile = \"log.csv\"\ndepth_column = \"depth_m\"\n" + extra;  // file on line 3
    };
    // The table file is missing: reported at the `file` key of the model.
    expect_error(csv_model("n_column = \"n\"\n"), "index.file", 3, "does not exist", model);
    write_file(dir + "/log.csv", "depth_m,n\n0,1.3\n10,1.4\n5,1.5\n30,1.6\n");
    // Not monotone: reported in the CSV file at the row's line and column.
    try {
        parse_model(csv_model("n_column = \"n\"\n"), model);
        FAIL("expected an error");
    } catch (const ModelInputError& e) {
        CHECK(e.where().file == dir + "/log.csv");
        CHECK(e.where().line == 4);
        CHECK(e.where().key == "depth_m");
        CHECK(std::string(e.what()).find("strictly monotone") != std::string::npos);
    }
    write_file(dir + "/log.csv", "depth_m,n\n0,1.3\n10,x\n");
    try {
        parse_model(csv_model("n_column = \"n\"\n"), model);
        FAIL("expected an error");
    } catch (const ModelInputError& e) {
        CHECK(std::string(e.what()) == dir + "/log.csv:3:4: key 'n': 'x' is not a finite number");
    }
    write_file(dir + "/log.csv", "depth_m,n\n0,1.3\n10,1.4\n20,1.5\n");
    // Too few rows: the CSV file is blamed, at its last row, and the message says which key named it.
    try {
        parse_model(csv_model("n_column = \"n\"\n"), model);
        FAIL("expected an error");
    } catch (const ModelInputError& e) {
        CHECK(std::string(e.what()) == dir + "/log.csv:4: key 'n': the table has 3 data rows; an index table needs "
                                             "at least 4 points (it is named by key 'index.file' of '" + model + "')");
    }
    try {
        parse_model(csv_model("n_column = \"index\"\n"), model);
        FAIL("expected an error");
    } catch (const ModelInputError& e) {
        CHECK(e.where().file == dir + "/log.csv");
        CHECK(e.where().key == "index");
        CHECK(std::string(e.what()).find("no column named 'index'") != std::string::npos);
    }
    expect_error(csv_model(""), "index.n_column", 1, "missing", model);
    expect_error(csv_model("n_column = \"n\"\nz_column = \"z\"\n"), "index.z_column", 6, "not both", model);
}

TEST_CASE("model file errors: depth and z are not mixed in one file", "[model][model_file][errors]") {
    expect_error("[index]\nkind = \"layered\"\nn_surface = 1.35\n[[index.layer]]\nbottom_depth_m = 10\nn_deep = 1.8\n"
                 "scale_depth_m = 20\n[[index.layer]]\nn_deep = 1.78\nscale_depth_m = 40\n[bottom]\nz_m = -300\n"
                 "power_reflectivity = 0.5\n",
                 "bottom.z_m", 12, "already gives vertical positions as depth ('index.layer[0].bottom_depth_m', line 5)");
    expect_error(good_exponential + "[bottom]\ndepth_m = 100\nz_m = -100\npower_reflectivity = 0.5\n", "bottom.z_m", 9,
                 "not both");
    // The later key in the file is blamed, whatever order the tables are read in.
    expect_error(good_exponential + "[bottom]\nz_m = -300\npower_reflectivity = 0.5\n"
                                    "[attenuation]\nkind = \"table\"\ndepth_m = [0, 100]\nlength_m = [900, 800]\n",
                 "attenuation.depth_m", 12, "already gives vertical positions as z ('bottom.z_m', line 8)");
    expect_error("[index]\nkind = \"layered\"\nn_surface = 1.35\n[[index.layer]]\nbottom_depth_m = 20\nn_deep = 1.8\n"
                 "scale_depth_m = 20\n[[index.layer]]\nbottom_depth_m = 15\nn_deep = 1.8\nscale_depth_m = 20\n"
                 "[[index.layer]]\nn_deep = 1.78\nscale_depth_m = 40\n",
                 "index.layer[1].bottom_depth_m", 9, "bottoms must go deeper");
    expect_error("[index]\nkind = \"layered\"\nn_surface = 1.35\n[[index.layer]]\nbottom_depth_m = 20\nn_deep = 1.8\n"
                 "scale_depth_m = 20\n",
                 "index.layer[0].bottom_depth_m", 5, "deepest layer extends to any depth");
}

TEST_CASE("model file errors: TOML syntax errors carry toml++'s line and column", "[model][model_file][errors]") {
    const ModelInputError e = expect_error("name = \"x\"\n[index]\nkind = = \"exponential\"\n", "", 3, "TOML syntax error at column");
    CHECK(std::string(e.what()).find("column 8") != std::string::npos);
    expect_error(good_exponential + "n_deep = 1.7\n", "", 7, "TOML syntax error");  // a key defined twice
    expect_error("[index\nkind = \"constant\"\n", "", 1, "TOML syntax error");
    expect_error("name = \"unterminated\n", "", 1, "TOML syntax error");
}

TEST_CASE("load_model_file: a missing file is a model input error", "[model][model_file][errors]") {
    CHECK_THROWS_AS(load_model_file("/nonexistent/site.toml"), ModelInputError);
    CHECK_THROWS_AS(load_model_file(temp_folder("dir")), ModelInputError);
}
