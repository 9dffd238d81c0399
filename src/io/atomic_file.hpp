// Output files that appear whole or not at all, without harming what the path was before.
// A regular file (or a new one) is written to a temporary beside it and renamed over it, keeping
// its permission bits; a symlink is written through, to its target; character devices, FIFOs and
// standard output are written directly. Writing polls a cancel flag, and every write error
// (a full disk, /dev/full) becomes an OutputError.
#pragma once

#include <atomic>
#include <memory>
#include <ostream>
#include <string>

namespace firnray {

// How an output reaches its path.
enum class OutputMode {
    replace,   // a regular file or a new one: temporary beside it, renamed over it on commit
    in_place,  // a writable regular file in a folder where no temporary can be made: the data is
               // staged in the system's temporary folder and copied into the file on commit
    direct,    // standard output, a character device, a FIFO or a socket: written as it comes
};

// Where an output path leads: symlinks followed to their final target (which may not exist yet),
// "-" and /dev/stdout to standard output.
struct OutputTarget {
    std::string path;  // the resolved path ("-" for standard output)
    OutputMode mode = OutputMode::replace;
    bool exists = false;
    bool is_standard_output() const { return path == "-"; }
};

// Throws OutputError when the path is a folder or a symlink loop.
OutputTarget resolve_output_target(const std::string& path);

class AtomicOutputFile {
public:
    // Throws OutputError if the output cannot be opened. `cancel`, when given, is polled while
    // writing: once it is set, writing stops and finish_writing() throws Cancelled.
    explicit AtomicOutputFile(std::string path, const std::atomic<bool>* cancel = nullptr);
    AtomicOutputFile(const AtomicOutputFile&) = delete;
    AtomicOutputFile& operator=(const AtomicOutputFile&) = delete;
    ~AtomicOutputFile();  // an output that was not committed leaves nothing behind

    std::ostream& stream();
    const std::string& path() const { return path_; }  // as given
    const OutputTarget& target() const { return target_; }

    // Flushes and closes what was written; throws OutputError on a write error, Cancelled when
    // the cancel flag was set. Nothing is visible at the path yet (except for direct outputs).
    void finish_writing();
    // finish_writing(), then puts the output in place (rename, or copy for in_place).
    void commit();
    // Removes a committed output again (used when another output of the same run failed).
    // Direct outputs cannot be taken back and are left alone.
    void remove_committed() noexcept;

private:
    class Buffer;
    std::string path_;
    OutputTarget target_;
    std::string temp_path_;  // empty for direct outputs
    int fd_ = -1;
    bool owns_fd_ = true;
    std::unique_ptr<Buffer> buffer_;
    std::unique_ptr<std::ostream> out_;
    bool finished_ = false, committed_ = false;
};

// Writes text to path atomically ("-" writes to standard output).
void write_text_file(const std::string& path, const std::string& text);

// Removes every temporary file an AtomicOutputFile has open right now. Only async-signal-safe
// calls: for a signal handler that ends the process at once (a second Ctrl-C).
void remove_output_temporaries_now() noexcept;

}  // namespace firnray
