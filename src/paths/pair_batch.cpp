#include "paths/pair_batch.hpp"

#include <algorithm>

#include "core/errors.hpp"
#include "core/parallel.hpp"

namespace firnray {

std::vector<PathPair> read_path_pairs(const CsvTable& table, int threads) {
    const std::size_t sx = table.column(PairColumns::source_x), sz = table.column(PairColumns::source_z);
    const std::size_t rx = table.column(PairColumns::receiver_x), rz = table.column(PairColumns::receiver_z);
    const auto sy = table.find_column(PairColumns::source_y), ry = table.find_column(PairColumns::receiver_y);
    const auto id = table.find_column(PairColumns::id);
    if (table.rows.empty())
        throw DataInputError("the pairs file has a header but no pairs", {table.path, table.header_line, ""});
    std::vector<PathPair> pairs(table.rows.size());
    // Rows in contiguous blocks, so that two threads never write next to each other.
    constexpr std::size_t block_size = 256;
    parallel_for((pairs.size() + block_size - 1) / block_size, threads, {}, [&](std::size_t b) {
        for (std::size_t i = b * block_size; i < std::min(pairs.size(), (b + 1) * block_size); ++i) {
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
    });
    return pairs;
}

std::vector<PathPair> read_path_pairs_file(const std::string& path, int threads) {
    return read_path_pairs(read_csv(path), threads);
}

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
                       const PairFormatter& formatter, int threads, const RunControl& control) {
    // Pairs go in blocks of a fixed size (whatever the thread count, so the text is the same): each
    // block is found and formatted into one string by one thread, and the blocks are joined in order.
    constexpr std::size_t block_size = 64;
    struct Block {
        std::string text;
        std::size_t paths = 0, failed = 0, shadowed = 0;
    };
    std::vector<Block> blocks((pairs.size() + block_size - 1) / block_size);
    RunControl per_block = control;  // progress is reported in pairs, not blocks
    if (control.progress)
        per_block.progress = [&control, &pairs](std::size_t done, std::size_t) {
            control.progress(std::min(pairs.size(), done * block_size), pairs.size());
        };
    parallel_for(blocks.size(), threads, per_block, [&](std::size_t b) {
        Block& block = blocks[b];
        for (std::size_t i = b * block_size; i < std::min(pairs.size(), (b + 1) * block_size); ++i) {
            const PairPaths result = connect_pair(solver, pairs[i], options);
            formatter.append_pair(block.text, i, pairs[i], result);
            block.paths += result.paths.size();
            block.failed += !result.error.empty();
            block.shadowed += result.error.empty() && result.paths.empty();
        }
    });
    BatchRun run;
    run.pairs = pairs.size();
    const std::string begin = formatter.begin();
    std::size_t size = begin.size();
    for (const Block& block : blocks) {
        size += block.text.size();
        run.paths += block.paths;
        run.failed += block.failed;
        run.shadowed += block.shadowed;
    }
    const std::string end = formatter.end(run.pairs, run.failed);
    run.text.reserve(size + end.size());
    run.text += begin;
    for (Block& block : blocks) {
        run.text += block.text;
        std::string().swap(block.text);  // give the memory back as we go: batches can be large
    }
    run.text += end;
    return run;
}

}  // namespace firnray
