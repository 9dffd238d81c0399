#include "io/atomic_file.hpp"

#include <algorithm>
#include <array>
#include <cerrno>
#include <cstring>
#include <filesystem>
#include <random>
#include <streambuf>
#include <vector>

#include <fcntl.h>
#include <sys/stat.h>
#include <unistd.h>

#include <fmt/format.h>

#include "core/errors.hpp"

namespace firnray {

namespace fs = std::filesystem;

namespace {

std::string system_message(int error) { return std::strerror(error); }

// Temporaries open right now, so that a signal handler can remove them without allocating.
struct TemporarySlot {
    std::atomic<bool> used{false};
    char path[4096] = {};
};
std::array<TemporarySlot, 32> temporaries;

int register_temporary(const std::string& path) {
    if (path.size() >= sizeof(TemporarySlot::path)) return -1;
    for (std::size_t i = 0; i < temporaries.size(); ++i) {
        bool expected = false;
        if (temporaries[i].used.load() || !temporaries[i].used.compare_exchange_strong(expected, true)) continue;
        std::memcpy(temporaries[i].path, path.c_str(), path.size() + 1);
        return static_cast<int>(i);
    }
    return -1;  // more than 32 at once: only the handler's clean-up misses it
}

void unregister_temporary(const std::string& path) {
    for (auto& slot : temporaries)
        if (slot.used.load() && path == slot.path) {
            slot.path[0] = '\0';
            slot.used.store(false);
        }
}

bool names_standard_output(const std::string& path) {
    return path == "-" || path == "/dev/stdout" || path == "/dev/fd/1" || path == "/proc/self/fd/1";
}

// Links to a file descriptor of the process (their target is not a path to replace).
bool opens_a_descriptor(const std::string& path) {
    return path.rfind("/proc/", 0) == 0 || path.rfind("/dev/fd/", 0) == 0 || path == "/dev/stderr" ||
           path == "/dev/stdin";
}

}  // namespace

void remove_output_temporaries_now() noexcept {
    for (auto& slot : temporaries)
        if (slot.used.load() && slot.path[0] != '\0') ::unlink(slot.path);
}

// Buffers output and writes it to a file descriptor with write(2), so that every failure is seen
// (errno kept), and polls the cancel flag at each block written.
class AtomicOutputFile::Buffer : public std::streambuf {
public:
    Buffer(int fd, const std::atomic<bool>* cancel) : fd_(fd), cancel_(cancel), storage_(block_size) {
        setp(storage_.data(), storage_.data() + storage_.size());
    }
    int failed_errno() const { return failed_errno_; }
    bool cancelled() const { return cancelled_; }
    bool flush_all() { return flush_buffer(); }

protected:
    int_type overflow(int_type ch) override {
        if (!flush_buffer()) return traits_type::eof();
        if (!traits_type::eq_int_type(ch, traits_type::eof())) {
            *pptr() = traits_type::to_char_type(ch);
            pbump(1);
        }
        return traits_type::not_eof(ch);
    }
    int sync() override { return flush_buffer() ? 0 : -1; }
    std::streamsize xsputn(const char* data, std::streamsize count) override {
        if (stopped()) return 0;
        const auto room = static_cast<std::streamsize>(epptr() - pptr());
        if (count <= room) {
            std::memcpy(pptr(), data, static_cast<std::size_t>(count));
            pbump(static_cast<int>(count));
            return count;
        }
        if (!flush_buffer()) return 0;
        return drain(data, static_cast<std::size_t>(count)) ? count : 0;
    }

private:
    static constexpr std::size_t block_size = 1 << 16;
    static constexpr std::size_t most_per_write = 1 << 20;  // the cancel flag is polled this often

    bool stopped() const { return failed_errno_ != 0 || cancelled_; }
    bool drain(const char* data, std::size_t count) {
        while (count > 0) {
            if (cancel_ != nullptr && cancel_->load(std::memory_order_relaxed)) {
                cancelled_ = true;
                return false;
            }
            const ssize_t written = ::write(fd_, data, std::min(count, most_per_write));
            if (written < 0) {
                if (errno == EINTR) continue;  // a signal: the flag is looked at again above
                failed_errno_ = errno;
                return false;
            }
            data += written;
            count -= static_cast<std::size_t>(written);
        }
        return true;
    }
    bool flush_buffer() {
        if (stopped()) return false;
        const bool ok = drain(pbase(), static_cast<std::size_t>(pptr() - pbase()));
        setp(storage_.data(), storage_.data() + storage_.size());
        return ok;
    }

    int fd_;
    const std::atomic<bool>* cancel_;
    std::vector<char> storage_;
    int failed_errno_ = 0;
    bool cancelled_ = false;
};

OutputTarget resolve_output_target(const std::string& path) {
    OutputTarget target;
    if (names_standard_output(path)) {
        target.path.assign(1, '-');  // not = "-": GCC 12 warns falsely (-Wrestrict)
        target.mode = OutputMode::direct;
        target.exists = true;
        return target;
    }
    fs::path current(path);
    for (int hops = 0;; ++hops) {
        if (hops > 40) throw OutputError(fmt::format("'{}': too many levels of symbolic links", path));
        struct stat info {};
        if (::lstat(current.c_str(), &info) != 0) {
            if (errno != ENOENT)
                throw OutputError(fmt::format("'{}': {}", current.string(), system_message(errno)));
            target.exists = false;
            break;
        }
        if (S_ISLNK(info.st_mode) && opens_a_descriptor(current.string())) {
            // /dev/stderr, /dev/fd/N, /proc/self/fd/N: a file already open in this process, which
            // may be a regular file; it is written as it stands, never replaced.
            target.exists = true;
            target.mode = OutputMode::direct;
            break;
        }
        if (S_ISLNK(info.st_mode)) {
            const fs::path link = fs::read_symlink(current);
            current = link.is_absolute() ? link : current.parent_path() / link;
            continue;
        }
        target.exists = true;
        if (S_ISDIR(info.st_mode)) throw OutputError(fmt::format("'{}' is a folder, not a file", path));
        target.mode = S_ISREG(info.st_mode) ? OutputMode::replace : OutputMode::direct;
        break;
    }
    target.path = current.lexically_normal().string();
    return target;
}

AtomicOutputFile::AtomicOutputFile(std::string path, const std::atomic<bool>* cancel)
    : path_(std::move(path)), target_(resolve_output_target(path_)) {
    if (target_.is_standard_output()) {
        fd_ = STDOUT_FILENO;
        owns_fd_ = false;
    } else if (target_.mode == OutputMode::direct) {
        // A FIFO blocks here until a reader comes; a signal ends the wait.
        while ((fd_ = ::open(target_.path.c_str(), O_WRONLY | O_CLOEXEC | O_NOCTTY)) < 0) {
            if (errno == EINTR && !(cancel != nullptr && cancel->load())) continue;
            if (errno == EINTR) throw Cancelled();
            throw OutputError(fmt::format("cannot open '{}' for writing: {}", path_, system_message(errno)));
        }
    } else {
        const fs::path resolved(target_.path);
        struct stat existing {};
        const bool keep_mode = target_.exists && ::stat(target_.path.c_str(), &existing) == 0;
        std::random_device seed;
        const std::string temp_name =
            fmt::format(".{}.part-{}-{}", resolved.filename().string(), ::getpid(), seed());
        temp_path_ = (resolved.parent_path() / temp_name).string();
        fd_ = ::open(temp_path_.c_str(), O_WRONLY | O_CREAT | O_EXCL | O_CLOEXEC, 0666);
        const int create_errno = errno;
        if (fd_ < 0 && target_.exists && (create_errno == EACCES || create_errno == EPERM || create_errno == EROFS) &&
            ::access(target_.path.c_str(), W_OK) == 0) {
            // No temporary can be made beside the file, but the file itself is writable: stage
            // the data elsewhere and copy it in on commit.
            target_.mode = OutputMode::in_place;
            std::string pattern = (fs::temp_directory_path() / "firnray-output-XXXXXX").string();
            fd_ = ::mkostemp(pattern.data(), O_CLOEXEC);
            temp_path_ = pattern;
        }
        if (fd_ < 0) {
            temp_path_.clear();
            throw OutputError(fmt::format("cannot create '{}': {} (is the folder there and writable?)", path_,
                                          system_message(create_errno)));
        }
        register_temporary(temp_path_);
        if (keep_mode && target_.mode == OutputMode::replace) {
            // The replaced file keeps its permission bits and, where allowed, its owner.
            (void)::fchmod(fd_, existing.st_mode & 07777);
            if (existing.st_uid != ::geteuid() || existing.st_gid != ::getegid())
                (void)::fchown(fd_, existing.st_uid, existing.st_gid);
        }
    }
    buffer_ = std::make_unique<Buffer>(fd_, cancel);
    out_ = std::make_unique<std::ostream>(buffer_.get());
}

AtomicOutputFile::~AtomicOutputFile() {
    if (fd_ >= 0 && owns_fd_) ::close(fd_);
    if (!temp_path_.empty()) {
        ::unlink(temp_path_.c_str());
        unregister_temporary(temp_path_);
    }
}

std::ostream& AtomicOutputFile::stream() { return *out_; }

void AtomicOutputFile::finish_writing() {
    if (finished_) return;
    finished_ = true;
    const bool flushed = buffer_->flush_all();
    if (buffer_->cancelled()) throw Cancelled();
    const std::string shown = target_.is_standard_output() ? std::string("standard output") : "'" + path_ + "'";
    if (!flushed || !*out_) {
        const int error = buffer_->failed_errno();
        throw OutputError(fmt::format("writing {} failed: {}", shown, error != 0 ? system_message(error) : "stream error"));
    }
    if (owns_fd_) {
        const int fd = fd_;
        fd_ = -1;
        if (::close(fd) != 0) throw OutputError(fmt::format("writing {} failed: {}", shown, system_message(errno)));
    }
}

namespace {

// Copies the staged data into the existing file (OutputMode::in_place).
void copy_into(const std::string& from, const std::string& to, const std::string& shown) {
    const int in = ::open(from.c_str(), O_RDONLY | O_CLOEXEC);
    if (in < 0) throw OutputError(fmt::format("cannot read back the staged output of '{}': {}", shown, system_message(errno)));
    const int out = ::open(to.c_str(), O_WRONLY | O_TRUNC | O_CLOEXEC);
    if (out < 0) {
        const int error = errno;
        ::close(in);
        throw OutputError(fmt::format("cannot open '{}' for writing: {}", shown, system_message(error)));
    }
    std::vector<char> block(1 << 16);
    int error = 0;
    while (error == 0) {
        const ssize_t got = ::read(in, block.data(), block.size());
        if (got < 0 && errno == EINTR) continue;
        if (got < 0) error = errno;
        if (got <= 0) break;
        for (ssize_t done = 0; done < got && error == 0;) {
            const ssize_t put = ::write(out, block.data() + done, static_cast<std::size_t>(got - done));
            if (put < 0 && errno != EINTR) error = errno;
            if (put > 0) done += put;
        }
    }
    ::close(in);
    if (::close(out) != 0 && error == 0) error = errno;
    if (error != 0) throw OutputError(fmt::format("writing '{}' failed: {}", shown, system_message(error)));
}

}  // namespace

void AtomicOutputFile::commit() {
    finish_writing();
    if (target_.mode == OutputMode::replace) {
        if (::rename(temp_path_.c_str(), target_.path.c_str()) != 0)
            throw OutputError(fmt::format("cannot move output into place at '{}': {}", path_, system_message(errno)));
    } else if (target_.mode == OutputMode::in_place) {
        copy_into(temp_path_, target_.path, path_);
        ::unlink(temp_path_.c_str());
    }
    if (!temp_path_.empty()) unregister_temporary(temp_path_);
    temp_path_.clear();
    committed_ = true;
}

void AtomicOutputFile::remove_committed() noexcept {
    if (committed_ && target_.mode != OutputMode::direct) ::unlink(target_.path.c_str());
    committed_ = false;
}

void write_text_file(const std::string& path, const std::string& text) {
    AtomicOutputFile file(path);
    file.stream() << text;
    file.commit();
}

}  // namespace firnray
