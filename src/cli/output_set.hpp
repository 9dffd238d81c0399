// The outputs of one run, written whole or not at all as a set: every output is declared before
// the computation (two outputs on one path, or a name whose extension names another format, are
// usage errors at once), written through a callback that gets a std::ostream&, and committed
// together at the end; when any of them fails, every output of the run is removed again.
#pragma once

#include <functional>
#include <memory>
#include <ostream>
#include <string>
#include <vector>

#include "io/atomic_file.hpp"

namespace firnray::cli {

// What an output holds. The extension rules (docs/vocabulary.md, "Output files"): an SVG is
// written only to a name ending in .svg; any other output may have any name, except one whose
// extension names another known format (.csv, .json, .svg, .toml, .txt). Standard output,
// devices and FIFOs are not checked.
enum class OutputFormat { csv, json, svg, text, toml };

// "csv", "json", "svg", "text" or "toml" (as --format spells them).
OutputFormat output_format_named(const std::string& name);

class OutputSet {
public:
    OutputSet() = default;
    OutputSet(const OutputSet&) = delete;
    OutputSet& operator=(const OutputSet&) = delete;
    ~OutputSet();

    // Declares an output asked for by `option` (an empty path: not asked for, ignored). Throws
    // UsageError (exit 2) for a second output on the same file or an extension naming another format.
    void declare(const std::string& option, const std::string& path, OutputFormat format);
    // The writer of a declared output (ignored for an empty path); for two outputs on one
    // shareable path (/dev/null), the first call gives the first declared its writer.
    void set_writer(const std::string& path, std::function<void(std::ostream&)> writer);
    // Runs the writers: files first (into temporaries), standard output and devices last, then
    // puts every file in place. Throws OutputError or Cancelled; nothing of the run is left then.
    void write_all();

private:
    struct Output {
        std::string option, path;
        OutputFormat format;
        OutputTarget target;
        std::function<void(std::ostream&)> writer;
        std::unique_ptr<AtomicOutputFile> file;
    };
    std::vector<Output> outputs_;
    bool done_ = false;
};

}  // namespace firnray::cli
