// Harness: the measurements the exponential fit reads (read_fit_data), then the fit itself. The
// first byte picks the columns (index or density in either unit, depth or z); the rest is the
// CSV. A fit that succeeds must give finite parameters within their documented ranges.
#include <array>
#include <cmath>
#include <string>
#include <string_view>

#include <fmt/format.h>

#include "core/errors.hpp"
#include "fuzz_harness.hpp"
#include "fuzz_support.hpp"
#include "model/fit_data.hpp"

using namespace firnray;

namespace {

FitColumns columns_for(std::uint8_t choice) {
    FitColumns columns;
    switch (choice % 4) {
        case 0: break;  // depth_m, n
        case 1:
            columns.depth = "z_m";
            columns.depth_is_z = true;
            break;
        case 2:
            columns.value = "density_kg_m3";
            columns.density_rule = DensityRule::kovacs;
            columns.density_unit = DensityUnit::kg_m3;
            break;
        default:
            columns.value = "density";
            columns.density_rule = DensityRule::looyenga;
            columns.density_unit = DensityUnit::g_cm3;
            break;
    }
    return columns;
}

}  // namespace

int fuzz_one(const std::uint8_t* data, std::size_t size) {
    if (size == 0) return 0;
    const std::string path = fuzz::write_scratch_file(
        "fit-data.csv", std::string_view(reinterpret_cast<const char*>(data + 1), size - 1));
    try {
        const FitData fit_data = read_fit_data(path, columns_for(data[0]));
        if (fit_data.depth_m.empty() || fit_data.depth_m.size() != fit_data.value.size())
            fuzz::fail_invariant("read_fit_data returned no rows, or depths and values of different counts");
        const ExponentialFit fit = fit_exponential(fit_data);
        if (!std::isfinite(fit.n_deep) || !std::isfinite(fit.n_surface) || !std::isfinite(fit.scale_depth_m))
            fuzz::fail_invariant(fmt::format("the fit succeeded with n_deep = {}, n_surface = {}, scale depth = {} m",
                                             fit.n_deep, fit.n_surface, fit.scale_depth_m));
        try {
            fit.profile();
        } catch (const Error& e) {
            fuzz::fail_invariant(std::string("the fit succeeded with parameters its profile refuses: ") + e.what());
        }
    } catch (const Error&) {
        return 0;
    }
    return 0;
}
