// End-to-end: firnray connect run as a user or a script would, its JSON read with a strict
// RFC 8259 reader (tests/support/json_reader.hpp), its CSV with the library's CSV reader. Values
// are checked against outside references: the definition of a homogeneous medium, the
// reciprocity theorem, and the closed form of docs/physics.md §3 against the ODE of §2.
#include <catch2/catch.hpp>

#include <algorithm>
#include <array>
#include <cmath>
#include <filesystem>
#include <set>
#include <sstream>
#include <string>
#include <tuple>
#include <vector>

#include "core/constants.hpp"
#include "io/csv_reader.hpp"
#include "support/json_reader.hpp"
#include "support/run_cli.hpp"

using namespace firnray;
using namespace firnray::test;
namespace fs = std::filesystem;

namespace {

JsonValue run_json(const std::vector<std::string>& args, int expected_exit = 0) {
    std::vector<std::string> full = {"connect"};
    full.insert(full.end(), args.begin(), args.end());
    full.insert(full.end(), {"--format", "json"});
    const CliResult r = run_firnray(full);
    INFO(r.err);
    REQUIRE(r.exit_code == expected_exit);
    return parse_json(r.out);
}

std::vector<std::string> lines_of(const std::string& text) {
    std::vector<std::string> lines;
    std::stringstream in(text);
    std::string line;
    while (std::getline(in, line)) lines.push_back(line);
    return lines;
}

std::string pairs_header() { return "name,source_x_m,source_z_m,receiver_x_m,receiver_z_m\n"; }

// Every documented member of a path object, with its type.
void check_path_members(const JsonValue& p) {
    const std::set<std::string> kinds = {"direct", "refracted", "reflected", "transmitted", "bottom", "refracted-below", "ducted"};
    CHECK(kinds.count(p["kind"].str()) == 1);
    CHECK(std::isfinite(p["time_ns"].num()));
    CHECK(p["launch_zenith_deg"].num() >= 0.0);
    CHECK(p["launch_zenith_deg"].num() <= 180.0);
    CHECK(p["arrival_zenith_deg"].num() >= 0.0);
    CHECK(p["arrival_zenith_deg"].num() <= 180.0);
    CHECK(p["length_m"].num() > 0.0);
    CHECK(p["ray_parameter"].num() >= 0.0);
    CHECK((p["turning_z_m"].is_null() || p["turning_z_m"].type == JsonValue::Type::number));
    CHECK(p["surface_bounces"].num() >= 0.0);
    CHECK(p["bottom_bounces"].num() >= 0.0);
    const JsonValue& a = p["amplitude"];
    for (const char* complex : {"fresnel_s", "fresnel_p", "field_s", "field_p"}) {
        REQUIRE(a[complex].size() == 2u);
        CHECK(a[complex][0].type == JsonValue::Type::number);
        CHECK(a[complex][1].type == JsonValue::Type::number);
    }
    CHECK(a["spreading_m"].num() > 0.0);
    CHECK(a["attenuation"].num() > 0.0);
    CHECK(a["attenuation"].num() <= 1.0);
    CHECK_FALSE(a["caustic"].flag());
    CHECK(p["events"].type == JsonValue::Type::array);
}

}  // namespace

TEST_CASE("firnray connect --format json: one object with the documented members, paths sorted by arrival time "
          "(read with a strict RFC 8259 reader)",
          "[cli][connect]") {
    // 120 m apart, 150 m and 30 m deep: a direct path and a surface reflection.
    const JsonValue two = run_json({"--source", "0,-150", "--receiver", "120,-30"});
    CHECK(two["model"]["name"].str() == "generic polar firn (built-in; not a real site)");
    CHECK(two["solver"].str() == "closed");
    CHECK(two["source"]["z_m"].num() == -150.0);
    CHECK(two["receiver"]["x_m"].num() == 120.0);
    CHECK(two["horizontal_distance_m"].num() == 120.0);
    CHECK(two["azimuth_deg"].num() == 0.0);
    const JsonValue& paths = two["paths"];
    REQUIRE(paths.size() == 2u);
    CHECK(paths[0]["kind"].str() == "direct");
    CHECK(paths[1]["kind"].str() == "reflected");
    CHECK(paths[0]["turning_z_m"].is_null());
    CHECK(paths[1]["surface_bounces"].num() == 1.0);
    CHECK(paths[0]["time_ns"].num() < paths[1]["time_ns"].num());
    for (const JsonValue& p : paths.array) check_path_members(p);
    // Reflection off the surface below the critical angle: a real, partial Fresnel factor.
    CHECK(std::abs(paths[1]["amplitude"]["fresnel_s"][0].num()) < 1.0);

    // A shallow source 250 m away: a refracted path (turning below the surface) and a grazing reflection.
    const JsonValue refracted = run_json({"--source", "250,-20", "--receiver", "0,-100"});
    const JsonValue& r = refracted["paths"];
    REQUIRE(r.size() == 2u);
    CHECK(r[0]["kind"].str() == "refracted");
    CHECK(r[0]["turning_z_m"].num() < 0.0);
    CHECK(r[0]["turning_z_m"].num() > -20.0);
    CHECK(r[0]["events"][0]["kind"].str() == "turning");
    CHECK(refracted["azimuth_deg"].num() == 180.0);
    for (const JsonValue& p : r.array) check_path_members(p);
    CHECK(r[0]["time_ns"].num() < r[1]["time_ns"].num());

    // With a bottom (the ice-shelf model), the bottom reflection joins them.
    const JsonValue shelf = run_json({"--model", source_path("models/ice-shelf.toml"), "--source", "0,-150",
                                      "--receiver", "120,-30"});
    std::set<std::string> kinds;
    for (const JsonValue& p : shelf["paths"].array) {
        kinds.insert(p["kind"].str());
        check_path_members(p);
    }
    CHECK(kinds == std::set<std::string>{"direct", "reflected", "bottom"});
    for (std::size_t i = 1; i < shelf["paths"].size(); ++i)
        CHECK(shelf["paths"][i - 1]["time_ns"].num() <= shelf["paths"][i]["time_ns"].num());
}

TEST_CASE("firnray connect: a pair in the shadow zone gives \"paths\": [] and exit code 0, and the text says so",
          "[cli][connect]") {
    const JsonValue none = run_json({"--source", "300,-20", "--receiver", "0,-100"});
    CHECK(none["paths"].type == JsonValue::Type::array);
    CHECK(none["paths"].size() == 0u);
    const CliResult text = run_firnray({"connect", "--source", "300,-20", "--receiver", "0,-100"});
    CHECK(text.exit_code == 0);
    CHECK(text.out.find("shadow zone") != std::string::npos);
    const CliResult csv = run_firnray({"connect", "--source", "300,-20", "--receiver", "0,-100", "--format", "csv"});
    CHECK(csv.exit_code == 0);
    CHECK(lines_of(csv.out).size() == 1u);  // the header only: no path, no row
}

TEST_CASE("firnray connect --format text: the model named, units in the headings, columns aligned", "[cli][connect]") {
    const CliResult r = run_firnray({"connect", "--model", source_path("models/ice-shelf.toml"), "--source",
                                     "0,-150", "--receiver", "120,-30"});
    INFO(r.out << r.err);
    REQUIRE(r.exit_code == 0);
    CHECK(r.out.find("model:    illustrative ice shelf over sea water (not a real site)") != std::string::npos);
    for (const char* unit : {"time (ns)", "launch (deg)", "arrival (deg)", "length (m)", "turning z (m)", "L_eff (m)"})
        CHECK(r.out.find(unit) != std::string::npos);
    const auto lines = lines_of(r.out);
    const auto heading = std::find_if(lines.begin(), lines.end(), [](const auto& l) { return l.rfind("path  kind", 0) == 0; });
    REQUIRE(heading != lines.end());
    // Each value ends where its heading ends (right-aligned columns, all but the kind, the note and
    // the events); the events start where their heading starts.
    std::vector<std::size_t> ends;
    const std::size_t kind_end = heading->find("kind") + 3, note = heading->find("  note");
    const std::size_t events = heading->find("events (z, x from the source, m)");
    REQUIRE(note != std::string::npos);
    REQUIRE(events != std::string::npos);
    for (std::size_t i = 0; i + 2 < note + 2; ++i)
        if ((*heading)[i] != ' ' && (*heading)[i + 1] == ' ' && (*heading)[i + 2] == ' ' && i != kind_end)
            ends.push_back(i);
    CHECK(ends.size() == 14u);
    int rows = 0;
    for (auto line = heading + 1; line != lines.end() && !line->empty(); ++line, ++rows) {
        REQUIRE(line->size() > events);
        CHECK(line->substr(events - 2, 2) == "  ");
        CHECK((*line)[events] != ' ');
        for (const std::size_t e : ends) {
            INFO(*line);
            CHECK((*line)[e] != ' ');
            CHECK((e + 1 == line->size() || (*line)[e + 1] == ' '));
        }
    }
    CHECK(rows == 3);
    CHECK(r.out.find("zenith angle of the direction of travel") != std::string::npos);
}

TEST_CASE("firnray connect --format csv: one row per path with named columns", "[cli][connect]") {
    const CliResult r =
        run_firnray({"connect", "--source", "0,0,-150", "--receiver", "60,80,-30", "--format", "csv"});
    REQUIRE(r.exit_code == 0);
    const CsvTable table = parse_csv(r.out, "stdout");
    const std::vector<std::string> expected = {
        "path", "kind", "time_ns", "launch_zenith_deg", "arrival_zenith_deg", "length_m", "ray_parameter",
        "turning_z_m", "turning_points", "surface_bounces", "bottom_bounces", "horizontal_distance_m", "azimuth_deg",
        "fresnel_s_re", "fresnel_s_im", "fresnel_p_re", "fresnel_p_im", "flux_factor", "spreading_m", "attenuation",
        "field_s_re", "field_s_im", "field_p_re", "field_p_im", "caustic", "events"};
    CHECK(table.columns == expected);
    REQUIRE(table.rows.size() == 2u);
    for (const CsvRow& row : table.rows) table.check_row(row);
    CHECK(table.text(table.rows[0], table.column("kind")) == "direct");
    CHECK(table.number(table.rows[0], "time_ns") < table.number(table.rows[1], "time_ns"));
    // 3-D ends: the horizontal distance hypot(60, 80) = 100 m and the azimuth atan2(80, 60) (definition).
    CHECK(table.number(table.rows[0], "horizontal_distance_m") == Approx(100.0));
    CHECK(table.number(table.rows[0], "azimuth_deg") == Approx(rad_to_deg(std::atan2(80.0, 60.0))).epsilon(1e-9));
    // The same pair in the x-z plane has the same times.
    const CliResult planar = run_firnray({"connect", "--source", "0,-150", "--receiver", "100,-30", "--format", "csv"});
    const CsvTable flat = parse_csv(planar.out, "stdout");
    REQUIRE(flat.rows.size() == 2u);
    CHECK(flat.number(flat.rows[1], "time_ns") == table.number(table.rows[1], "time_ns"));
}

TEST_CASE("firnray connect --pairs: bad rows get error rows, the others are intact, exit code 7", "[cli][connect]") {
    const std::string dir = temp_folder("connect-batch");
    const std::string pairs = write_file(dir + "/pairs.csv", "# a comment line\n" + pairs_header() +
                                                                 "good,0,-150,120,-30\n"
                                                                 "word,0,abc,120,-30\n"
                                                                 "short,0,-150\n"
                                                                 "shadow,300,-20,0,-100\n"
                                                                 "same,5,-40,5,-40\n"
                                                                 "air,0,-50,200,10\n");
    const auto single = run_firnray({"connect", "--source", "0,-150", "--receiver", "120,-30", "--format", "csv"});
    REQUIRE(single.exit_code == 0);
    const CsvTable alone = parse_csv(single.out, "single");

    const auto r = run_firnray({"connect", "--pairs", pairs, "--format", "csv", "-o", dir + "/out.csv", "--quiet"});
    CHECK(r.exit_code == 7);
    CHECK(r.err.find("3 of 6 pairs failed") != std::string::npos);
    CHECK(r.out.empty());
    const CsvTable out = parse_csv(read_file(dir + "/out.csv"), "out.csv");
    CHECK(out.columns.front() == "input_line");
    CHECK(out.columns.back() == "error");
    for (const CsvRow& row : out.rows) out.check_row(row);
    auto rows_of = [&](int line) {
        std::vector<const CsvRow*> found;
        for (const CsvRow& row : out.rows)
            if (out.number(row, "input_line") == line) found.push_back(&row);
        return found;
    };
    // The good pair (file line 3) has the same rows as when it is run alone.
    const auto good = rows_of(3);
    REQUIRE(good.size() == alone.rows.size());
    for (std::size_t i = 0; i < good.size(); ++i)
        for (const std::string& column : alone.columns)
            CHECK(out.text(*good[i], out.column(column)) == alone.text(alone.rows[i], alone.column(column)));
    CHECK(out.text(*good[0], out.column("name")) == "good");
    // Unparseable number, missing field, coincident ends: error rows naming the problem.
    const auto word = rows_of(4), short_row = rows_of(5), same = rows_of(7);
    REQUIRE(word.size() == 1u);
    CHECK(out.text(*word[0], out.column("error")).find("source_z_m") != std::string::npos);
    CHECK(out.text(*word[0], out.column("kind")).empty());
    REQUIRE(short_row.size() == 1u);
    CHECK(out.text(*short_row[0], out.column("error")).find("3 fields") != std::string::npos);
    REQUIRE(same.size() == 1u);
    CHECK(out.text(*same[0], out.column("error")).find("same point") != std::string::npos);
    // The shadow-zone pair: one row of kind none, no error.
    const auto shadow = rows_of(6);
    REQUIRE(shadow.size() == 1u);
    CHECK(out.text(*shadow[0], out.column("kind")) == "none");
    CHECK(out.text(*shadow[0], out.column("error")).empty());
    // The pair with a receiver in the air: reached through the surface.
    const auto air = rows_of(8);
    REQUIRE(air.size() == 1u);
    CHECK(out.text(*air[0], out.column("kind")) == "transmitted");

    // The same batch as JSON and text: the same rows, the error carried, the same exit code.
    const auto json = run_firnray({"connect", "--pairs", pairs, "--format", "json"});
    CHECK(json.exit_code == 7);
    const JsonValue doc = parse_json(json.out);
    REQUIRE(doc["pairs"].size() == 6u);
    CHECK(doc["pairs_failed"].num() == 3.0);
    CHECK(doc["pairs"][0]["input_line"].num() == 3.0);
    CHECK(doc["pairs"][0]["paths"].size() == alone.rows.size());
    CHECK(doc["pairs"][1]["error"].str().find("source_z_m") != std::string::npos);
    CHECK_FALSE(doc["pairs"][1].has("paths"));
    CHECK(doc["pairs"][3]["paths"].size() == 0u);
    const auto text = run_firnray({"connect", "--pairs", pairs});
    CHECK(text.exit_code == 7);
    CHECK(text.out.find("error: ") != std::string::npos);
    CHECK(text.out.find("6 pairs, 3 failed.") != std::string::npos);

    // An end below the model's bottom (the ice shelf is 420 m thick) is a bad row too.
    const std::string shelf_pairs =
        write_file(dir + "/shelf.csv", pairs_header() + "deep,0,-500,10,-30\nfine,0,-150,120,-30\n");
    const auto shelf = run_firnray({"connect", "--model", source_path("models/ice-shelf.toml"), "--pairs",
                                    shelf_pairs, "--format", "json"});
    CHECK(shelf.exit_code == 7);
    const JsonValue shelf_doc = parse_json(shelf.out);
    CHECK(shelf_doc["pairs"][0]["error"].str().find("bottom") != std::string::npos);
    CHECK(shelf_doc["pairs"][1]["paths"].size() == 3u);
}

TEST_CASE("firnray connect --pairs: the output is byte-identical with 1 and 2 threads", "[cli][connect]") {
    const std::string dir = temp_folder("connect-threads");
    std::string text = "name,source_x_m,source_y_m,source_z_m,receiver_x_m,receiver_y_m,receiver_z_m\n";
    for (int i = 0; i < 300; ++i)
        text += "p" + std::to_string(i) + "," + std::to_string(i % 7) + "," + std::to_string(i % 5) + "," +
                std::to_string(-1 - (i * 37) % 300) + "," + std::to_string(10 + (i * 53) % 900) + ",3," +
                std::to_string(-1 - (i * 91) % 250) + "\n";
    text += "broken,1,2,3\n";
    const std::string pairs = write_file(dir + "/pairs.csv", text);
    for (const char* format : {"csv", "json", "text"}) {
        const auto one = run_firnray({"connect", "--pairs", pairs, "--format", format, "--threads", "1"});
        const auto two = run_firnray({"connect", "--pairs", pairs, "--format", format, "--threads", "2"});
        INFO(format);
        CHECK(one.exit_code == 7);
        CHECK(two.exit_code == 7);
        CHECK(one.out.size() > 10000u);
        CHECK(one.out == two.out);
    }
}

TEST_CASE("firnray connect: usage errors exit 2 naming the option, a bad model 3, bad data 4, and no output file "
          "is left behind",
          "[cli][connect]") {
    const std::string dir = temp_folder("connect-errors");
    const auto bad_point = run_firnray({"connect", "--source", "0,abc", "--receiver", "0,-10"});
    CHECK(bad_point.exit_code == 2);
    CHECK(bad_point.err.find("--source") != std::string::npos);
    const auto four = run_firnray({"connect", "--source", "0,-1", "--receiver", "1,2,3,4"});
    CHECK(four.exit_code == 2);
    CHECK(four.err.find("--receiver") != std::string::npos);
    const auto no_receiver = run_firnray({"connect", "--source", "0,-10"});
    CHECK(no_receiver.exit_code == 2);
    CHECK(no_receiver.err.find("--receiver") != std::string::npos);
    CHECK(run_firnray({"connect"}).exit_code == 2);
    const auto both = run_firnray({"connect", "--pairs", "x.csv", "--source", "0,-10", "--receiver", "5,-5"});
    CHECK(both.exit_code == 2);
    CHECK(both.err.find("--pairs") != std::string::npos);
    CHECK(run_firnray({"connect", "--source", "0,-10", "--receiver", "5,-5", "--format", "xml"}).exit_code == 2);
    CHECK(run_firnray({"connect", "--source", "0,-10", "--receiver", "5,-5", "--max-bounces", "99"}).exit_code == 2);
    CHECK(run_firnray({"connect", "--source", "0,-10", "--receiver", "5,-5", "--solver", "fast"}).exit_code == 2);

    const std::string broken = write_file(dir + "/broken.toml", "name = \"x\"\n[index]\nkind = \"exponential\"\n");
    const auto model = run_firnray({"connect", "--model", broken, "--source", "0,-10", "--receiver", "5,-5", "-o",
                                    dir + "/out.txt"});
    CHECK(model.exit_code == 3);
    CHECK_FALSE(fs::exists(dir + "/out.txt"));
    CHECK(run_firnray({"connect", "--model", dir + "/missing.toml", "--source", "0,-10", "--receiver", "5,-5"})
              .exit_code == 3);
    // The closed form refuses a tabulated model.
    CHECK(run_firnray({"connect", "--model", source_path("models/table-density.toml"), "--solver", "closed",
                       "--source", "0,-10", "--receiver", "5,-5"})
              .exit_code == 3);

    const auto same = run_firnray({"connect", "--source", "3,-10", "--receiver", "3,-10", "-o", dir + "/out.txt"});
    CHECK(same.exit_code == 4);
    CHECK_FALSE(fs::exists(dir + "/out.txt"));
    CHECK(run_firnray({"connect", "--model", source_path("models/ice-shelf.toml"), "--source", "0,-500",
                       "--receiver", "5,-5"})
              .exit_code == 4);
    const std::string no_column = write_file(dir + "/pairs.csv", "source_x_m,source_z_m,receiver_x_m\n1,-2,3\n");
    const auto column = run_firnray({"connect", "--pairs", no_column});
    CHECK(column.exit_code == 4);
    CHECK(column.err.find("receiver_z_m") != std::string::npos);
    CHECK(run_firnray({"connect", "--pairs", dir + "/none.csv"}).exit_code == 4);
    const std::string empty = write_file(dir + "/empty.csv", pairs_header());
    CHECK(run_firnray({"connect", "--pairs", empty}).exit_code == 4);
}

TEST_CASE("firnray connect on models/solid-ice.toml (constant n): the direct path has T = n·d/c, L_eff = d and "
          "attenuation exp(−d/L) (definition of a homogeneous medium)",
          "[cli][connect]") {
    const double n = 1.78, attenuation_length = 1000.0;  // the values in models/solid-ice.toml
    for (const auto& [source, receiver, dx, dz] :
         {std::tuple{"0,-100", "30,-60", 30.0, 40.0}, std::tuple{"10,-300", "-290,-5", 300.0, 295.0},
          std::tuple{"0,0,-50", "120,-160,-50", 200.0, 0.0}, std::tuple{"0,-10", "0,-700", 0.0, 690.0}}) {
        const JsonValue doc = run_json({"--model", source_path("models/solid-ice.toml"), "--source", source,
                                        "--receiver", receiver});
        const double d = std::hypot(dx, dz);
        INFO(source << " -> " << receiver);
        REQUIRE(doc["paths"].size() >= 1u);
        const JsonValue& direct = doc["paths"][0];
        CHECK(direct["kind"].str() == "direct");
        CHECK(direct["time_ns"].num() == Approx(n * d / speed_of_light * 1e9).epsilon(1e-12));
        CHECK(direct["length_m"].num() == Approx(d).epsilon(1e-12));
        CHECK(direct["amplitude"]["spreading_m"].num() == Approx(d).epsilon(1e-7));
        CHECK(direct["amplitude"]["attenuation"].num() == Approx(std::exp(-d / attenuation_length)).epsilon(1e-12));
        CHECK(direct["amplitude"]["fresnel_s"][0].num() == 1.0);
        CHECK(direct["launch_zenith_deg"].num() == Approx(direct["arrival_zenith_deg"].num()).margin(1e-9));
    }
}

TEST_CASE("firnray connect --pairs: swapping source and receiver gives the same times (reciprocity theorem)",
          "[cli][connect]") {
    const std::string dir = temp_folder("connect-reciprocity");
    std::string text = pairs_header();
    const std::vector<std::array<double, 4>> pairs = {
        {0, -150, 120, -30}, {0, -20, 250, -100}, {0, -5, 60, -180}, {0, -40, 90, -40}, {0, -70, 300, 8}, {0, -1, 25, 2},
        {0, -350, 1500, -200}};
    for (std::size_t i = 0; i < pairs.size(); ++i) {
        const auto& p = pairs[i];
        text += "f" + std::to_string(i) + "," + std::to_string(p[0]) + "," + std::to_string(p[1]) + "," +
                std::to_string(p[2]) + "," + std::to_string(p[3]) + "\n";
        text += "b" + std::to_string(i) + "," + std::to_string(p[2]) + "," + std::to_string(p[3]) + "," +
                std::to_string(p[0]) + "," + std::to_string(p[1]) + "\n";
    }
    const JsonValue doc =
        run_json({"--model", source_path("models/ice-shelf.toml"), "--pairs", write_file(dir + "/p.csv", text)});
    REQUIRE(doc["pairs"].size() == 2 * pairs.size());
    for (std::size_t i = 0; i < pairs.size(); ++i) {
        const JsonValue& forward = doc["pairs"][2 * i]["paths"];
        const JsonValue& backward = doc["pairs"][2 * i + 1]["paths"];
        INFO("pair " << i);
        REQUIRE(forward.size() == backward.size());
        REQUIRE(forward.size() > 0u);
        for (std::size_t k = 0; k < forward.size(); ++k) {
            CHECK(forward[k]["kind"].str() == backward[k]["kind"].str());
            CHECK(forward[k]["time_ns"].num() == Approx(backward[k]["time_ns"].num()).epsilon(1e-12));
            CHECK(forward[k]["launch_zenith_deg"].num() ==
                  Approx(180.0 - backward[k]["arrival_zenith_deg"].num()).margin(1e-6));
        }
    }
}

TEST_CASE("firnray connect: closed form (docs/physics.md §3) vs --solver numeric (the ODE of §3) on the default "
          "model, a grid of depths and distances up to 3 km: the same kinds, times within 1 ps, angles within "
          "1e-4 degrees",
          "[cli][connect][numeric]") {
    const std::string dir = temp_folder("connect-solvers");
    std::string text = pairs_header();
    int count = 0;
    for (const double zs : {-1.0, -12.0, -40.0, -110.0, -320.0, -900.0})
        for (const double zr : {-3.0, -25.0, -75.0, -200.0, -650.0})
            for (const double r : {7.0, 90.0, 330.0, 1200.0, 3000.0}) {
                text += "g" + std::to_string(count++) + ",0," + std::to_string(zs) + "," + std::to_string(r) + "," +
                        std::to_string(zr) + "\n";
            }
    const std::string pairs = write_file(dir + "/grid.csv", text);
    const JsonValue closed = run_json({"--pairs", pairs, "--solver", "closed"});
    const JsonValue numeric = run_json({"--pairs", pairs, "--solver", "numeric"});
    CHECK(numeric["solver"].str() == "numeric");
    REQUIRE(closed["pairs"].size() == static_cast<std::size_t>(count));
    REQUIRE(numeric["pairs"].size() == static_cast<std::size_t>(count));
    double worst_time_ps = 0.0, worst_angle_deg = 0.0;
    int paths = 0, shadowed = 0, far = 0;
    for (int i = 0; i < count; ++i) {
        const JsonValue& a = closed["pairs"][static_cast<std::size_t>(i)]["paths"];
        const JsonValue& b = numeric["pairs"][static_cast<std::size_t>(i)]["paths"];
        INFO("pair " << closed["pairs"][static_cast<std::size_t>(i)]["name"].str());
        REQUIRE(a.size() == b.size());
        shadowed += a.size() == 0;
        far += a.size() > 0 && closed["pairs"][static_cast<std::size_t>(i)]["horizontal_distance_m"].num() == 3000.0;
        for (std::size_t k = 0; k < a.size(); ++k, ++paths) {
            CHECK(a[k]["kind"].str() == b[k]["kind"].str());
            worst_time_ps = std::max(worst_time_ps, std::abs(a[k]["time_ns"].num() - b[k]["time_ns"].num()) * 1e3);
            for (const char* angle : {"launch_zenith_deg", "arrival_zenith_deg"})
                worst_angle_deg = std::max(worst_angle_deg, std::abs(a[k][angle].num() - b[k][angle].num()));
        }
    }
    INFO(paths << " paths, " << shadowed << " pairs in the shadow zone, " << far << " joined 3 km apart; worst " << worst_time_ps << " ps, "
               << worst_angle_deg << " deg");
    CHECK(paths > 100);
    CHECK(shadowed > 5);
    CHECK(far >= 3);  // pairs 3 km apart that paths do join
    CHECK(worst_time_ps < 1.0);
    CHECK(worst_angle_deg < 1e-4);
}

TEST_CASE("firnray connect: a vertical pair (ξ = 0, azimuth 0), equal depths (rays that rise and come back) and a "
          "receiver in the air (one transmitted path) come out whole (definition, docs/physics.md §3, Snell)",
          "[cli][connect]") {
    const JsonValue vertical = run_json({"--source", "5,-150", "--receiver", "5,-30"});
    CHECK(vertical["horizontal_distance_m"].num() == 0.0);
    CHECK(vertical["azimuth_deg"].num() == 0.0);
    REQUIRE(vertical["paths"].size() == 2u);
    for (const JsonValue& p : vertical["paths"].array) {
        CHECK(p["ray_parameter"].num() == 0.0);
        check_path_members(p);
    }
    CHECK(vertical["paths"][0]["launch_zenith_deg"].num() == 0.0);
    CHECK(vertical["paths"][1]["arrival_zenith_deg"].num() == 180.0);

    const JsonValue level = run_json({"--source", "0,-50", "--receiver", "30,-50"});
    REQUIRE(level["paths"].size() >= 1u);
    for (const JsonValue& p : level["paths"].array) {
        CHECK(p["kind"].str() != "direct");
        CHECK(p["launch_zenith_deg"].num() == Approx(180.0 - p["arrival_zenith_deg"].num()));
    }

    const JsonValue air = run_json({"--source", "0,-50", "--receiver", "200,10"});
    REQUIRE(air["paths"].size() == 1u);
    const JsonValue& t = air["paths"][0];
    CHECK(t["kind"].str() == "transmitted");
    CHECK(t["crosses_surface"].flag());
    // Snell at the surface: n_air sin(arrival) = ξ with n_air = 1 in the default model.
    CHECK(std::sin(deg_to_rad(t["arrival_zenith_deg"].num())) == Approx(t["ray_parameter"].num()).epsilon(1e-12));
    CHECK(t["events"][0]["kind"].str() == "surface crossing");
    CHECK(t["events"][0]["z_m"].num() == 0.0);
}

TEST_CASE("firnray connect: the README example works and --output writes the same text as stdout", "[cli][connect]") {
    const auto r = run_firnray({"connect", "--source", "250,-20", "--receiver", "0,-100"});
    REQUIRE(r.exit_code == 0);
    CHECK(r.out.find("2 paths, in order of arrival") != std::string::npos);
    CHECK(r.out.find("refracted") != std::string::npos);
    const std::string dir = temp_folder("connect-output");
    const auto file = run_firnray({"connect", "--source", "250,-20", "--receiver", "0,-100", "-o", dir + "/p.txt"});
    REQUIRE(file.exit_code == 0);
    CHECK(file.out.empty());
    CHECK(read_file(dir + "/p.txt") == r.out);
    const auto help = run_firnray({"connect", "--help"});
    CHECK(help.exit_code == 0);
    CHECK(help.out.find("--pairs") != std::string::npos);
    CHECK(help.out.find("zenith") != std::string::npos);
}

TEST_CASE("firnray connect and delays on a table model with an inversion list ducted paths with their turns in text, "
          "CSV and JSON (issue 9 behaviour), and --solver numeric refuses it with exit code 3",
          "[cli][connect][delays]") {
    const std::string dir = temp_folder("connect-ducts");
    // A synthetic log: n falls from 25 m to 30 m depth under a dense layer, a duct around 25 m.
    const std::string model = write_file(dir + "/lens.toml", R"TOML(name = "synthetic log with a lens (test)"
[index]
kind = "table"
depth_m = [0, 5, 10, 15, 20, 25, 30, 35, 40, 50, 60, 80, 150]
n = [1.35, 1.42, 1.48, 1.53, 1.57, 1.66, 1.60, 1.62, 1.65, 1.68, 1.71, 1.74, 1.78]
[air]
n = 1.0
)TOML");
    const std::vector<std::string> pair{"connect", "--model", model, "--source", "0,-24", "--receiver", "200,-27",
                                        "--max-bounces", "6"};
    auto with = [&](std::vector<std::string> extra) {
        std::vector<std::string> args = pair;
        args.insert(args.end(), extra.begin(), extra.end());
        return run_firnray(args);
    };
    const CliResult text = with({});
    INFO(text.out << text.err);
    REQUIRE(text.exit_code == 0);
    CHECK(text.out.find("solver:   stratified") != std::string::npos);
    CHECK(text.out.find("ducted") != std::string::npos);
    CHECK(text.out.find("turning z=-2") != std::string::npos);

    const CliResult csv = with({"--format", "csv"});
    REQUIRE(csv.exit_code == 0);
    const CsvTable table = parse_csv(csv.out, "stdout");
    int ducted = 0;
    for (const CsvRow& row : table.rows) {
        table.check_row(row);
        if (table.text(row, table.column("kind")) != "ducted") continue;
        ++ducted;
        // Two or more turns, each with its depth: "turning z=... x=...;turning z=... x=...".
        const std::string events = table.text(row, table.column("events"));
        CHECK(std::count(events.begin(), events.end(), ';') + 1 == table.number(row, "turning_points"));
        CHECK(table.number(row, "turning_points") >= 2);
    }
    CHECK(ducted >= 2);

    const JsonValue json = run_json({"--model", model, "--source", "0,-24", "--receiver", "200,-27", "--max-bounces", "6"});
    int json_ducted = 0;
    for (const JsonValue& p : json["paths"].array) {
        check_path_members(p);
        if (p["kind"].str() != "ducted") continue;
        ++json_ducted;
        REQUIRE(p["events"].size() >= 2u);
        // Two ducted paths differ in their turns: the depths are those of the duct's two ends.
        const double first = p["events"][0]["z_m"].num(), second = p["events"][1]["z_m"].num();
        CHECK(first != second);
        CHECK(std::min(first, second) > -31.0);
        CHECK(std::max(first, second) < -20.0);
    }
    CHECK(json_ducted == ducted);

    const CliResult numeric = with({"--solver", "numeric"});
    CHECK(numeric.exit_code == 3);
    CHECK(numeric.err.find("synthetic log with a lens (test)") != std::string::npos);
    CHECK(numeric.err.find("falls with depth from depth 25 m") != std::string::npos);

    // delays on the same model: a one-string station in the duct, the kinds and turns in the table.
    const std::string station = write_file(dir + "/station.toml", R"TOML(name = "duct station (test)"
[[string]]
name = "A"
x_m = 0.0
y_m = 0.0
[[string.receiver]]
name = "A1"
depth_m = 24.0
[[string.receiver]]
name = "A2"
depth_m = 26.0
)TOML");
    const std::string sources = write_file(dir + "/sources.csv", "name,x_m,z_m\nfar,200,-27\n");
    const CliResult delays = run_firnray({"delays", "--model", model, "--station", station, "--sources", sources,
                                          "--max-bounces", "6", "--quiet"});
    INFO(delays.out << delays.err);
    REQUIRE(delays.exit_code == 0);
    const CsvTable delay_table = parse_csv(delays.out, "stdout");
    int delay_ducted = 0;
    for (const CsvRow& row : delay_table.rows)
        if (delay_table.text(row, delay_table.column("kind")) == "ducted") {
            ++delay_ducted;
            CHECK(delay_table.text(row, delay_table.column("events")).find("turning z=") != std::string::npos);
        }
    CHECK(delay_ducted >= 2);
}
