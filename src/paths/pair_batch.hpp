// Batches of source-receiver pairs: reading them from a CSV file with named columns, finding every
// path of every pair on several threads, and formatting the result in input order. A bad row or a
// pair whose computation fails gets an error of its own; the rest of the batch still runs. The
// output does not depend on the number of threads. A file is streamed: read a block of pairs,
// compute it, write it, so that memory stays bounded whatever the file size.
#pragma once

#include <cstddef>
#include <functional>
#include <ostream>
#include <string>
#include <vector>

#include "core/cancel.hpp"
#include "io/csv_reader.hpp"
#include "paths/pair_formatter.hpp"

namespace firnray {

// Column names of a pairs file (metres, z up: surface z = 0, ice z < 0, air z > 0). The y columns
// and the name column are optional; without y columns the pairs lie in the x-z plane. `id` is
// the old spelling of `name`, still read for one release (PathPairReader::uses_old_id_column).
struct PairColumns {
    static constexpr const char* source_x = "source_x_m";
    static constexpr const char* source_y = "source_y_m";
    static constexpr const char* source_z = "source_z_m";
    static constexpr const char* receiver_x = "receiver_x_m";
    static constexpr const char* receiver_y = "receiver_y_m";
    static constexpr const char* receiver_z = "receiver_z_m";
    static constexpr const char* name = "name";
    static constexpr const char* id = "id";  // deprecated spelling of name
};

// One PathPair per data row (bad rows carry their error), the rows converted on `threads` threads.
// Throws DataInputError when a required column is missing, the file cannot be read or it has no rows.
std::vector<PathPair> read_path_pairs(const CsvTable& table, int threads = 1);
std::vector<PathPair> read_path_pairs_file(const std::string& path, int threads = 1);

// Every path of one pair; input errors (a point below the bottom, coincident ends) and numerical
// failures become the result's error instead of an exception.
PairPaths connect_pair(const RaySolver& solver, const PathPair& pair, const PathOptions& options);

// Reads the pairs of a file a block at a time (io/csv_reader.hpp, CsvStreamReader). Throws
// DataInputError when the file cannot be read or a required column is missing.
class PathPairReader {
public:
    explicit PathPairReader(const std::string& path);
    // Replaces `pairs` with up to max_pairs next pairs (rows converted on `threads` threads);
    // false when none were left.
    bool read_block(std::vector<PathPair>& pairs, std::size_t max_pairs, int threads = 1);
    const CsvTable& table() const { return reader_.table(); }
    // True when the file names its pairs in the old `id` column rather than `name`.
    bool uses_old_id_column() const;
    std::size_t bytes_read() const { return reader_.bytes_read(); }
    std::size_t file_bytes() const { return reader_.file_bytes(); }

private:
    CsvStreamReader reader_;
    std::vector<CsvRow> rows_;
};

// The longest name (the name column) of a pairs file, read in one pass with bounded memory; the
// text format sizes its name column with it before the batch streams.
std::size_t longest_pair_name(const std::string& path);

// Called for each pair whose paths were found, before it is formatted, on the thread that found
// them (so it must be thread-safe): what adds the 1σ of each path to a batch (connect
// --uncertainty). It may set the result's error, which fails that pair alone.
using PairAddition = std::function<void(const PathPair& pair, PairPaths& result)>;

struct BatchTotals {
    std::size_t pairs = 0;
    std::size_t failed = 0;    // pairs with an error (bad row or failed computation)
    std::size_t shadowed = 0;  // pairs without any path
    std::size_t paths = 0;
};

// Streams a pairs file to `out`: the formatter's begin, each pair's piece in input order, its end.
// Memory is bounded by the block size, not the file. Progress is reported in bytes of the file.
// Throws DataInputError (before writing anything) when the file has a header but no pairs,
// Cancelled when asked to stop; a failing stream simply stops the run (the caller checks it).
BatchTotals connect_batch_stream(const RaySolver& solver, PathPairReader& reader, const PathOptions& options,
                                 const PairFormatter& formatter, std::ostream& out, int threads,
                                 const RunControl& control = {}, const PairAddition& addition = {});

struct BatchRun {
    std::string text;          // the whole output, in input order
    std::size_t pairs = 0;
    std::size_t failed = 0;    // pairs with an error (bad row or failed computation)
    std::size_t shadowed = 0;  // pairs without any path
    std::size_t paths = 0;
};

// Finds and formats every pair on `threads` threads (pairs in blocks of a fixed size, each block's
// text made by the thread that computed it) and joins the blocks in input order. Progress is
// reported in pairs. Throws Cancelled when asked to stop.
BatchRun connect_batch(const RaySolver& solver, const std::vector<PathPair>& pairs, const PathOptions& options,
                       const PairFormatter& formatter, int threads, const RunControl& control = {},
                       const PairAddition& addition = {});

}  // namespace firnray
