// Batches of source-receiver pairs: reading them from a CSV file with named columns, finding every
// path of every pair on several threads, and formatting the result in input order. A bad row or a
// pair whose computation fails gets an error of its own; the rest of the batch still runs. The
// output does not depend on the number of threads.
#pragma once

#include <cstddef>
#include <string>
#include <vector>

#include "core/cancel.hpp"
#include "io/csv_reader.hpp"
#include "paths/pair_formatter.hpp"

namespace firnray {

// Column names of a pairs file (metres, z up: surface z = 0, ice z < 0, air z > 0). The y columns
// and the id column are optional; without y columns the pairs lie in the x-z plane.
struct PairColumns {
    static constexpr const char* source_x = "source_x_m";
    static constexpr const char* source_y = "source_y_m";
    static constexpr const char* source_z = "source_z_m";
    static constexpr const char* receiver_x = "receiver_x_m";
    static constexpr const char* receiver_y = "receiver_y_m";
    static constexpr const char* receiver_z = "receiver_z_m";
    static constexpr const char* id = "id";
};

// One PathPair per data row (bad rows carry their error), the rows converted on `threads` threads.
// Throws DataInputError when a required column is missing, the file cannot be read or it has no rows.
std::vector<PathPair> read_path_pairs(const CsvTable& table, int threads = 1);
std::vector<PathPair> read_path_pairs_file(const std::string& path, int threads = 1);

// Every path of one pair; input errors (a point below the bottom, coincident ends) and numerical
// failures become the result's error instead of an exception.
PairPaths connect_pair(const RaySolver& solver, const PathPair& pair, const PathOptions& options);

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
                       const PairFormatter& formatter, int threads, const RunControl& control = {});

}  // namespace firnray
