// What a table holds that is unusual but possible gets a warning on the loaded model, located at
// the point's file, line and column; what no firn can be is refused there (exit 3 in the CLI).
#include <string>

#include <catch2/catch.hpp>
#include <fmt/format.h>

#include "core/errors.hpp"
#include "model/model_file.hpp"
#include "model/model_limits.hpp"
#include "support/run_cli.hpp"

using namespace firnray;
using firnray::test::temp_folder;
using firnray::test::write_file;

namespace {

std::string csv_model(const std::string& value_keys) {
    return "[index]\nkind = \"table\"\nfile = \"log.csv\"\ndepth_column = \"depth_m\"\n" + value_keys;
}
const std::string density_keys = "density_column = \"rho\"\ndensity_unit = \"kg/m3\"\ndensity_rule = \"kovacs\"\n";

// Loads `model_text` beside a log.csv holding `csv` and returns the error it must raise.
ModelInputError load_error(const std::string& csv, const std::string& model_text) {
    const std::string dir = temp_folder("table-errors");
    write_file(dir + "/log.csv", csv);
    write_file(dir + "/m.toml", model_text);
    try {
        load_model_file(dir + "/m.toml");
    } catch (const ModelInputError& e) {
        return e;
    }
    FAIL("no error for:\n" << csv);
    throw;
}

FirnModel load_with(const std::string& csv, const std::string& model_text) {
    const std::string dir = temp_folder("table-warnings");
    write_file(dir + "/log.csv", csv);
    write_file(dir + "/m.toml", model_text);
    return load_model_file(dir + "/m.toml");
}

}  // namespace

TEST_CASE("table data that no firn can be is refused at file, line and column", "[model][table_data][errors]") {
    struct Case {
        std::string csv, keys, column_name, fragment;
        int line, column;
    };
    const std::vector<Case> cases{
        {"depth_m,n\n0,1.3\n10,  2.05\n20,1.6\n30,1.7\n", "n_column = \"n\"\n", "n", "above 2", 3, 6},
        {"depth_m,n\n0,1.3\n10,1.4\n20,0.99\n30,1.7\n", "n_column = \"n\"\n", "n", "below 1", 4, 4},
        {"depth_m,rho\n0,400\n5,500\n10,1017\n20,800\n", density_keys, "rho", "not a snow, firn or ice density", 4, 4},
        {"depth_m,rho\n0,400\n5,0\n10,600\n20,800\n", density_keys, "rho", "not a snow, firn or ice density", 3, 3},
        {"depth_m,rho\n0,400\n5,-20\n10,600\n20,800\n", density_keys, "rho", "not a snow, firn or ice density", 3, 3},
        {"depth_m,n\n0,1.3\n10,1.4\n 10 ,1.5\n30,1.7\n", "n_column = \"n\"\n", "depth_m", "strictly monotone", 4, 2},
        {"depth_m,n\n0,1.3\n10,1.4\n8,1.5\n30,1.7\n", "n_column = \"n\"\n", "depth_m", "strictly monotone", 4, 1},
    };
    for (const auto& c : cases) {
        const ModelInputError e = load_error(c.csv, csv_model(c.keys));
        INFO(e.what());
        CHECK(e.where().line == c.line);
        CHECK(e.where().column == c.column);
        CHECK(e.where().key == c.column_name);
        CHECK(std::string(e.what()).find(fmt::format("log.csv:{}:{}: key '{}'", c.line, c.column, c.column_name)) !=
              std::string::npos);
        CHECK(std::string(e.what()).find(c.fragment) != std::string::npos);
    }
}

TEST_CASE("inline table data out of bounds is refused at the element's line and column", "[model][table_data][errors]") {
    try {
        parse_model("[index]\nkind = \"table\"\ndepth_m = [0, 10, 20, 30]\nn = [1.3, 1.4, 2.5, 1.6]\n", "i.toml");
        FAIL("expected an error");
    } catch (const ModelInputError& e) {
        CHECK(std::string(e.what()).rfind("i.toml:4:16: key 'index.n[2]'", 0) == 0);
    }
    try {
        parse_model("[index]\nkind = \"table\"\ndepth_m = [0, 10, 20, 30]\ndensity = [400, 1200.5, 600, 700]\n"
                    "density_unit = \"kg/m3\"\ndensity_rule = \"looyenga\"\n",
                    "i.toml");
        FAIL("expected an error");
    } catch (const ModelInputError& e) {
        CHECK(std::string(e.what()).rfind("i.toml:4:17: key 'index.density[1]'", 0) == 0);
    }
}

TEST_CASE("unusual table data gives warnings located at the point, not errors", "[model][table_data][warnings]") {
    SECTION("n falling by more than 0.05 within 1 m (a duct)") {
        const FirnModel model = load_with("depth_m,n\n0,1.3\n1,1.4\n1.5,1.5\n2.2,1.42\n3,1.5\n4,1.6\n",
                                          csv_model("n_column = \"n\"\n"));
        REQUIRE(model.warnings.size() == 1);
        const ModelWarning& w = model.warnings.front();
        CHECK(w.where.line == 5);
        CHECK(w.where.column == 5);
        CHECK(w.where.key == "n");
        CHECK(w.message.find("n falls by 0.080 with depth") != std::string::npos);
        CHECK(w.describe().find("log.csv:5:5: key 'n': n falls") != std::string::npos);
    }
    SECTION("a density step as large as an ice lens makes") {
        const FirnModel model = load_with("depth_m,rho\n0,400\n5,450\n10,500\n10.5,800\n11,520\n20,600\n",
                                          csv_model(density_keys));
        int steps = 0, falls = 0;
        for (const auto& w : model.warnings) {
            INFO(w.describe());
            if (w.message.find("rises by 300 kg/m3") != std::string::npos) {
                ++steps;
                CHECK(w.where.line == 5);
            }
            if (w.message.find("falls by 280 kg/m3") != std::string::npos) {
                ++steps;
                CHECK(w.where.line == 6);
            }
            if (w.message.find("n falls by") != std::string::npos) ++falls;
        }
        CHECK(steps == 2);
        CHECK(falls == 1);
    }
    SECTION("a point spacing far finer or coarser than the rest") {
        const FirnModel model = load_with(
            "depth_m,n\n0,1.30\n1,1.32\n2,1.34\n3,1.36\n3.05,1.361\n4,1.38\n5,1.40\n30,1.50\n31,1.51\n",
            csv_model("n_column = \"n\"\n"));
        REQUIRE(model.warnings.size() == 2);
        CHECK(model.warnings[0].where.line == 6);
        CHECK(model.warnings[0].where.key == "depth_m");
        CHECK(model.warnings[0].message.find("20 times finer") != std::string::npos);
        CHECK(model.warnings[1].where.line == 9);
        CHECK(model.warnings[1].message.find("25 times coarser") != std::string::npos);
    }
    SECTION("many of one kind are counted, not listed") {
        std::string csv = "depth_m,n\n";
        for (int i = 0; i < 40; ++i) csv += fmt::format("{},{}\n", 2 * i, i % 2 == 0 ? 1.5 : 1.6);
        const FirnModel model = load_with(csv, csv_model("n_column = \"n\"\n"));
        REQUIRE(model.warnings.size() == 0);  // falls of 0.1 over 2 m: not within 1 m
        std::string steep = "depth_m,n\n";
        for (int i = 0; i < 40; ++i) steep += fmt::format("{},{}\n", 0.5 * i, i % 2 == 0 ? 1.5 : 1.6);
        const FirnModel many = load_with(steep, csv_model("n_column = \"n\"\n"));
        REQUIRE(many.warnings.size() == model_limits::most_warnings_per_kind + 1);
        CHECK(many.warnings.back().message.find("and 14 more points where n falls fast") != std::string::npos);
    }
    SECTION("a smooth log, and the models of models/, give none") {
        const FirnModel model = load_with("depth_m,n\n0,1.3\n2,1.4\n4,1.5\n6,1.55\n8,1.6\n",
                                          csv_model("n_column = \"n\"\n"));
        CHECK(model.warnings.empty());
        for (const char* name : {"models/table-density.toml", "models/demo-site.toml", "models/default.toml"})
            CHECK(load_model_file(test::source_path(name)).warnings.empty());
    }
    SECTION("smoothing over the layer removes the warning about it") {
        const std::string csv = "depth_m,n\n0,1.3\n1,1.4\n1.5,1.5\n2.2,1.42\n3,1.5\n4,1.6\n5,1.65\n6,1.7\n";
        CHECK(load_with(csv, csv_model("n_column = \"n\"\n")).warnings.size() == 1);
        CHECK(load_with(csv, csv_model("n_column = \"n\"\nsmoothing_m = 1.0\n")).warnings.empty());
    }
}
