// Rendering profiles and fits (src/output/profile_output.*): the samples table, the model block
// of its JSON, a fit written as a model file that loads back (checked against the exponential
// model itself), and NaN refused with the column named.
#include <catch2/catch.hpp>

#include <cmath>
#include <limits>
#include <sstream>
#include <string>
#include <vector>

#include "core/errors.hpp"
#include "io/csv_reader.hpp"
#include "model/fit.hpp"
#include "model/fit_data.hpp"
#include "model/model_file.hpp"
#include "model/profile_samples.hpp"
#include "output/profile_output.hpp"

using namespace firnray;

TEST_CASE("profile outputs: the samples table, the model block of its JSON, and a fit written as a model file "
          "that loads back with the fitted parameters",
          "[output][fit]") {
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

TEST_CASE("profile outputs: stream and string forms agree, and a NaN sample is refused naming its column",
          "[output][fit]") {
    const FirnModel model = default_model();
    auto samples = sample_profile(*model.index, 0.0, 10.0, 5.0);
    std::ostringstream csv, json;
    write_profile_samples_csv(csv, samples);
    write_profile_samples_json(json, model, samples);
    CHECK(csv.str() == profile_samples_csv(samples));
    CHECK(json.str() == profile_samples_json(model, samples));
    samples[1].dn_dz_per_m = std::numeric_limits<double>::quiet_NaN();
    CHECK_THROWS_WITH(profile_samples_csv(samples), Catch::Contains("'dn_dz_per_m' is NaN"));
    CHECK_THROWS_WITH(profile_samples_json(model, samples), Catch::Contains("samples[1].dn_dz_per_m"));
    samples[1].dn_dz_per_m = 0.0;
    samples[2].n = std::numeric_limits<double>::infinity();
    CHECK_THROWS_AS(profile_samples_csv(samples), NumericalError);
}
