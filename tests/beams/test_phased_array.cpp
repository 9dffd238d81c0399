// Plane-wave offsets of a phased array: uniform ice against geometry, an exponential profile
// against an independent Boost.Math quadrature of the vertical slowness integral, the turning
// conventions of docs/beams.md, and the bad inputs of a station string.
#include <catch2/catch.hpp>

#include <cmath>
#include <memory>
#include <string>

#include <boost/math/quadrature/tanh_sinh.hpp>

#include "beams/phased_array.hpp"
#include "core/constants.hpp"
#include "core/errors.hpp"
#include "model/index_profile.hpp"

using namespace firnray;

namespace {

Station vertical_string(int antennas, double top_depth_m, double spacing_m, const std::string& name = "P") {
    Station station;
    station.origin = "test-station.toml";
    for (int k = 0; k < antennas; ++k) {
        Receiver r;
        r.name = name + std::to_string(k + 1);
        r.string_name = name;
        r.z_m = -(top_depth_m + spacing_m * k);
        r.source_line = 10 + k;
        station.receivers.push_back(r);
    }
    return station;
}

}  // namespace

TEST_CASE("uniform ice: plane-wave offsets equal d n cos(theta) / c (geometry)", "[beams]") {
    const double n = 1.78;
    const StratifiedProfile profile(std::make_shared<ConstantProfile>(n));
    PhasedArray array = make_phased_array(vertical_string(8, 150.0, 1.0), "P");
    for (double zenith : {0.0, 20.0, 45.0, 70.0, 89.0, 91.0, 110.0, 135.0, 180.0}) {
        const PlaneWaveOffsets wave = plane_wave_offsets(profile, array, zenith);
        CHECK(wave.ray_parameter == Approx(n * std::sin(deg_to_rad(zenith))).margin(1e-12));
        for (std::size_t k = 0; k < array.antennas.size(); ++k) {
            REQUIRE(wave.offsets_s[k]);
            // Antenna k is d = k metres below the top (reference): an up-going wave reaches it
            // first, by d n cos θ / c.
            const double d = static_cast<double>(k);
            const double expected_ns = -d * n * std::cos(deg_to_rad(zenith)) / speed_of_light * 1e9;
            CHECK(*wave.offsets_s[k] * 1e9 == Approx(expected_ns).margin(1e-6));
        }
    }
}

TEST_CASE("exponential profile: offsets against a Boost.Math tanh-sinh quadrature of the vertical slowness integral", "[beams]") {
    // n(z) = 1.78 − 0.43 e^{z/37} (z < 0), the generic firn model.
    const auto index = std::make_shared<ExponentialProfile>(1.78, 1.35, 37.0);
    const StratifiedProfile profile(index);
    auto n_of = [](double z) { return 1.78 - 0.43 * std::exp(z / 37.0); };
    boost::math::quadrature::tanh_sinh<double> integrator;
    for (double top : {10.0, 40.0, 95.0}) {
        PhasedArray array = make_phased_array(vertical_string(8, top, 1.0), "P");
        set_reference(array, "P4");
        const double z_ref = array.reference_antenna().z_m;
        for (double zenith : {15.0, 50.0, 80.0, 100.0, 150.0}) {
            const PlaneWaveOffsets wave = plane_wave_offsets(profile, array, zenith);
            const double xi = n_of(z_ref) * std::sin(deg_to_rad(zenith));
            const double travel = zenith < 90.0 ? 1.0 : -1.0;
            for (std::size_t k = 0; k < array.antennas.size(); ++k) {
                const double z = array.antennas[k].z_m;
                const auto slowness = [&](double s) { return std::sqrt(std::max(0.0, n_of(s) * n_of(s) - xi * xi)); };
                bool reached = true;
                for (double s = std::min(z, z_ref); s <= std::max(z, z_ref); s += 0.01)
                    if (n_of(s) < xi) reached = false;
                if (!reached) {
                    CHECK_FALSE(wave.offsets_s[k]);
                    continue;
                }
                REQUIRE(wave.offsets_s[k]);
                const double integral = z == z_ref ? 0.0 : integrator.integrate(slowness, std::min(z, z_ref), std::max(z, z_ref));
                const double expected = travel * (z > z_ref ? 1.0 : -1.0) * integral / speed_of_light;
                CHECK(*wave.offsets_s[k] * 1e9 == Approx(expected * 1e9).margin(1e-6));
            }
        }
    }
}

TEST_CASE("turning conventions: 90 degrees takes the down-going branch, antennas beyond a turning point are not reached", "[beams]") {
    const StratifiedProfile profile(std::make_shared<ExponentialProfile>(1.78, 1.35, 37.0));
    PhasedArray array = make_phased_array(vertical_string(8, 30.0, 1.0), "P");
    set_reference(array, "P4");
    const PlaneWaveOffsets horizontal = plane_wave_offsets(profile, array, 90.0);
    const PlaneWaveOffsets below_horizontal = plane_wave_offsets(profile, array, 90.0 + 1e-6);
    for (std::size_t k = 0; k < 3; ++k) {
        CHECK_FALSE(horizontal.offsets_s[k]);  // above the reference: n < ξ there
        REQUIRE(horizontal.unreached[k]);
        CHECK(horizontal.unreached[k]->antenna_above);
        CHECK(horizontal.unreached[k]->turning_depth_m == Approx(33.0));
    }
    for (std::size_t k = 4; k < 8; ++k) {
        REQUIRE(horizontal.offsets_s[k]);
        CHECK(*horizontal.offsets_s[k] > 0.0);  // the wave travels down: deeper antennas later
        // The limit from above 90°.
        CHECK(*horizontal.offsets_s[k] * 1e9 == Approx(*below_horizontal.offsets_s[k] * 1e9).margin(1e-3));
    }
    // Just below 90° the wave travels up and has come from below: deeper antennas earlier.
    const PlaneWaveOffsets up = plane_wave_offsets(profile, array, 89.0);
    for (std::size_t k = 4; k < 8; ++k) CHECK(*up.offsets_s[k] < 0.0);
}

TEST_CASE("phased array: bad strings, references and zeniths are refused with their place", "[beams]") {
    const StratifiedProfile profile(std::make_shared<ConstantProfile>(1.78));
    SECTION("fewer than 2 antennas") {
        const Station one = vertical_string(1, 100.0, 1.0);
        try {
            make_phased_array(one, "P");
            FAIL("no error");
        } catch (const ModelInputError& e) {
            CHECK(std::string(e.what()).find("at least 2") != std::string::npos);
            CHECK(e.where().file == "test-station.toml");
            CHECK(e.where().line == 10);
        }
    }
    SECTION("two antennas at one depth") {
        Station station = vertical_string(3, 100.0, 1.0);
        station.receivers[2].z_m = station.receivers[1].z_m;
        CHECK_THROWS_AS(make_phased_array(station, "P"), ModelInputError);
        CHECK_THROWS_WITH(make_phased_array(station, "P"), Catch::Contains("same depth"));
    }
    SECTION("an antenna off the vertical line") {
        Station station = vertical_string(3, 100.0, 1.0);
        station.receivers[1].x_m = 2.0;
        CHECK_THROWS_WITH(make_phased_array(station, "P"), Catch::Contains("vertical"));
    }
    SECTION("an unknown string and an unknown reference") {
        const Station station = vertical_string(3, 100.0, 1.0);
        CHECK_THROWS_AS(make_phased_array(station, "Q"), DataInputError);
        PhasedArray array = make_phased_array(station, "P");
        CHECK_THROWS_WITH(set_reference(array, "P9"), Catch::Contains("P9"));
    }
    SECTION("a zenith outside 0 to 180 degrees") {
        const PhasedArray array = make_phased_array(vertical_string(3, 100.0, 1.0), "P");
        CHECK_THROWS_AS(plane_wave_offsets(profile, array, -1.0), DataInputError);
        CHECK_THROWS_AS(plane_wave_offsets(profile, array, 180.5), DataInputError);
        CHECK_THROWS_AS(plane_wave_offsets(profile, array, NAN), DataInputError);
        CHECK_THROWS_AS(evenly_spaced_zeniths(0, 10.0, 20.0), DataInputError);
    }
}

TEST_CASE("evenly spaced beam zeniths put the first and last beam at the ends of the range", "[beams]") {
    const auto z = evenly_spaced_zeniths(5, 60.0, 120.0);
    REQUIRE(z.size() == 5);
    CHECK(z.front() == 60.0);
    CHECK(z.back() == 120.0);
    CHECK(z[2] == Approx(90.0));
    CHECK(evenly_spaced_zeniths(1, 70.0, 120.0) == std::vector<double>{70.0});
}
