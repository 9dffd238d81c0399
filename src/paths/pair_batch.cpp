#include "paths/pair_batch.hpp"

#include <algorithm>
#include <optional>

#include "core/errors.hpp"
#include "core/parallel.hpp"

namespace firnray {

namespace {

// Where the columns of a pairs file are.
struct PairColumnIndex {
    std::size_t sx, sz, rx, rz;
    std::optional<std::size_t> sy, ry, name;

    explicit PairColumnIndex(const CsvTable& table)
        : sx(table.column(PairColumns::source_x)), sz(table.column(PairColumns::source_z)),
          rx(table.column(PairColumns::receiver_x)), rz(table.column(PairColumns::receiver_z)),
          sy(table.find_column(PairColumns::source_y)), ry(table.find_column(PairColumns::receiver_y)),
          name(table.find_column(PairColumns::name) ? table.find_column(PairColumns::name)
                                                  : table.find_column(PairColumns::id)) {}
};

// Converts rows[i] into pairs[i] for every row, on `threads` threads.
void convert_rows(const CsvTable& table, const std::vector<CsvRow>& rows, std::vector<PathPair>& pairs, int threads) {
    const PairColumnIndex c(table);
    pairs.assign(rows.size(), PathPair{});
    // Rows in contiguous blocks, so that two threads never write next to each other.
    constexpr std::size_t block_size = 256;
    parallel_for((pairs.size() + block_size - 1) / block_size, threads, {}, [&](std::size_t b) {
        for (std::size_t i = b * block_size; i < std::min(pairs.size(), (b + 1) * block_size); ++i) {
            const CsvRow& row = rows[i];
            PathPair& pair = pairs[i];
            pair.input_line = row.line;
            try {
                if (c.name) pair.name = table.text(row, *c.name);
                pair.source = {table.number(row, c.sx), c.sy ? table.number(row, *c.sy) : 0.0, table.number(row, c.sz)};
                pair.receiver = {table.number(row, c.rx), c.ry ? table.number(row, *c.ry) : 0.0, table.number(row, c.rz)};
            } catch (const InputError& e) {
                pair.error = e.what();
            }
        }
    });
}

[[noreturn]] void throw_no_pairs(const CsvTable& table) {
    throw DataInputError("the pairs file has a header but no pairs", {table.path, table.header_line, ""});
}

}  // namespace

std::vector<PathPair> read_path_pairs(const CsvTable& table, int threads) {
    (void)PairColumnIndex(table);  // a missing column is reported before an empty file
    if (table.rows.empty()) throw_no_pairs(table);
    std::vector<PathPair> pairs;
    convert_rows(table, table.rows, pairs, threads);
    return pairs;
}

PathPairReader::PathPairReader(const std::string& path) : reader_(path) { (void)PairColumnIndex(reader_.table()); }

bool PathPairReader::read_block(std::vector<PathPair>& pairs, std::size_t max_pairs, int threads) {
    if (!reader_.read_rows(rows_, max_pairs)) {
        pairs.clear();
        return false;
    }
    convert_rows(reader_.table(), rows_, pairs, threads);
    return true;
}

bool PathPairReader::uses_old_id_column() const {
    return !reader_.table().find_column(PairColumns::name) && reader_.table().find_column(PairColumns::id);
}

std::size_t longest_pair_name(const std::string& path) {
    CsvStreamReader reader(path);
    const auto name = PairColumnIndex(reader.table()).name;
    std::size_t longest = 0;
    if (!name) return longest;
    std::vector<CsvRow> rows;
    while (reader.read_rows(rows, 4096))
        for (const CsvRow& row : rows)
            if (row.problem.empty() && *name < row.fields.size() && row.fields.size() == reader.table().columns.size())
                longest = std::max(longest, row.fields[*name].size());
    return longest;
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

namespace {

// Pairs go in blocks of a fixed size (whatever the thread count, so the text is the same): each
// block is found and formatted into one string by one thread.
constexpr std::size_t pairs_per_block = 64;

struct BlockText {
    std::string text;
    std::size_t paths = 0, failed = 0, shadowed = 0;
};

// Finds and formats pairs[0..) whose batch positions start at first_index, into blocks in order.
void connect_blocks(const RaySolver& solver, const std::vector<PathPair>& pairs, std::size_t first_index,
                    const PathOptions& options, const PairFormatter& formatter, int threads,
                    const RunControl& control, const PairAddition& addition, std::vector<BlockText>& blocks) {
    blocks.assign((pairs.size() + pairs_per_block - 1) / pairs_per_block, BlockText{});
    parallel_for(blocks.size(), threads, control, [&](std::size_t b) {
        BlockText& block = blocks[b];
        for (std::size_t i = b * pairs_per_block; i < std::min(pairs.size(), (b + 1) * pairs_per_block); ++i) {
            PairPaths result = connect_pair(solver, pairs[i], options);
            if (addition && result.error.empty()) addition(pairs[i], result);
            // A value the output refuses (not finite) fails this pair alone, as an error row.
            const std::size_t row_start = block.text.size();
            try {
                formatter.append_pair(block.text, first_index + i, pairs[i], result);
            } catch (const NumericalError& e) {
                block.text.resize(row_start);
                result = PairPaths{};
                result.error = std::string("numerical failure: ") + e.what();
                formatter.append_pair(block.text, first_index + i, pairs[i], result);
            }
            block.paths += result.paths.size();
            block.failed += !result.error.empty();
            block.shadowed += result.error.empty() && result.paths.empty();
        }
    });
}

}  // namespace

BatchTotals connect_batch_stream(const RaySolver& solver, PathPairReader& reader, const PathOptions& options,
                                 const PairFormatter& formatter, std::ostream& out, int threads,
                                 const RunControl& control, const PairAddition& addition) {
    // Enough pairs per read to keep every thread busy, few enough to keep memory small. With an
    // addition (an uncertainty propagation: tens of path searches per pair) fewer, so that
    // progress, reported after each read, still moves; the output does not depend on it.
    const std::size_t pairs_per_read =
        addition ? pairs_per_block * 2 * static_cast<std::size_t>(std::max(threads, 1)) : pairs_per_block * 64;
    std::vector<PathPair> pairs;
    std::vector<BlockText> blocks;
    BatchTotals totals;
    RunControl quiet = control;  // progress is reported in bytes of the file, after each read
    quiet.progress = nullptr;
    if (!reader.read_block(pairs, pairs_per_read, threads)) throw_no_pairs(reader.table());
    out << formatter.begin();
    do {
        connect_blocks(solver, pairs, totals.pairs, options, formatter, threads, quiet, addition, blocks);
        for (BlockText& block : blocks) {
            out.write(block.text.data(), static_cast<std::streamsize>(block.text.size()));
            totals.paths += block.paths;
            totals.failed += block.failed;
            totals.shadowed += block.shadowed;
        }
        totals.pairs += pairs.size();
        if (control.progress) control.progress(reader.bytes_read(), std::max(reader.file_bytes(), reader.bytes_read()));
        if (!out) return totals;  // the stream failed (a full disk, Ctrl-C): its owner reports why
        control.throw_if_cancelled();
    } while (reader.read_block(pairs, pairs_per_read, threads));
    out << formatter.end(totals.pairs, totals.failed);
    return totals;
}

BatchRun connect_batch(const RaySolver& solver, const std::vector<PathPair>& pairs, const PathOptions& options,
                       const PairFormatter& formatter, int threads, const RunControl& control,
                       const PairAddition& addition) {
    RunControl per_block = control;  // progress is reported in pairs, not blocks
    if (control.progress)
        per_block.progress = [&control, &pairs](std::size_t done, std::size_t) {
            control.progress(std::min(pairs.size(), done * pairs_per_block), pairs.size());
        };
    std::vector<BlockText> blocks;
    connect_blocks(solver, pairs, 0, options, formatter, threads, per_block, addition, blocks);
    BatchRun run;
    run.pairs = pairs.size();
    const std::string begin = formatter.begin();
    std::size_t size = begin.size();
    for (const BlockText& block : blocks) {
        size += block.text.size();
        run.paths += block.paths;
        run.failed += block.failed;
        run.shadowed += block.shadowed;
    }
    const std::string end = formatter.end(run.pairs, run.failed);
    run.text.reserve(size + end.size());
    run.text += begin;
    for (BlockText& block : blocks) {
        run.text += block.text;
        std::string().swap(block.text);  // give the memory back as we go
    }
    run.text += end;
    return run;
}

}  // namespace firnray
