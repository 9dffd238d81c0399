// Output files that appear whole or not at all: data goes to a temporary file beside the target
// and is renamed over it on commit(). If commit() is never reached (an error, Ctrl-C) the
// temporary is removed, so no half-written output is left behind.
#pragma once

#include <fstream>
#include <string>

namespace firnray {

class AtomicOutputFile {
public:
    explicit AtomicOutputFile(std::string path);  // throws OutputError if it cannot be created
    AtomicOutputFile(const AtomicOutputFile&) = delete;
    AtomicOutputFile& operator=(const AtomicOutputFile&) = delete;
    ~AtomicOutputFile();

    std::ostream& stream() { return out_; }
    const std::string& path() const { return path_; }
    void commit();  // flush, close and rename into place; throws OutputError

private:
    std::string path_, temp_path_;
    std::ofstream out_;
    bool committed_ = false;
};

// Writes text to path atomically ("-" writes to standard output).
void write_text_file(const std::string& path, const std::string& text);

}  // namespace firnray
