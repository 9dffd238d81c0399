// Reading fit data (src/model/fit_data.*) and rendering profiles and fits
// (src/model/profile_output.*): checked against the definitions of the columns and the published
// density rules, and against the exponential model itself.
#include <cmath>

#include <catch2/catch.hpp>

#include "core/errors.hpp"
#include "io/csv_reader.hpp"
#include "model/model_file.hpp"
#include "output/profile_output.hpp"
#include "support/run_cli.hpp"

using namespace firnray;
using firnray::test::temp_folder;
using firnray::test::write_file;

TEST_CASE("read_fit_data: z columns become depths and densities in g/cm3 become n by Kovacs et al. (1995)",
          "[model][fit]") {
    const std::string path = write_file(temp_folder("fit-data") + "/log.csv", "z,rho\n0,0.4\n-10,0.5\n-30,0.7\n");
    FitColumns columns;
    columns.depth = "z";
    columns.depth_is_z = true;
    columns.value = "rho";
    columns.density_rule = DensityRule::kovacs;
    columns.density_unit = DensityUnit::g_cm3;
    const FitData data = read_fit_data(path, columns);
    CHECK(data.path == path);
    CHECK(data.depth_m == std::vector<double>{0.0, 10.0, 30.0});
    CHECK(data.value == std::vector<double>{0.4, 0.5, 0.7});
    // n = 1 + 0.845 rho (Kovacs, Gow & Morey 1995, from memory).
    const auto n = data.index_values();
    REQUIRE(n.size() == 3);
    CHECK(n[1] == Approx(1.0 + 0.845 * 0.5).epsilon(1e-15));
}

TEST_CASE("read_fit_data: bad rows are data errors naming the file, line and column", "[model][fit]") {
    const std::string dir = temp_folder("fit-data-bad");
    FitColumns n_columns;  // depth_m and n
    CHECK_THROWS_WITH(read_fit_data(write_file(dir + "/neg.csv", "depth_m,n\n5,1.4\n-3,1.5\n"), n_columns),
                      Catch::Matchers::Contains("neg.csv:3: key 'depth_m': depth -3 m is negative"));
    CHECK_THROWS_WITH(read_fit_data(write_file(dir + "/low.csv", "depth_m,n\n5,0.9\n"), n_columns),
                      Catch::Matchers::Contains("low.csv:2: key 'n': n = 0.9 is below 1"));
    CHECK_THROWS_AS(read_fit_data(write_file(dir + "/empty.csv", "depth_m,n\n"), n_columns), DataInputError);
    FitColumns density;
    density.value = "rho";
    density.density_rule = DensityRule::looyenga;  // in kg/m3 by default: 1.4 kg/m3 is no firn density
    CHECK_THROWS_WITH(read_fit_data(write_file(dir + "/unit.csv", "depth_m,rho\n5,1.4\n"), density),
                      Catch::Matchers::Contains("unit.csv:2: key 'rho': density 1.4 kg/m3 is not a snow, firn or ice density"));
    CHECK_THROWS_WITH(read_fit_data(write_file(dir + "/col.csv", "depth_m,index\n5,1.4\n"), n_columns),
                      Catch::Matchers::Contains("col.csv"));
}

TEST_CASE("profile outputs: the samples table, the model block of its JSON, and a fit written as a model file "
          "that loads back with the fitted parameters",
          "[model][fit]") {
    const FirnModel model = default_model();
    const auto samples = sample_profile(*model.index, 0.0, 10.0, 5.0);
    const CsvTable table = parse_csv(profile_samples_csv(samples), "csv");
    CHECK(table.columns == std::vector<std::string>{"depth_m", "z_m", "n", "dn_dz_per_m"});
    CHECK(table.rows.size() == 3);
    const std::string json = profile_samples_json(model, samples);
    CHECK(json.find("\"model\": {") != std::string::npos);
    CHECK(json.find("\"n_air\": 1") != std::string::npos);
    CHECK(profile_svg(model, samples).find("</svg>") != std::string::npos);

    // Points exactly on n = 1.78 - 0.43 exp(-d / 37 m): the fit recovers it.
    FitData data;
    data.path = "exact.csv";
    for (double d = 0.0; d <= 150.0; d += 10.0) {
        data.depth_m.push_back(d);
        data.value.push_back(1.78 - 0.43 * std::exp(-d / 37.0));
    }
    const ExponentialFit fit = fit_exponential(data);
    CHECK(fit_report_text(data, fit).find("exponential fit to exact.csv (16 points, index values)") == 0);
    CHECK(fit_report_json(data, fit).find("\"covariance\": [") != std::string::npos);
    CHECK(fit_svg(data, fit).find("Exponential fit to exact.csv") != std::string::npos);
    const FirnModel back = parse_model(fitted_model_toml(data, fit, "", "fitted.toml"), "fitted.toml");
    CHECK(back.name == "exponential fit to exact.csv");
    const auto& profile = dynamic_cast<const ExponentialProfile&>(*back.index);
    CHECK(profile.n_deep() == Approx(1.78).epsilon(1e-6));
    CHECK(profile.scale_depth_m() == Approx(37.0).epsilon(1e-5));
}
