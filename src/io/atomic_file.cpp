#include "io/atomic_file.hpp"

#include <cstdio>
#include <filesystem>
#include <iostream>
#include <random>
#include <unistd.h>

#include "core/errors.hpp"

namespace firnray {

namespace fs = std::filesystem;

AtomicOutputFile::AtomicOutputFile(std::string path) : path_(std::move(path)) {
    const fs::path target(path_);
    std::random_device seed;
    temp_path_ = (target.parent_path() / ("." + target.filename().string() + ".part-" +
                                          std::to_string(::getpid()) + "-" + std::to_string(seed())))
                     .string();
    out_.open(temp_path_, std::ios::out | std::ios::trunc);
    if (!out_) throw OutputError("cannot create '" + path_ + "' (is the folder there and writable?)");
}

AtomicOutputFile::~AtomicOutputFile() {
    if (!committed_) {
        out_.close();
        std::error_code ignored;
        fs::remove(temp_path_, ignored);
    }
}

void AtomicOutputFile::commit() {
    out_.flush();
    const bool ok = static_cast<bool>(out_);
    out_.close();
    if (!ok) throw OutputError("writing '" + path_ + "' failed (disk full?)");
    std::error_code ec;
    fs::rename(temp_path_, path_, ec);
    if (ec) throw OutputError("cannot move output into place at '" + path_ + "': " + ec.message());
    committed_ = true;
}

void write_text_file(const std::string& path, const std::string& text) {
    if (path == "-") {
        std::cout << text;
        std::cout.flush();
        return;
    }
    AtomicOutputFile file(path);
    file.stream() << text;
    file.commit();
}

}  // namespace firnray
