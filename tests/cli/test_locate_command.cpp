// End-to-end: firnray locate and firnray resolution run as a user would. The demo pulsers'
// arrival times (made by the path finder with 0.5 ns noise) give back the pulser position within
// a few σ of the reported covariance (normal distribution); a batch with a bad event exits 7 and
// fits the others; the resolution map leaves unresolved cells without a number.
#include <catch2/catch.hpp>

#include <cmath>
#include <string>

#include "io/csv_reader.hpp"
#include "support/json_reader.hpp"
#include "support/run_cli.hpp"

using namespace firnray;
using namespace firnray::test;

TEST_CASE("locate reconstructs the demo pulser within its reported uncertainty and reports the bad events (exit 7)",
          "[cli][locate]") {
    const CliResult r = run_firnray({"locate", "--station", source_path("demo/station.toml"), "--arrivals",
                                     source_path("demo/locate-events.csv"), "--format", "json", "--quiet"});
    INFO(r.err);
    REQUIRE(r.exit_code == 7);
    CHECK_THAT(r.err, Catch::Contains("3 of 6 events"));
    const JsonValue doc = parse_json(r.out);
    CHECK(doc.has("model"));
    CHECK(doc["station"]["name"].string == "Kestrel Station (fictional)");
    const JsonValue& events = doc["events"];
    REQUIRE(events.size() == 6);
    int fitted = 0;
    for (const JsonValue& e : events.array) {
        if (e.has("error")) {
            CHECK_THAT(e["error"].string, Catch::Contains("at least 4"));
            continue;
        }
        ++fitted;
        // demo/calibration-sources.csv: pulser-D-150m at (350, 120, -150).
        const double truth[3] = {350.0, 120.0, -150.0};
        const char* names[3] = {"x_m", "y_m", "z_m"};
        for (int k = 0; k < 3; ++k) {
            const double sigma = std::sqrt(e["covariance_m2"][static_cast<std::size_t>(k)][static_cast<std::size_t>(k)].num());
            CHECK(std::abs(e[names[k]].num() - truth[k]) < 4.0 * sigma);
        }
        CHECK(e["ndof"].num() == e["pulses"].size() - 4.0);
        CHECK(e["chi2"].num() < 60.0);
        for (const JsonValue& p : e["pulses"].array) CHECK(p["kind"].string != "none");
        CHECK(e["alternatives"].size() == 0);
        CHECK(e.has("sigma_azimuth_deg"));
    }
    CHECK(fitted == 3);
}

TEST_CASE("locate CSV has one line per event and the same errors, text names the event", "[cli][locate]") {
    const std::string folder = temp_folder("locate-cli");
    const CliResult csv = run_firnray({"locate", "--station", source_path("demo/station.toml"), "--arrivals",
                                       source_path("demo/locate-events.csv"), "--format", "csv", "-o",
                                       folder + "/fits.csv", "--quiet"});
    REQUIRE(csv.exit_code == 7);
    const CsvTable table = read_csv(folder + "/fits.csv");
    REQUIRE(table.rows.size() == 6);
    for (const CsvRow& row : table.rows) {
        table.check_row(row);
        const bool failed = !table.text(row, table.column("error")).empty();
        CHECK(table.text(row, table.column("x_m")).empty() == failed);
    }
    const CliResult missing = run_firnray({"locate", "--station", source_path("demo/station.toml"), "--arrivals",
                                           write_file(folder + "/bad.csv", "event,channel\ne,A1\n"), "--quiet"});
    CHECK(missing.exit_code == 4);
    CHECK_THAT(missing.err, Catch::Contains("time_ns"));
}

TEST_CASE("resolution writes a CSV and an SVG, unresolved cells have no 1-sigma", "[cli][locate]") {
    const std::string folder = temp_folder("resolution-cli");
    const CliResult r = run_firnray({"resolution", "--station", source_path("demo/station.toml"), "--source-distance",
                                     "0:1500", "--source-depth", "0:300", "--distance-cells", "12", "--depth-cells",
                                     "6", "-o", folder + "/res.csv", "--plot", folder + "/res.svg", "--quiet"});
    INFO(r.err);
    REQUIRE(r.exit_code == 0);
    const CsvTable table = read_csv(folder + "/res.csv");
    REQUIRE(table.rows.size() == 72);
    int resolved = 0, unresolved = 0;
    for (const CsvRow& row : table.rows) {
        if (table.text(row, table.column("resolved")) == "1") {
            ++resolved;
            CHECK(table.number(row, "sigma_depth_m") > 0.0);
        } else {
            ++unresolved;
            CHECK(table.text(row, table.column("sigma_depth_m")).empty());
            CHECK_FALSE(table.text(row, table.column("reason")).empty());
        }
    }
    CHECK(resolved > 0);
    CHECK(unresolved > 0);  // the shadow of the station, far and shallow
    CHECK_THAT(read_file(folder + "/res.svg"), Catch::Contains("<svg"));
    const CliResult bad = run_firnray({"resolution", "--station", source_path("demo/station.toml"), "--timing-sigma-ns",
                                       "0", "--quiet"});
    CHECK(bad.exit_code == 2);
}
