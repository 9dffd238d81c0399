// The one place where library errors become messages on stderr and exit codes.
#pragma once

#include <functional>

namespace firnray::cli {

// Runs body; returns its exit code, or the code for the exception it threw (message on stderr).
int run_guarded(const std::function<int()>& body);

}  // namespace firnray::cli
