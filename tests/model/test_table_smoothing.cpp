// The optional smoothing of table models (smoothing_m, docs/physics.md §1.4): a Gaussian average
// of the tabulated index with the ends continued by odd reflection.
#include <cmath>
#include <numbers>
#include <sstream>
#include <vector>

#include <catch2/catch.hpp>

#include "core/errors.hpp"
#include "model/model_file.hpp"
#include "model/table_profile.hpp"
#include "model/table_smoothing.hpp"
#include "output/model_json.hpp"

using namespace firnray;

TEST_CASE("table smoothing leaves a linear profile unchanged, exact for a symmetric kernel (common practice)",
          "[model][smoothing]") {
    // Uneven spacing on purpose, and a σ larger than the whole table (the reflections repeat).
    const std::vector<double> depth{0.0, 0.3, 1.0, 2.5, 2.6, 4.0, 7.5, 12.0};
    for (const double sigma : {0.05, 0.7, 3.0, 40.0}) {
        std::vector<double> n;
        for (const double d : depth) n.push_back(1.3 + 0.01 * d);
        const auto smoothed = gaussian_smoothed(depth, n, sigma);
        REQUIRE(smoothed.size() == n.size());
        for (std::size_t i = 0; i < n.size(); ++i) CHECK(smoothed[i] == Approx(n[i]).margin(1e-12));
    }
}

TEST_CASE("table smoothing damps a sine layering of wavelength L by exp(-2 pi^2 sigma^2 / L^2), the Fourier "
          "transform of a Gaussian (any signal-processing textbook)",
          "[model][smoothing]") {
    std::vector<double> depth, n;
    const double wavelength = 5.0, amplitude = 0.02;
    for (int i = 0; i <= 4000; ++i) {
        depth.push_back(0.05 * i);
        n.push_back(1.6 + amplitude * std::sin(2.0 * std::numbers::pi * depth.back() / wavelength));
    }
    for (const double sigma : {0.5, 1.0, 2.0}) {
        const double transfer = std::exp(-2.0 * std::numbers::pi * std::numbers::pi * sigma * sigma /
                                         (wavelength * wavelength));
        const auto smoothed = gaussian_smoothed(depth, n, sigma);
        for (std::size_t i = 0; i < depth.size(); ++i) {
            if (depth[i] < 10.0 * sigma || depth[i] > depth.back() - 10.0 * sigma) continue;  // away from the ends
            const double expected = 1.6 + transfer * (n[i] - 1.6);
            // The curve smoothed is the piecewise-linear one through the samples (spacing L/100):
            // it differs from the sine by about (pi h / L)^2 / 3 of the amplitude.
            CHECK(smoothed[i] == Approx(expected).margin(2e-4 * amplitude));
        }
    }
}

TEST_CASE("table smoothing keeps the end values and does not bias the surface (odd reflection, common practice)",
          "[model][smoothing]") {
    std::vector<double> depth, n;
    for (int i = 0; i <= 100; ++i) {
        depth.push_back(2.0 * i);
        n.push_back(1.78 - 0.43 * std::exp(-depth.back() / 37.0));
    }
    const auto smoothed = gaussian_smoothed(depth, n, 3.0);
    CHECK(smoothed.front() == n.front());
    CHECK(smoothed.back() == n.back());
    // Near the surface the error is of second order (the curvature), with no first-order term:
    // a kernel cut at the surface and renormalised would shift the value by about 0.8 σ n'
    // (0.028 here), the reflected one by less than a few σ² n''.
    const double slope = 0.43 / 37.0, curvature = 0.43 / (37.0 * 37.0), sigma = 3.0;
    const double shift = std::abs(smoothed[1] - n[1]);
    CHECK(shift < 3.0 * sigma * sigma * curvature);
    CHECK(shift < 0.3 * std::sqrt(2.0 / std::numbers::pi) * sigma * slope);
}

TEST_CASE("table profile: smoothing_m in a model file, its bounds and its round trip", "[model][smoothing]") {
    const std::string text =
        "name = \"s\"\n"
        "[index]\n"
        "kind = \"table\"\n"
        "depth_m = [0, 1, 2, 3, 4, 5, 6, 7]\n"
        "n = [1.30, 1.40, 1.45, 1.38, 1.50, 1.55, 1.60, 1.62]\n"
        "smoothing_m = 1.5\n";  // line 6
    const FirnModel model = parse_model(text, "s.toml");
    const auto& table = dynamic_cast<const TableProfile&>(*model.index);
    REQUIRE(table.smoothing_m() == 1.5);
    CHECK(table.tabulated_n()[3] == 1.38);
    CHECK(table.n_values()[3] != 1.38);
    CHECK(table.describe().find("smoothed by a Gaussian of sigma 1.5 m") != std::string::npos);
    std::ostringstream json_text;
    {
        JsonWriter json(json_text);
        write_model_json(json, model);
        json.flush();
    }
    CHECK(json_text.str().find("\"smoothing_m\": 1.5") != std::string::npos);

    const std::string written = model_to_toml(model);
    CHECK(written.find("smoothing_m = 1.5") != std::string::npos);
    const FirnModel again = parse_model(written, "again.toml");
    const auto& back = dynamic_cast<const TableProfile&>(*again.index);
    CHECK(back.smoothing_m() == table.smoothing_m());
    CHECK(back.tabulated_n() == table.tabulated_n());
    CHECK(back.n_values() == table.n_values());

    for (const char* bad : {"0", "-1", "0.001", "500"}) {
        std::string bad_text = text;
        bad_text.replace(bad_text.find("1.5\n"), 3, bad);
        try {
            parse_model(bad_text, "s.toml");
            FAIL("no error for smoothing_m = " << bad);
        } catch (const ModelInputError& e) {
            INFO(e.what());
            CHECK(e.where().line == 6);
            CHECK(e.where().key == "index.smoothing_m");
            CHECK(std::string(e.what()).rfind("s.toml:6: key 'index.smoothing_m'", 0) == 0);
        }
    }
    // Without smoothing_m the table is taken as it is.
    std::string plain = text;
    plain.erase(plain.find("smoothing_m"));
    const FirnModel as_is = parse_model(plain, "p.toml");
    const auto& raw = dynamic_cast<const TableProfile&>(*as_is.index);
    CHECK_FALSE(raw.smoothing_m());
    CHECK(raw.n_values() == raw.tabulated_n());
    CHECK(model_to_toml(as_is).find("smoothing_m") == std::string::npos);
}

TEST_CASE("table profile: smoothing applies only to tables", "[model][smoothing]") {
    CHECK_THROWS_AS(parse_model("[index]\nkind = \"exponential\"\nn_deep = 1.78\nn_surface = 1.35\nscale_depth_m = 37\n"
                                "smoothing_m = 2\n",
                                "e.toml"),
                    ModelInputError);
}
