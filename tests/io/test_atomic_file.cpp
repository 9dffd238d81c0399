// AtomicOutputFile: what each kind of path becomes after an output is written to it (regular
// file, symlink, character device, FIFO, /dev/full, a read-only folder, a full file system).
#include <catch2/catch.hpp>

#include <atomic>
#include <cerrno>
#include <cstring>
#include <filesystem>
#include <string>
#include <thread>

#include <fcntl.h>
#include <sys/mount.h>
#include <sys/stat.h>
#include <sys/sysmacros.h>
#include <sys/wait.h>
#include <unistd.h>

#include "core/errors.hpp"
#include "io/atomic_file.hpp"
#include "support/run_cli.hpp"

using namespace firnray;
using firnray::test::read_file;
using firnray::test::temp_folder;
using firnray::test::write_file;
namespace fs = std::filesystem;

namespace {

mode_t mode_of(const std::string& path) {
    struct stat info {};
    REQUIRE(::lstat(path.c_str(), &info) == 0);
    return info.st_mode;
}

std::size_t entries_in(const std::string& dir) {
    std::size_t count = 0;
    for ([[maybe_unused]] const auto& e : fs::directory_iterator(dir)) ++count;
    return count;
}

}  // namespace

TEST_CASE("atomic file: a regular file is replaced whole and keeps its permission bits (0600)", "[io][atomic]") {
    const std::string dir = temp_folder("atomic-mode");
    const std::string path = write_file(dir + "/secret.csv", "old\n");
    REQUIRE(::chmod(path.c_str(), 0600) == 0);
    write_text_file(path, "new\n");
    CHECK(read_file(path) == "new\n");
    CHECK((mode_of(path) & 07777) == 0600);
    CHECK(entries_in(dir) == 1);  // no temporary left
}

TEST_CASE("atomic file: a symlink is written through to its target, which is replaced atomically", "[io][atomic]") {
    const std::string dir = temp_folder("atomic-link");
    fs::create_directory(dir + "/real");
    const std::string target = write_file(dir + "/real/data.csv", "old\n");
    fs::create_symlink("real/data.csv", dir + "/link.csv");
    write_text_file(dir + "/link.csv", "new\n");
    CHECK(fs::is_symlink(dir + "/link.csv"));
    CHECK(read_file(target) == "new\n");
    CHECK(entries_in(dir + "/real") == 1);
    // A dangling link makes its target.
    fs::create_symlink("real/fresh.csv", dir + "/dangling.csv");
    write_text_file(dir + "/dangling.csv", "fresh\n");
    CHECK(fs::is_symlink(dir + "/dangling.csv"));
    CHECK(read_file(dir + "/real/fresh.csv") == "fresh\n");
}

TEST_CASE("atomic file: a character device made with mknod stays a device and is written directly", "[io][atomic]") {
    const std::string dir = temp_folder("atomic-device");
    const std::string device = dir + "/null-device";
    if (::mknod(device.c_str(), S_IFCHR | 0666, makedev(1, 3)) != 0) {
        WARN("mknod is not permitted here (" << std::strerror(errno) << "): the device-node case is skipped");
        return;
    }
    write_text_file(device, "into the device\n");
    CHECK(S_ISCHR(mode_of(device)));
    CHECK(entries_in(dir) == 1);
    CHECK(resolve_output_target(device).mode == OutputMode::direct);
}

TEST_CASE("atomic file: a FIFO stays a FIFO and its reader gets the data", "[io][atomic]") {
    const std::string dir = temp_folder("atomic-fifo");
    const std::string fifo = dir + "/pipe";
    REQUIRE(::mkfifo(fifo.c_str(), 0600) == 0);
    std::string received;
    std::thread reader([&] { received = read_file(fifo); });
    write_text_file(fifo, "through the pipe\n");
    reader.join();
    CHECK(received == "through the pipe\n");
    CHECK(S_ISFIFO(mode_of(fifo)));
    CHECK(entries_in(dir) == 1);
}

TEST_CASE("atomic file: /dev/full is written directly and its failure is an OutputError", "[io][atomic]") {
    REQUIRE(resolve_output_target("/dev/full").mode == OutputMode::direct);
    AtomicOutputFile file("/dev/full");
    file.stream() << std::string(100000, 'x');
    CHECK_THROWS_AS(file.commit(), OutputError);
    CHECK(S_ISCHR(mode_of("/dev/full")));
}

TEST_CASE("atomic file: standard output spelt - or /dev/stdout is never replaced", "[io][atomic]") {
    CHECK(resolve_output_target("-").is_standard_output());
    CHECK(resolve_output_target("/dev/stdout").is_standard_output());
    CHECK(resolve_output_target("/dev/fd/1").is_standard_output());
    // Standard error is written where it stands, even when it was redirected to a regular file.
    CHECK(resolve_output_target("/dev/stderr").mode == OutputMode::direct);
    CHECK(resolve_output_target("/proc/self/fd/2").mode == OutputMode::direct);
}

TEST_CASE("atomic file: a folder is not an output file", "[io][atomic]") {
    const std::string dir = temp_folder("atomic-folder");
    CHECK_THROWS_AS(AtomicOutputFile(dir), OutputError);
}

TEST_CASE("atomic file: a writable file in a read-only folder is written in place", "[io][atomic]") {
    const std::string dir = temp_folder("atomic-readonly");
    const std::string path = write_file(dir + "/table.csv", "old\n");
    // Root ignores folder permissions, so the writing is done by an unprivileged child then.
    const bool as_root = ::geteuid() == 0;
    if (as_root) {
        REQUIRE(::chown(dir.c_str(), 65534, 65534) == 0);
        REQUIRE(::chown(path.c_str(), 65534, 65534) == 0);
    }
    REQUIRE(::chmod(path.c_str(), 0644) == 0);
    REQUIRE(::chmod(dir.c_str(), 0555) == 0);
    const pid_t child = ::fork();
    REQUIRE(child >= 0);
    if (child == 0) {
        if (as_root && (::setgid(65534) != 0 || ::setuid(65534) != 0)) ::_exit(3);
        try {
            AtomicOutputFile file(path);
            if (file.target().mode != OutputMode::in_place) ::_exit(4);
            file.stream() << "new\n";
            file.commit();
        } catch (...) {
            ::_exit(5);
        }
        ::_exit(0);
    }
    int status = 0;
    ::waitpid(child, &status, 0);
    ::chmod(dir.c_str(), 0755);
    REQUIRE(WIFEXITED(status));
    CHECK(WEXITSTATUS(status) == 0);
    CHECK(read_file(path) == "new\n");
    CHECK(entries_in(dir) == 1);
}

TEST_CASE("atomic file: on a full file system (tmpfs of 64 kB) writing fails and leaves the old file and no temporary",
          "[io][atomic]") {
    const std::string dir = temp_folder("atomic-full");
    if (::mount("tmpfs", dir.c_str(), "tmpfs", 0, "size=64k") != 0) {
        WARN("cannot mount a small tmpfs here (" << std::strerror(errno) << "): the full-disk case is skipped");
        return;
    }
    const std::string path = write_file(dir + "/grid.csv", "old\n");
    {
        AtomicOutputFile file(path);
        file.stream() << std::string(200000, 'x');
        CHECK_THROWS_AS(file.commit(), OutputError);
    }
    CHECK(read_file(path) == "old\n");
    CHECK(entries_in(dir) == 1);
    ::umount(dir.c_str());
}

TEST_CASE("atomic file: a set cancel flag stops the writing with Cancelled and leaves nothing", "[io][atomic]") {
    const std::string dir = temp_folder("atomic-cancel");
    std::atomic<bool> cancel{false};
    {
        AtomicOutputFile file(dir + "/big.csv", &cancel);
        file.stream() << std::string(100000, 'x');
        cancel = true;
        file.stream() << std::string(3 << 20, 'y');
        CHECK_THROWS_AS(file.commit(), Cancelled);
    }
    CHECK(fs::is_empty(dir));
}

TEST_CASE("atomic file: a committed output can be taken back, an uncommitted one leaves nothing", "[io][atomic]") {
    const std::string dir = temp_folder("atomic-remove");
    {
        AtomicOutputFile file(dir + "/a.csv");
        file.stream() << "a\n";
        file.commit();
        CHECK(fs::exists(dir + "/a.csv"));
        file.remove_committed();
    }
    { AtomicOutputFile never(dir + "/b.csv"); }
    CHECK(fs::is_empty(dir));
}
