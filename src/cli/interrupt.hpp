// Signals for the front end: the first SIGINT or SIGTERM sets a flag that long computations and
// output writing poll (RunControl::cancel); a second one removes the temporaries of the outputs
// being written and ends the process at once. A signal the caller set to be ignored stays ignored.
#pragma once

#include <atomic>

namespace firnray::cli {

// Installs the handlers (once) and returns the flag they set.
const std::atomic<bool>* install_interrupt_flag();

// 128 + the number of the signal that set the flag: 130 for SIGINT, 143 for SIGTERM.
int interrupted_exit_code();

// True when stderr is a terminal (progress is shown only then).
bool stderr_is_terminal();

}  // namespace firnray::cli
