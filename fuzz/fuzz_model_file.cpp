// Harness: a model file (bytes → file → load_model_file). A model that loads must give a finite
// n >= 1 and a finite dn/dz at every depth, locate each of its warnings, and must write back
// (model_to_toml) to text that loads again.
#include <cmath>
#include <string>
#include <string_view>

#include <fmt/format.h>

#include "core/errors.hpp"
#include "fuzz_harness.hpp"
#include "fuzz_support.hpp"
#include "fuzz_tables.hpp"
#include "model/model_file.hpp"

using namespace firnray;

int fuzz_one(const std::uint8_t* data, std::size_t size) {
    fuzz::write_table_files();  // so that a model naming a table file finds one
    const std::string path =
        fuzz::write_scratch_file("model.toml", std::string_view(reinterpret_cast<const char*>(data), size));
    FirnModel model;
    try {
        model = load_model_file(path);
    } catch (const Error&) {
        return 0;
    }
    if (!model.index) fuzz::fail_invariant("a loaded model has no index profile");
    // A warning says what and where: a message and a file line (a CSV's or the model's).
    for (const auto& warning : model.warnings)
        if (warning.message.empty() || warning.where.file.empty() || warning.where.line <= 0)
            fuzz::fail_invariant(fmt::format("a warning without a message or a place: '{}'", warning.describe()));
    for (const double depth : {0.0, 1e-3, 0.5, 3.0, 17.0, 60.0, 150.0, 400.0, 1500.0, 4000.0, 1e5}) {
        double n = 0.0, dn_dz = 0.0;
        model.index->index_and_gradient(-depth, n, dn_dz);
        if (!std::isfinite(n) || n < 1.0 || !std::isfinite(dn_dz))
            fuzz::fail_invariant(fmt::format("model loaded but gives n = {}, dn/dz = {} at depth {} m ({})", n,
                                             dn_dz, depth, model.index->describe()));
    }
    std::string written;
    try {
        written = model_to_toml(model);
    } catch (const Error&) {
        return 0;
    }
    try {
        parse_model(written, path);
    } catch (const Error& e) {
        fuzz::fail_invariant(fmt::format("model_to_toml wrote a file that does not load again: {}\n{}", e.what(),
                                         written));
    }
    return 0;
}
