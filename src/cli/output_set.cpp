#include "cli/output_set.hpp"

#include <algorithm>
#include <cctype>
#include <filesystem>

#include <fmt/format.h>

#include "cli/common.hpp"
#include "cli/interrupt.hpp"
#include "core/errors.hpp"

namespace firnray::cli {

namespace fs = std::filesystem;

namespace {

struct FormatName {
    OutputFormat format;
    const char* name;       // as --format spells it
    const char* extension;  // the extension that names it
    const char* shown;      // in messages
};
constexpr FormatName format_names[] = {
    {OutputFormat::csv, "csv", ".csv", "CSV"},      {OutputFormat::json, "json", ".json", "JSON"},
    {OutputFormat::svg, "svg", ".svg", "SVG"},      {OutputFormat::text, "text", ".txt", "text"},
    {OutputFormat::toml, "toml", ".toml", "TOML"},
};

const FormatName& describe(OutputFormat format) {
    return *std::find_if(std::begin(format_names), std::end(format_names),
                         [format](const FormatName& f) { return f.format == format; });
}

std::string lower_extension(const std::string& path) {
    std::string extension = fs::path(path).extension().string();
    std::transform(extension.begin(), extension.end(), extension.begin(),
                   [](unsigned char c) { return static_cast<char>(std::tolower(c)); });
    return extension;
}

void check_extension(const std::string& option, const std::string& path, OutputFormat format) {
    const FormatName& written = describe(format);
    const std::string extension = lower_extension(path);
    if (format == OutputFormat::svg) {
        if (extension != ".svg")
            throw UsageError(option, fmt::format("'{}' does not end in .svg, but an SVG figure is written there", path));
        return;
    }
    for (const FormatName& known : format_names)
        if (extension == known.extension && known.format != format)
            throw UsageError(option, fmt::format("'{}' names a {} file, but {} is written there (use a {} name{})", path,
                                                 known.shown, written.shown, written.extension,
                                                 format == OutputFormat::toml || format == OutputFormat::svg
                                                     ? ""
                                                     : fmt::format(", or --format {}", known.name)));
}

// The same file under two names (symlinks, "./", hard links) gives the same key.
std::string identity_of(const OutputTarget& target) {
    if (target.is_standard_output()) return "standard output";
    std::error_code ec;
    const fs::path canonical = fs::weakly_canonical(fs::absolute(target.path), ec);
    return ec ? fs::absolute(target.path).lexically_normal().string() : canonical.string();
}

}  // namespace

OutputFormat output_format_named(const std::string& name) {
    for (const FormatName& f : format_names)
        if (name == f.name) return f.format;
    throw UsageError("--format", fmt::format("'{}' is not an output format", name));
}

OutputSet::~OutputSet() {
    if (done_) return;
    // A failed or interrupted run: take back whatever was put in place; temporaries go with the files.
    for (Output& output : outputs_)
        if (output.file) output.file->remove_committed();
}

void OutputSet::declare(const std::string& option, const std::string& path, OutputFormat format) {
    if (path.empty()) return;
    const OutputTarget target = resolve_output_target(path);  // a folder: OutputError, exit 6
    const bool checked = target.mode != OutputMode::direct;  // stdout, devices and FIFOs take any name
    if (checked) check_extension(option, path, format);
    if (checked && !target.exists) {
        // A missing folder is reported before the computation rather than after it.
        std::error_code ec;
        const fs::path folder = fs::absolute(target.path).parent_path();
        if (!fs::is_directory(folder, ec))
            throw OutputError(fmt::format("cannot create '{}': the folder '{}' does not exist", path, folder.string()));
    }
    const bool shareable = target.mode == OutputMode::direct && !target.is_standard_output();  // /dev/null
    if (!shareable) {
        const std::string identity = identity_of(target);
        for (const Output& other : outputs_)
            if (identity_of(other.target) == identity)
                throw UsageError(option, fmt::format("'{}' is also the output of {}: give each output its own file", path,
                                                     other.option));
    }
    outputs_.push_back(Output{option, path, format, target, {}, nullptr});
}

void OutputSet::set_writer(const std::string& path, std::function<void(std::ostream&)> writer) {
    if (path.empty()) return;
    // Writers are given in the order the outputs were declared, so that two outputs on one
    // shareable path (/dev/null) each get their own.
    for (Output& output : outputs_)
        if (output.path == path && !output.writer) {
            output.writer = std::move(writer);
            return;
        }
    throw std::logic_error("OutputSet: output '" + path + "' was not declared");
}

void OutputSet::write_all() {
    const std::atomic<bool>* cancel = install_interrupt_flag();
    const auto write_one = [cancel](Output& output) {
        if (!output.writer) throw std::logic_error("OutputSet: output '" + output.path + "' has no writer");
        output.file = std::make_unique<AtomicOutputFile>(output.path, cancel);
        output.writer(output.file->stream());
        output.file->finish_writing();
    };
    for (Output& output : outputs_)
        if (output.target.mode != OutputMode::direct) write_one(output);
    for (Output& output : outputs_)
        if (output.target.mode == OutputMode::direct) write_one(output);
    if (cancel->load()) throw Cancelled();
    for (Output& output : outputs_) output.file->commit();
    done_ = true;
}

}  // namespace firnray::cli
