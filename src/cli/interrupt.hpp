// Ctrl-C handling for the front end: the first SIGINT sets a flag that long computations poll
// (RunControl::cancel); a second one ends the process at once.
#pragma once

#include <atomic>

namespace firnray::cli {

const std::atomic<bool>* install_interrupt_flag();

// True when stderr is a terminal (progress is shown only then).
bool stderr_is_terminal();

}  // namespace firnray::cli
