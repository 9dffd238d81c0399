// Harness: the CSV tables a model file names (index, density and attenuation tables). The first
// byte picks one of a few fixed model files; the rest of the input is the CSV they read. A
// model that loads must give a finite n >= 1 and a finite dn/dz at every depth.
#include <array>
#include <cmath>
#include <string>
#include <string_view>

#include <fmt/format.h>

#include "core/errors.hpp"
#include "fuzz_harness.hpp"
#include "fuzz_support.hpp"
#include "model/model_file.hpp"

using namespace firnray;

namespace {

constexpr std::array<std::string_view, 6> model_texts = {
    "[index]\nkind = \"table\"\nfile = \"fuzzed.csv\"\ndepth_column = \"depth_m\"\nn_column = \"n\"\n",
    "[index]\nkind = \"table\"\nfile = \"fuzzed.csv\"\nz_column = \"z_m\"\nn_column = \"n\"\n"
    "interpolation = \"spline\"\n",
    "[index]\nkind = \"table\"\nfile = \"fuzzed.csv\"\ndepth_column = \"depth_m\"\n"
    "density_column = \"density_kg_m3\"\ndensity_unit = \"kg/m3\"\ndensity_rule = \"kovacs\"\n",
    "[index]\nkind = \"table\"\nfile = \"fuzzed.csv\"\ndepth_column = \"depth_m\"\n"
    "density_column = \"density\"\ndensity_unit = \"g/cm3\"\ndensity_rule = \"looyenga\"\n",
    "[index]\nkind = \"constant\"\nn = 1.78\n[attenuation]\nkind = \"table\"\nfile = \"fuzzed.csv\"\n"
    "depth_column = \"depth_m\"\nlength_column = \"length_m\"\n",
    "[index]\nkind = \"constant\"\nn = 1.78\n[attenuation]\nkind = \"table\"\nfile = \"fuzzed.csv\"\n"
    "z_column = \"z_m\"\nlength_column = \"length_m\"\n",
};

}  // namespace

int fuzz_one(const std::uint8_t* data, std::size_t size) {
    if (size == 0) return 0;
    const std::string_view model_text = model_texts[data[0] % model_texts.size()];
    fuzz::write_scratch_file("fuzzed.csv", std::string_view(reinterpret_cast<const char*>(data + 1), size - 1));
    const std::string path = fuzz::write_scratch_file("table-model.toml", model_text);
    FirnModel model;
    try {
        model = load_model_file(path);
    } catch (const Error&) {
        return 0;
    }
    for (const double depth : {0.0, 1e-3, 0.5, 3.0, 17.0, 60.0, 150.0, 400.0, 1500.0, 4000.0, 1e5}) {
        double n = 0.0, dn_dz = 0.0;
        model.index->index_and_gradient(-depth, n, dn_dz);
        if (!std::isfinite(n) || n < 1.0 || !std::isfinite(dn_dz))
            fuzz::fail_invariant(fmt::format("table model loaded but gives n = {}, dn/dz = {} at depth {} m", n,
                                             dn_dz, depth));
        if (model.attenuation) {
            const double length = model.attenuation->length_m(-depth);
            if (!std::isfinite(length) || length <= 0.0)
                fuzz::fail_invariant(fmt::format("attenuation table loaded but gives L = {} m at depth {} m",
                                                 length, depth));
        }
    }
    return 0;
}
