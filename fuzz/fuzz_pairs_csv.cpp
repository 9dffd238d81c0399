// Harness: the pairs CSV of `firnray connect` (bytes → file → read_path_pairs_file), then the
// first pairs through connect_pair on the built-in model, which must turn every bad pair into an
// error of the result and never throw.
#include <algorithm>
#include <cmath>
#include <memory>
#include <string>
#include <string_view>

#include "core/errors.hpp"
#include "fuzz_harness.hpp"
#include "fuzz_support.hpp"
#include "model/model_file.hpp"
#include "paths/pair_batch.hpp"
#include "solver/make_solver.hpp"

using namespace firnray;

int fuzz_one(const std::uint8_t* data, std::size_t size) {
    static const auto solver =
        make_solver(std::make_shared<const FirnModel>(default_model()), SolverChoice::automatic);
    const std::string path =
        fuzz::write_scratch_file("pairs.csv", std::string_view(reinterpret_cast<const char*>(data), size));
    std::vector<PathPair> pairs;
    try {
        pairs = read_path_pairs_file(path, 1);
    } catch (const Error&) {
        return 0;
    }
    if (pairs.empty()) fuzz::fail_invariant("read_path_pairs_file returned no pairs and no error");
    for (std::size_t i = 0; i < std::min<std::size_t>(pairs.size(), 2); ++i) {
        const PairPaths result = connect_pair(*solver, pairs[i], PathOptions{});
        for (const ConnectedPath& p : result.paths)
            if (!std::isfinite(p.time_s) || !std::isfinite(p.length_m))
                fuzz::fail_invariant("connect_pair gave a path with a time or length that is not finite");
    }
    return 0;
}
