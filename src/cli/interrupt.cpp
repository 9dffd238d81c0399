#include "cli/interrupt.hpp"

#include <csignal>
#include <unistd.h>

namespace firnray::cli {

namespace {
std::atomic<bool> interrupted{false};

extern "C" void on_interrupt(int) {
    if (interrupted.exchange(true)) _exit(130);
}
}  // namespace

const std::atomic<bool>* install_interrupt_flag() {
    std::signal(SIGINT, on_interrupt);
    std::signal(SIGTERM, on_interrupt);
    return &interrupted;
}

bool stderr_is_terminal() { return ::isatty(STDERR_FILENO) != 0; }

}  // namespace firnray::cli
