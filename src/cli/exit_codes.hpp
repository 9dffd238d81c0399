// Exit codes of the firnray command, one per kind of failure (documented in --help and README).
#pragma once

namespace firnray::cli {

enum ExitCode : int {
    exit_ok = 0,
    exit_internal = 1,      // a bug: please report
    exit_usage = 2,         // bad command line (unknown option, missing value, bad range)
    exit_model_input = 3,   // bad model or station file
    exit_data_input = 4,    // bad data input: a point, a CSV file, a measurement table
    exit_numerical = 5,     // the numerics failed
    exit_output = 6,        // an output could not be written
    exit_partial = 7,       // a batch ran, but some rows failed (see the error rows)
    exit_interrupted = 130, // Ctrl-C (SIGINT); SIGTERM gives 143 (128 + the signal)
    exit_terminated = 143,
};

}  // namespace firnray::cli
