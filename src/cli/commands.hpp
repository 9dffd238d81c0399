// Each firnray command lives in one thin file under cli/commands/ and registers itself here.
// A command parses its options with CLI11 and, when chosen, leaves its body in `slot`; main runs
// the body through run_guarded so that errors become messages and exit codes in one place.
#pragma once

#include <functional>

#include <CLI/CLI.hpp>

namespace firnray::cli {

struct CommandSlot {
    std::function<int()> run;
};

void add_trace_command(CLI::App& app, CommandSlot& slot);

}  // namespace firnray::cli
