// Harness: the path finder fed random VALID numbers. The bytes decode to a model file's
// parameters inside their documented ranges (docs/model-files.md: n >= 1, n_surface <= n_deep,
// lengths > 0, reflectivity in [0, 1]), two finite points and options inside their ranges
// (paths/find_paths.hpp). The model goes through parse_model, so the fuzzer sees the same
// checks as a user. The contract: find_paths returns or throws a firnray::Error, nothing else;
// what it returns has finite times no shorter than the straight line at the fastest speed,
// lengths no shorter than the straight line, and a finite field unless the path is flagged
// as a caustic.
#include <algorithm>
#include <cmath>
#include <memory>
#include <string>

#include <fmt/format.h>

#include "core/errors.hpp"
#include "fuzz_harness.hpp"
#include "fuzz_support.hpp"
#include "model/model_file.hpp"
#include "paths/find_paths.hpp"
#include "solver/make_solver.hpp"

using namespace firnray;

namespace {

constexpr double speed_of_light_m_s = 299792458.0;

// A model file's text; also returns the smallest index anywhere (the fastest speed is c / n_min).
std::string decode_model(fuzz::ByteReader& in, double& smallest_index, bool& exponential) {
    const double n_air = in.flag() ? 1.0 : in.uniform(1.0, 1.5);
    std::string index;
    const int kind = in.integer(0, 3);
    exponential = kind == 0;
    smallest_index = n_air;
    if (kind == 0) {
        const double n_surface = in.uniform(1.0, 2.5);
        const double n_deep = in.uniform(n_surface, 3.0);
        index = fmt::format("kind = \"exponential\"\nn_deep = {:.17g}\nn_surface = {:.17g}\nscale_depth_m = {:.17g}\n",
                            n_deep, n_surface, in.log_uniform(1e-6, 1e5));
        smallest_index = std::min(smallest_index, n_surface);
    } else if (kind == 1) {
        const double n = in.uniform(1.0, 3.0);
        index = fmt::format("kind = \"constant\"\nn = {:.17g}\n", n);
        smallest_index = std::min(smallest_index, n);
    } else if (kind == 2) {
        const double n_surface = in.uniform(1.0, 2.0);
        const double first_bottom = in.log_uniform(5.0, 500.0);
        const double first_deep = in.uniform(n_surface, 2.5);
        index = fmt::format("kind = \"layered\"\nn_surface = {:.17g}\ntransition_m = {:.17g}\n"
                            "[[index.layer]]\nbottom_depth_m = {:.17g}\nn_deep = {:.17g}\nscale_depth_m = {:.17g}\n"
                            "[[index.layer]]\nn_deep = {:.17g}\nscale_depth_m = {:.17g}\n",
                            n_surface, in.log_uniform(0.01, 4.0), first_bottom, first_deep,
                            in.log_uniform(0.1, 1e4), in.uniform(first_deep, 3.0), in.log_uniform(0.1, 1e4));
        smallest_index = std::min(smallest_index, n_surface);
    } else {
        // A table: 4..8 points going deeper, n rising with depth.
        const int points = in.integer(4, 8);
        std::string depths, values;
        double depth = in.flag() ? 0.0 : in.log_uniform(0.01, 50.0);
        double n = in.uniform(1.0, 2.0);
        smallest_index = std::min(smallest_index, n);
        for (int k = 0; k < points; ++k) {
            depths += fmt::format("{}{:.17g}", k ? ", " : "", depth);
            values += fmt::format("{}{:.17g}", k ? ", " : "", n);
            depth += in.log_uniform(0.01, 500.0);
            n = std::min(3.0, n + in.uniform(0.0, 0.3));
        }
        index = fmt::format("kind = \"table\"\ndepth_m = [{}]\nn = [{}]\n{}", depths, values,
                            in.flag() ? "interpolation = \"spline\"\n" : "");
    }
    std::string text = "name = \"fuzzed\"\n[index]\n" + index + fmt::format("[air]\nn = {:.17g}\n", n_air);
    if (in.flag()) text += fmt::format("[attenuation]\nkind = \"constant\"\nlength_m = {:.17g}\n", in.log_uniform(1.0, 1e5));
    if (in.flag())
        text += fmt::format("[bottom]\ndepth_m = {:.17g}\npower_reflectivity = {:.17g}\n", in.log_uniform(1.0, 1e4),
                            in.uniform(0.0, 1.0));
    return text;
}

Point decode_point(fuzz::ByteReader& in) {
    Point p;
    p.x = in.signed_log_uniform(1e-3, 1e6);
    p.y = in.flag() ? 0.0 : in.signed_log_uniform(1e-3, 1e6);
    // Mostly in the ice, sometimes at the surface or in the air.
    const int where = in.integer(0, 7);
    p.z = where == 0 ? 0.0 : where == 1 ? in.log_uniform(1e-3, 1e3) : -in.log_uniform(1e-3, 1e4);
    return p;
}

}  // namespace

int fuzz_one(const std::uint8_t* data, std::size_t size) {
    fuzz::ByteReader in(data, size);
    double smallest_index = 1.0;
    bool exponential = false;
    const std::string model_text = decode_model(in, smallest_index, exponential);
    const Point source = decode_point(in), receiver = decode_point(in);
    PathOptions options;
    options.max_bounces = in.integer(0, 3);
    options.bottom_paths = in.flag();
    options.scan_samples = in.integer(4, 64);
    const bool numeric = !exponential || in.flag();
    // Half the time the stratified solver instead (the auto choice for tables and layers).
    const bool stratified = in.flag();

    try {
        auto model = std::make_shared<const FirnModel>(parse_model(model_text, "fuzzed model"));
        const auto solver = make_solver(model, stratified ? SolverChoice::stratified
                                               : numeric  ? SolverChoice::numeric
                                                          : SolverChoice::closed);
        const auto paths = find_paths(*solver, source, receiver, options);

        const double straight_m = std::hypot(receiver.x - source.x, receiver.y - source.y, receiver.z - source.z);
        const double fastest_s = straight_m * smallest_index / speed_of_light_m_s;
        for (const ConnectedPath& p : paths) {
            const std::string where =
                fmt::format("{} path from ({}, {}, {}) to ({}, {}, {}) with the {} solver in\n{}", to_string(p.kind),
                            source.x, source.y, source.z, receiver.x, receiver.y, receiver.z, solver->name(),
                            model_text);
            if (!std::isfinite(p.time_s) || !std::isfinite(p.length_m))
                fuzz::fail_invariant(fmt::format("time {} s, length {} m: not finite, {}", p.time_s, p.length_m, where));
            if (p.length_m < straight_m * (1.0 - 1e-6) - 1e-9)
                fuzz::fail_invariant(fmt::format("length {} m is shorter than the straight line, {} m, {}", p.length_m,
                                                 straight_m, where));
            if (p.time_s < fastest_s * (1.0 - 1e-6) - 1e-15)
                fuzz::fail_invariant(fmt::format("time {} s is shorter than the straight line at c / n_min, {} s, {}",
                                                 p.time_s, fastest_s, where));
            const bool field_finite = std::isfinite(std::abs(p.amplitude.field_s)) && std::isfinite(std::abs(p.amplitude.field_p));
            if (!field_finite && !p.amplitude.caustic)
                fuzz::fail_invariant(fmt::format("field not finite without the caustic flag, {}", where));
        }
    } catch (const Error&) {
        return 0;  // a typed error is an answer
    }
    return 0;
}
