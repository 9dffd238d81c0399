#include "paths/pair_batch.hpp"

#include "core/errors.hpp"
#include "core/parallel.hpp"

namespace firnray {

std::vector<PathPair> read_path_pairs(const CsvTable& table) {
    const std::size_t sx = table.column(PairColumns::source_x), sz = table.column(PairColumns::source_z);
    const std::size_t rx = table.column(PairColumns::receiver_x), rz = table.column(PairColumns::receiver_z);
    const auto sy = table.find_column(PairColumns::source_y), ry = table.find_column(PairColumns::receiver_y);
    const auto id = table.find_column(PairColumns::id);
    if (table.rows.empty())
        throw DataInputError("the pairs file has a header but no pairs", {table.path, table.header_line, ""});
    std::vector<PathPair> pairs(table.rows.size());
    for (std::size_t i = 0; i < table.rows.size(); ++i) {
        const CsvRow& row = table.rows[i];
        PathPair& pair = pairs[i];
        pair.input_line = row.line;
        try {
            if (id) pair.id = table.text(row, *id);
            pair.source = {table.number(row, sx), sy ? table.number(row, *sy) : 0.0, table.number(row, sz)};
            pair.receiver = {table.number(row, rx), ry ? table.number(row, *ry) : 0.0, table.number(row, rz)};
        } catch (const InputError& e) {
            pair.error = e.what();
        }
    }
    return pairs;
}

std::vector<PathPair> read_path_pairs_file(const std::string& path) { return read_path_pairs(read_csv(path)); }

PairPaths connect_pair(const RaySolver& solver, const PathPair& pair, const PathOptions& options) {
    PairPaths result;
    if (!pair.error.empty()) {
        result.error = pair.error;
        return result;
    }
    try {
        result.paths = find_paths(solver, pair.source, pair.receiver, options);
    } catch (const InputError& e) {
        result.error = e.what();
    } catch (const NumericalError& e) {
        result.error = std::string("numerical failure: ") + e.what();
    }
    return result;
}

BatchRun connect_batch(const RaySolver& solver, const std::vector<PathPair>& pairs, const PathOptions& options,
                       const BatchFormatter& formatter, int threads, const RunControl& control) {
    struct Piece {
        std::string text;
        std::size_t paths = 0;
        bool failed = false;
    };
    std::vector<Piece> pieces(pairs.size());
    parallel_for(pairs.size(), threads, control, [&](std::size_t i) {
        const PairPaths result = connect_pair(solver, pairs[i], options);
        Piece& piece = pieces[i];
        formatter.append_pair(piece.text, i, pairs[i], result);
        piece.paths = result.paths.size();
        piece.failed = !result.error.empty();
    });
    BatchRun run;
    run.pairs = pairs.size();
    const std::string begin = formatter.begin();
    std::size_t size = begin.size();
    for (const Piece& piece : pieces) {
        size += piece.text.size();
        run.paths += piece.paths;
        run.failed += piece.failed;
        run.shadowed += !piece.failed && piece.paths == 0;
    }
    const std::string end = formatter.end(run.pairs, run.failed);
    run.text.reserve(size + end.size());
    run.text += begin;
    for (Piece& piece : pieces) {
        run.text += piece.text;
        std::string().swap(piece.text);  // give the memory back as we go: batches can be large
    }
    run.text += end;
    return run;
}

}  // namespace firnray
