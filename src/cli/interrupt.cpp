#include "cli/interrupt.hpp"

#include <csignal>
#include <unistd.h>

#include "io/atomic_file.hpp"

namespace firnray::cli {

namespace {
std::atomic<bool> interrupted{false};
std::atomic<int> first_signal{0};

extern "C" void on_signal(int signal_number) {
    int none = 0;
    first_signal.compare_exchange_strong(none, signal_number);
    if (interrupted.exchange(true)) {
        remove_output_temporaries_now();
        _exit(128 + first_signal.load());
    }
}

void install(int signal_number) {
    struct sigaction previous {};
    if (::sigaction(signal_number, nullptr, &previous) == 0 && previous.sa_handler == SIG_IGN) return;
    struct sigaction action {};
    action.sa_handler = on_signal;
    sigemptyset(&action.sa_mask);
    action.sa_flags = 0;  // no SA_RESTART: a blocked write returns EINTR and the flag is seen
    ::sigaction(signal_number, &action, nullptr);
}
}  // namespace

const std::atomic<bool>* install_interrupt_flag() {
    static const bool installed = [] {
        install(SIGINT);
        install(SIGTERM);
        return true;
    }();
    (void)installed;
    return &interrupted;
}

int interrupted_exit_code() {
    const int signal_number = first_signal.load();
    return 128 + (signal_number == 0 ? SIGINT : signal_number);
}

bool stderr_is_terminal() { return ::isatty(STDERR_FILENO) != 0; }

}  // namespace firnray::cli
