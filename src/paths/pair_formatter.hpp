// What a batch of source-receiver pairs is made of (paths/pair_batch.hpp), and the interface
// through which the batch hands each pair's result to a formatter. The formatters themselves live
// in the output layer (output/path_output.hpp), so that paths/ computes and never formats.
#pragma once

#include <cstddef>
#include <limits>
#include <string>
#include <vector>

#include "paths/connected_path.hpp"
#include "paths/find_paths.hpp"

namespace firnray {

// One source-receiver pair of a batch: where it came from and where its ends are. A pair whose
// input row could not be read carries the reason in `error` and no usable points.
struct PathPair {
    int input_line = 0;  // line of the input file (1-based; the header is a line too)
    std::string name;    // from the optional name column (or its old spelling id); may be empty
    Point source, receiver;
    std::string error;
};

// The 1σ that the model's [uncertainty] gives one path (uncertainty/path_uncertainty.hpp,
// docs/uncertainty.md); NaN where it cannot be given (a path that some models lack).
struct PathSpread {
    double time_ns = std::numeric_limits<double>::quiet_NaN();
    double launch_zenith_deg = std::numeric_limits<double>::quiet_NaN();
    double arrival_zenith_deg = std::numeric_limits<double>::quiet_NaN();
    std::size_t absent = 0;  // valid models (Monte Carlo draws, linearised steps) that lack this path
};

// The outcome for one pair: its paths (sorted by time, empty in the shadow zone) or why it failed.
struct PairPaths {
    std::vector<ConnectedPath> paths;
    std::string error;
    // Only with an uncertainty propagation: one entry per path, and how many perturbed models
    // made a valid profile (draws or steps; the nominal model not counted).
    std::vector<PathSpread> spreads = {};
    std::size_t spread_models = 0;
};

// Turns a batch into text: begin, then one piece per pair in input order, then end.
class PairFormatter {
public:
    virtual ~PairFormatter() = default;
    virtual std::string begin() const = 0;
    // Appends the piece of pair `index` (0-based position in the batch) to `out`. Must be
    // thread-safe: pieces are made on several threads.
    virtual void append_pair(std::string& out, std::size_t index, const PathPair& pair, const PairPaths& result) const = 0;
    virtual std::string end(std::size_t pairs, std::size_t failed) const = 0;
};

}  // namespace firnray
