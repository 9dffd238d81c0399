// The narrow-band array factor against uniform-linear-array theory (Balanis, Antenna Theory,
// ch. 6): peak where the phase step puts it, half-power width proportional to λ/(N d), grating
// lobes where cos θ_m = cos θ0 + m λ/d.
#include <catch2/catch.hpp>

#include <cmath>
#include <memory>

#include "beams/array_factor.hpp"
#include "beams/beam_table.hpp"
#include "core/constants.hpp"
#include "core/errors.hpp"
#include "model/index_profile.hpp"

using namespace firnray;

namespace {

PhasedArray uniform_array(int antennas, double spacing_m) {
    Station station;
    for (int k = 0; k < antennas; ++k) {
        Receiver r;
        r.name = "A" + std::to_string(k);
        r.string_name = "S";
        r.z_m = -200.0 - spacing_m * k;
        station.receivers.push_back(r);
    }
    return make_phased_array(station, "S");
}

std::vector<double> zenith_grid(double step) {
    std::vector<double> z;
    for (int i = 0; i * step <= 180.0 + 1e-9; ++i) z.push_back(std::min(180.0, i * step));
    return z;
}

}  // namespace

TEST_CASE("array factor peaks where the phase step puts the beam, cos(theta0) = dphi / (k d) (Balanis, Antenna Theory)", "[beams][array-factor]") {
    const double n = 1.78, f = 300e6, d = 0.25;  // spacing below λ/2: no grating lobes
    const StratifiedProfile profile(std::make_shared<ConstantProfile>(n));
    const PhasedArray array = uniform_array(8, d);
    const double k = 2.0 * pi * n * f / speed_of_light;
    for (double phase_step : {-1.5, -0.6, 0.0, 0.4, 1.2}) {
        // The steering angle from the phase step: k d cos θ0 = Δφ (the zenith's cosine is linear in
        // Δφ with slope λ/(2π d)).
        const double theta0 = rad_to_deg(std::acos(phase_step / (k * d)));
        const PlaneWaveOffsets beam = plane_wave_offsets(profile, array, theta0);
        const auto sweep = plane_wave_sweep(profile, array, zenith_grid(0.05));
        const ArrayFactorCurve curve = array_factor_curve(sweep, beam, f);
        std::size_t peak = 0;
        for (std::size_t i = 1; i < curve.value.size(); ++i)
            if (curve.value[i] > curve.value[peak]) peak = i;
        CHECK(curve.zenith_deg[peak] == Approx(theta0).margin(0.05));
        CHECK(curve.value[peak] == Approx(1.0).margin(1e-3));
        CHECK(grating_lobes_deg(curve, theta0).empty());
    }
}

TEST_CASE("half-power width at broadside is 0.886 lambda / (N d) and scales as lambda / (N d) (Balanis, Antenna Theory, from memory)", "[beams][array-factor]") {
    const double n = 1.78, f = 300e6;
    const double lambda = speed_of_light / (n * f);
    const StratifiedProfile profile(std::make_shared<ConstantProfile>(n));
    double previous = 0.0;
    for (int antennas : {8, 16, 32}) {
        const PhasedArray array = uniform_array(antennas, 0.25);
        const PlaneWaveOffsets beam = plane_wave_offsets(profile, array, 90.0);
        const double width = half_power_width_deg(profile, array, beam, f);
        // The uniform array's factor sin(Nψ/2) / (N sin(ψ/2)), ψ = k d cos θ, equals 1/√2 at half
        // power: solved by bisection on the main lobe (0, 2π/N).
        auto uniform_factor = [&](double psi) { return std::sin(antennas * psi / 2) / (antennas * std::sin(psi / 2)); };
        double low = 1e-9, high = 2.0 * pi / antennas;
        for (int i = 0; i < 100; ++i) (uniform_factor(0.5 * (low + high)) > 1.0 / std::sqrt(2.0) ? low : high) = 0.5 * (low + high);
        const double exact = 2.0 * rad_to_deg(std::asin(low / (2.0 * pi / lambda * 0.25)));
        CHECK(width == Approx(exact).epsilon(1e-3));
        CHECK(deg_to_rad(width) == Approx(0.886 * lambda / (antennas * 0.25)).epsilon(0.03));
        if (previous > 0.0) CHECK(previous / width == Approx(2.0).epsilon(0.02));
        previous = width;
    }
}

TEST_CASE("grating lobes appear where cos(theta_m) = cos(theta0) + m lambda / d once d exceeds lambda/(1+|cos theta0|) (Balanis, Antenna Theory)", "[beams][array-factor]") {
    const double n = 1.78, f = 300e6, d = 1.0;
    const double lambda = speed_of_light / (n * f);
    const StratifiedProfile profile(std::make_shared<ConstantProfile>(n));
    const PhasedArray array = uniform_array(8, d);
    const auto sweep = plane_wave_sweep(profile, array, zenith_grid(0.02));
    for (double theta0 : {90.0, 70.0, 120.0}) {
        const PlaneWaveOffsets beam = plane_wave_offsets(profile, array, theta0);
        const auto lobes = grating_lobes_deg(array_factor_curve(sweep, beam, f), theta0);
        std::vector<double> expected;
        for (int m = -3; m <= 3; ++m) {
            const double c = std::cos(deg_to_rad(theta0)) + m * lambda / d;
            if (m != 0 && std::abs(c) <= 1.0) expected.push_back(rad_to_deg(std::acos(c)));
        }
        std::sort(expected.begin(), expected.end());
        REQUIRE(lobes.size() == expected.size());
        for (std::size_t i = 0; i < lobes.size(); ++i) CHECK(lobes[i] == Approx(expected[i]).margin(0.03));
    }
}

TEST_CASE("beam table: offsets in whole samples, widths per beam, and bad frequencies or rates", "[beams]") {
    const StratifiedProfile profile(std::make_shared<ConstantProfile>(1.78));
    const PhasedArray array = uniform_array(4, 1.0);
    const BeamTable table = make_beam_table(profile, array, {60.0, 120.0}, 300e6, 2e9);
    REQUIRE(table.beams.size() == 2);
    REQUIRE(table.half_power_width_deg.size() == 2);
    // 3 m × 1.78 × cos 60° / c = 8.906 ns = 17.8 samples at 2 GHz, earlier for an up-going wave.
    CHECK(*table.offset_samples(0, 3) == -18);
    CHECK(*table.offset_samples(1, 3) == 18);
    CHECK(table.half_power_width_deg[0] == Approx(table.half_power_width_deg[1]).epsilon(1e-6));
    CHECK_THROWS_AS(make_beam_table(profile, array, {60.0}, 0.0, std::nullopt), DataInputError);
    CHECK_THROWS_AS(make_beam_table(profile, array, {60.0}, -3e8, std::nullopt), DataInputError);
    CHECK_THROWS_AS(make_beam_table(profile, array, {60.0}, 3e8, 0.0), DataInputError);
    CHECK_THROWS_AS(make_beam_table(profile, array, {60.0}, 3e8, -1e9), DataInputError);
    CHECK_FALSE(make_beam_table(profile, array, {60.0}, 3e8, std::nullopt).offset_samples(0, 1));
}
