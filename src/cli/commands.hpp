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

// firnray profile: tabulate a model's n(z) and dn/dz, or fit the exponential model to data.
void add_profile_command(CLI::App& app, CommandSlot& slot);
// firnray trace: a fan of rays from a point, with surface and bottom interactions.
void add_trace_command(CLI::App& app, CommandSlot& slot);
// firnray connect: every path between a source and a receiver, or a CSV batch of pairs.
void add_connect_command(CLI::App& app, CommandSlot& slot);
// firnray shadow: shadow and visibility maps of source positions for a receiver or a station.
void add_shadow_command(CLI::App& app, CommandSlot& slot);
// firnray depths: receiver-depth scan of visible volume and time between paths.
void add_depths_command(CLI::App& app, CommandSlot& slot);
// firnray delays: arrival times and differences at every channel of a station.
void add_delays_command(CLI::App& app, CommandSlot& slot);
// firnray locate: source positions and their covariance from measured arrival times.
void add_locate_command(CLI::App& app, CommandSlot& slot);
// firnray calibrate: the index profile fitted to measured pulser arrival times.
void add_calibrate_command(CLI::App& app, CommandSlot& slot);
// firnray resolution: Cramér–Rao resolution maps of a station.
void add_resolution_command(CLI::App& app, CommandSlot& slot);
// firnray beams: trigger beams of a phased array: delays, array factor, coverage map, design scan.
void add_beams_command(CLI::App& app, CommandSlot& slot);

}  // namespace firnray::cli
