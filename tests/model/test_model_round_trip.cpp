// Writing a model of every kind to TOML and reading it back gives the same model to the last bit;
// and the layered and table profiles that the bounds let through give finite n and dn/dz at every
// depth a solver may ask about (z from -1e5 m to 0).
#include <cmath>
#include <cstring>
#include <memory>

#include <catch2/catch.hpp>

#include "core/errors.hpp"
#include "model/attenuation.hpp"
#include "model/layered_profile.hpp"
#include "model/model_file.hpp"
#include "model/table_profile.hpp"

using namespace firnray;

namespace {

std::uint64_t bits_of(double value) {
    std::uint64_t bits;
    std::memcpy(&bits, &value, sizeof bits);
    return bits;
}

bool same_bits(const std::vector<double>& a, const std::vector<double>& b) {
    if (a.size() != b.size()) return false;
    for (std::size_t i = 0; i < a.size(); ++i)
        if (bits_of(a[i]) != bits_of(b[i])) return false;
    return true;
}

// Values chosen to need all 17 digits, so that a lossy writer would show.
const double n_deep = 1.7800000000000002, n_surface = 1.3500000000000001, scale = 37.123456789012345;

FirnModel with_profile(std::shared_ptr<const IndexProfile> index) {
    FirnModel model;
    model.name = "round trip \"quoted\" \\ name";
    model.origin = "test";
    model.index = std::move(index);
    model.n_air = 1.0002999999999999;
    return model;
}

FirnModel read_back(const FirnModel& model) { return parse_model(model_to_toml(model, "a round trip"), "back.toml"); }

void check_same_index_everywhere(const IndexProfile& a, const IndexProfile& b) {
    for (double z = 0.0; z >= -5000.0; z -= 3.7) {
        CHECK(bits_of(a.index(z)) == bits_of(b.index(z)));
        CHECK(bits_of(a.gradient(z)) == bits_of(b.gradient(z)));
    }
}

}  // namespace

TEST_CASE("model round trip: constant and exponential profiles, air, bottom", "[model][model_file][round-trip]") {
    FirnModel constant = with_profile(std::make_shared<ConstantProfile>(n_deep));
    constant.bottom = Bottom{-2799.9999999999995, 0.050000000000000003};
    const FirnModel c = read_back(constant);
    CHECK(c.name == constant.name);
    CHECK(bits_of(c.n_air) == bits_of(constant.n_air));
    CHECK(bits_of(dynamic_cast<const ConstantProfile&>(*c.index).value()) == bits_of(n_deep));
    REQUIRE(c.bottom.has_value());
    CHECK(bits_of(c.bottom->z_m) == bits_of(constant.bottom->z_m));
    CHECK(bits_of(c.bottom->power_reflectivity) == bits_of(constant.bottom->power_reflectivity));
    CHECK(c.attenuation == nullptr);

    const FirnModel e = read_back(with_profile(std::make_shared<ExponentialProfile>(n_deep, n_surface, scale)));
    const auto& p = dynamic_cast<const ExponentialProfile&>(*e.index);
    CHECK(bits_of(p.n_deep()) == bits_of(n_deep));
    CHECK(bits_of(p.n_surface()) == bits_of(n_surface));
    CHECK(bits_of(p.scale_depth_m()) == bits_of(scale));
    CHECK_FALSE(e.bottom.has_value());
}

TEST_CASE("model round trip: layered profiles keep every layer and the transition", "[model][model_file][round-trip]") {
    const std::vector<ExponentialLayer> layers{{10.000000000000002, 1.8500000000000001, 30.000000000000004},
                                               {55.5, 1.8599999999999999, 12.345678901234567},
                                               {std::numeric_limits<double>::infinity(), 1.8600000000000001, 40.1}};
    const auto original = std::make_shared<LayeredProfile>(1.3300000000000001, layers, 1.2345678901234567);
    const FirnModel back = read_back(with_profile(original));
    const auto& p = dynamic_cast<const LayeredProfile&>(*back.index);
    CHECK(bits_of(p.n_surface()) == bits_of(original->n_surface()));
    CHECK(bits_of(p.transition_m()) == bits_of(original->transition_m()));
    REQUIRE(p.layers().size() == 3);
    for (std::size_t i = 0; i < 3; ++i) {
        CHECK(bits_of(p.layers()[i].bottom_depth_m) == bits_of(layers[i].bottom_depth_m));
        CHECK(bits_of(p.layers()[i].n_deep) == bits_of(layers[i].n_deep));
        CHECK(bits_of(p.layers()[i].scale_depth_m) == bits_of(layers[i].scale_depth_m));
    }
    check_same_index_everywhere(*original, p);
}

TEST_CASE("model round trip: tables keep their points and their interpolation", "[model][model_file][round-trip]") {
    const std::vector<double> depth{0.0, 0.10000000000000001, 2.5, 7.3333333333333339, 20.0, 61.1};
    const std::vector<double> n{1.3, 1.3100000000000001, 1.4, 1.5333333333333334, 1.6, 1.7800000000000002};
    for (const auto interpolation : {TableInterpolation::monotone, TableInterpolation::spline}) {
        const auto original = std::make_shared<TableProfile>(depth, n, interpolation);
        const FirnModel back = read_back(with_profile(original));
        const auto& p = dynamic_cast<const TableProfile&>(*back.index);
        CHECK(p.interpolation() == interpolation);
        CHECK(same_bits(p.depth_m(), depth));
        CHECK(same_bits(p.n_values(), n));
        check_same_index_everywhere(*original, p);
    }
}

TEST_CASE("model round trip: constant and tabulated attenuation", "[model][model_file][round-trip]") {
    FirnModel constant = with_profile(std::make_shared<ConstantProfile>(1.78));
    constant.attenuation = std::make_shared<ConstantAttenuation>(999.99999999999989);
    const FirnModel c = read_back(constant);
    CHECK(bits_of(dynamic_cast<const ConstantAttenuation&>(*c.attenuation).length()) == bits_of(999.99999999999989));

    const std::vector<double> depth{0.0, 500.00000000000006, 2750.0}, length{1500.0, 1449.9999999999998, 400.1};
    FirnModel tabulated = with_profile(std::make_shared<ConstantProfile>(1.78));
    tabulated.attenuation = std::make_shared<TableAttenuation>(depth, length);
    const FirnModel t = read_back(tabulated);
    const auto& a = dynamic_cast<const TableAttenuation&>(*t.attenuation);
    CHECK(same_bits(a.depth_m(), depth));
    CHECK(same_bits(a.lengths_m(), length));
}

TEST_CASE("model round trip: a profile made in code that no model file can express is an output error",
          "[model][model_file][round-trip]") {
    class Odd final : public IndexProfile {
    public:
        double index(double) const override { return 1.5; }
        double gradient(double) const override { return 0.0; }
        std::string kind() const override { return "odd"; }
        std::string describe() const override { return "odd"; }
    };
    CHECK_THROWS_AS(model_to_toml(with_profile(std::make_shared<Odd>())), OutputError);
    class OddAttenuation final : public AttenuationProfile {
    public:
        double length_m(double) const override { return 1.0; }
        std::string describe() const override { return "odd attenuation"; }
    };
    FirnModel model = with_profile(std::make_shared<ConstantProfile>(1.5));
    model.attenuation = std::make_shared<OddAttenuation>();
    CHECK_THROWS_AS(model_to_toml(model), OutputError);
}

TEST_CASE("model bounds: layered and table profiles at the edges of the bounds give finite n and dn/dz from "
          "z = -1e5 m to 0",
          "[model][model_file][bounds]") {
    const std::vector<std::string> extremes{
        // the thinnest scales and transition, layers down to the deepest bottom allowed
        "[index]\nkind = \"layered\"\nn_surface = 1.0\ntransition_m = 0.01\n"
        "[[index.layer]]\nbottom_depth_m = 0.02\nn_deep = 1.5\nscale_depth_m = 0.01\n"
        "[[index.layer]]\nbottom_depth_m = 9999.99\nn_deep = 2.0\nscale_depth_m = 10000\n"
        "[[index.layer]]\nn_deep = 1.9\nscale_depth_m = 1\n",
        "[index]\nkind = \"layered\"\nn_surface = 1.0\ntransition_m = 1000\n"
        "[[index.layer]]\nbottom_depth_m = 5000\nn_deep = 1.0000001\nscale_depth_m = 10000\n"
        "[[index.layer]]\nn_deep = 2.0\nscale_depth_m = 10000\n",
        // tables: points 1 mm apart at the top, a jump from 1 to 2, the deepest point at 10 km
        "[index]\nkind = \"table\"\ndepth_m = [0, 0.001, 0.002, 1, 9999.999, 10000]\nn = [1, 2, 1, 2, 1, 2]\n",
        "[index]\nkind = \"table\"\ninterpolation = \"spline\"\ndepth_m = [0, 2500, 5000, 7500, 10000]\n"
        "n = [1.3, 1.5, 1.7, 1.8, 1.85]\n",
        "[index]\nkind = \"table\"\ndepth_m = [9000, 9000.001, 9999, 10000]\nn = [1.5, 1.5, 1.9, 2]\n",
    };
    for (const auto& text : extremes) {
        INFO(text);
        const FirnModel model = parse_model(text, "edge.toml");
        int non_finite = 0;
        auto probe = [&](double z) {
            double n, dn_dz;
            model.index->index_and_gradient(z, n, dn_dz);
            if (!std::isfinite(n) || !std::isfinite(dn_dz) || !std::isfinite(model.index->index(z)) ||
                !std::isfinite(model.index->gradient(z)))
                ++non_finite;
        };
        for (double z = 0.0; z >= -1e5; z -= 0.731) probe(z);
        for (const double z : {-0.0, -1e-300, -0.001, -0.0015, -0.02, -0.025, -1.0, -4999.0, -5000.0, -5500.0,
                               -9999.99, -9999.999, -10000.0, -10000.001, -1e5}) {
            probe(z);
            probe(std::nextafter(z, 0.0));
            probe(std::nextafter(z, -1e6));
        }
        CHECK(non_finite == 0);
    }
}
