#include "cli/run_command.hpp"

#include <cstdio>
#include <exception>

#include <fmt/core.h>

#include "cli/common.hpp"
#include "cli/exit_codes.hpp"
#include "cli/interrupt.hpp"
#include "core/errors.hpp"

namespace firnray::cli {

int run_guarded(const std::function<int()>& body) {
    try {
        return body();
    } catch (const UsageError& e) {
        fmt::print(stderr, "firnray: usage error: {}\n", e.what());
        return exit_usage;
    } catch (const ModelInputError& e) {
        fmt::print(stderr, "firnray: error: {}\n", e.what());
        return exit_model_input;
    } catch (const DataInputError& e) {
        fmt::print(stderr, "firnray: error: {}\n", e.what());
        return exit_data_input;
    } catch (const InputError& e) {
        fmt::print(stderr, "firnray: error: {}\n", e.what());
        return exit_data_input;
    } catch (const NumericalError& e) {
        fmt::print(stderr, "firnray: numerical failure: {}\n", e.what());
        return exit_numerical;
    } catch (const OutputError& e) {
        fmt::print(stderr, "firnray: cannot write output: {}\n", e.what());
        return exit_output;
    } catch (const Cancelled&) {
        fmt::print(stderr, "firnray: interrupted; no output file was left behind\n");
        return interrupted_exit_code();
    } catch (const std::exception& e) {
        fmt::print(stderr, "firnray: internal error: {}\n", e.what());
        return exit_internal;
    }
}

}  // namespace firnray::cli
