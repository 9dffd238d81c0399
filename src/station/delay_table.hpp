// Arrival-time tables for a station: for each source position, every path to every receiver,
// the differences relative to a reference channel, the time between the first two paths at each
// receiver and, optionally, the derivatives of each arrival time with respect to the source
// position (what the resolution of a reconstruction depends on). The tables are written by the
// output layer (output/delay_output.hpp).
#pragma once

#include <limits>
#include <optional>
#include <string>
#include <vector>

#include "core/cancel.hpp"
#include "io/csv_reader.hpp"
#include "paths/find_paths.hpp"
#include "station/station.hpp"

namespace firnray {

struct DelaySource {
    std::string name;  // from the input, or "row N" / "grid i,j"
    int input_line = 0;  // line in the source file (0 for grid sources)
    Point position;
    std::string error;   // non-empty: this input row is bad; no paths are computed for it
};

struct DelayOptions {
    std::size_t reference = 0;  // index of the reference receiver
    PathOptions paths;
    int threads = 1;
    RunControl control;
};

struct ReceiverArrivals {
    std::vector<ConnectedPath> paths;  // sorted by time; empty in the shadow zone or on failure
    // ∂T/∂(source x, y, z) per path, s/m: minus the slowness vector of the ray where it leaves
    // the source (Fermat's principle: ∇_source T = −n(source)/c · launch direction).
    struct Gradient {
        double dx = 0.0, dy = 0.0, dz = 0.0;
    };
    std::vector<Gradient> gradients;
    // Non-empty when the paths to this receiver could not be found (a source at the receiver's
    // own position, a numerical failure): only this channel fails, the others are computed.
    std::string error;
    // Only with an uncertainty propagation (delays --uncertainty, uncertainty/path_uncertainty.hpp):
    // the 1σ of each path's time and of its difference to the reference channel, and of the two
    // differences of the channel, in s; NaN where it cannot be given (a path some models lack).
    static constexpr double no_sigma = std::numeric_limits<double>::quiet_NaN();
    struct Spread {
        double time_s = no_sigma, minus_reference_same_kind_s = no_sigma;
        std::size_t absent = 0;  // valid perturbed models that lack this path
    };
    std::vector<Spread> spreads;  // one per path, or empty without a propagation
    double first_minus_reference_first_sigma_s = no_sigma, second_minus_first_sigma_s = no_sigma;
};

struct SourceDelays {
    std::vector<ReceiverArrivals> receivers;  // in station order (empty when the source failed)
    std::string error;                        // non-empty when the whole source failed (a bad input row)
    std::size_t failed_channels() const;      // receivers whose own error is set
    std::size_t spread_models = 0;            // with a propagation: perturbed models that made a valid profile
};

// One entry per source, in input order. A bad source row records its error; a channel that fails
// records its error in that receiver's entry; the rest go on.
std::vector<SourceDelays> compute_delays(const RaySolver& solver, const std::vector<Receiver>& receivers,
                                         const std::vector<DelaySource>& sources, const DelayOptions& options);

// Sources from a CSV file with columns x_m, z_m and optionally y_m and name (one source per row;
// a bad row becomes a DelaySource with its error set). Throws DataInputError when the file cannot
// be read, a column is missing or it has a header but no sources.
std::vector<DelaySource> read_delay_sources(const std::string& path);

// Reads the sources of a file a block at a time (io/csv_reader.hpp, CsvStreamReader), so that a
// long list streams with bounded memory. Throws DataInputError when the file cannot be read or a
// required column is missing (on construction), or when it has a header but no sources (on the
// first read_block).
class DelaySourceReader {
public:
    explicit DelaySourceReader(const std::string& path);
    // Replaces `sources` with up to max_sources next sources; false when none were left.
    bool read_block(std::vector<DelaySource>& sources, std::size_t max_sources);
    std::size_t bytes_read() const { return reader_.bytes_read(); }
    std::size_t file_bytes() const { return reader_.file_bytes(); }

private:
    CsvStreamReader reader_;
    std::size_t x_, z_;
    std::optional<std::size_t> y_, name_;
    std::vector<CsvRow> rows_;
    bool any_ = false;  // a source was read
};

}  // namespace firnray
