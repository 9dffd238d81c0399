// firnray command-line front end: dispatches to one command per file under cli/commands/.
#include <cstdio>
#include <iostream>
#include <string>
#include <vector>

#include <CLI/CLI.hpp>
#include <fmt/format.h>

#include "cli/commands.hpp"
#include "cli/common.hpp"
#include "cli/exit_codes.hpp"
#include "cli/interrupt.hpp"
#include "cli/run_command.hpp"
#include "core/text.hpp"

namespace {

using namespace firnray::cli;

// A first argument that is not an option must name a command; a typo gets a suggestion.
bool is_unknown_command(const CLI::App& app, int argc, char** argv) {
    if (argc < 2 || argv[1][0] == '-' || argv[1][0] == '\0') return false;
    const std::string given = argv[1];
    std::vector<std::string> names;
    for (const CLI::App* command : app.get_subcommands({})) {
        if (command->get_name() == given) return false;
        names.push_back(command->get_name());
    }
    fmt::print(stderr, "firnray: usage error: '{}' is not a firnray command{}\n", firnray::printable_excerpt(given),
               firnray::did_you_mean(given, names));
    fmt::print(stderr, "firnray: the commands are {}; run 'firnray --help' for what each does\n",
               fmt::join(names, ", "));
    return true;
}

// Options of the chosen command that are close to an unexpected argument ("--sourc").
std::string option_suggestions(const CLI::App& app, const std::vector<std::string>& extras) {
    std::vector<std::string> names;
    for (const CLI::App* command : app.get_subcommands())
        for (const CLI::Option* option : command->get_options())
            if (!option->get_group().empty())  // deprecated spellings are hidden and not suggested
                for (const std::string& name : option->get_lnames()) names.push_back("--" + name);
    std::string out;
    for (const std::string& extra : extras)
        if (extra.rfind("--", 0) == 0) out += firnray::did_you_mean(extra.substr(0, extra.find('=')), names);
    return out;
}

// Help and version text go to standard output through iostreams: a failed write (> /dev/full) is exit 6 too.
int help_written(int code) {
    std::cout.flush();
    if (!std::cout || std::fflush(stdout) != 0) {
        fmt::print(stderr, "firnray: cannot write output: writing standard output failed\n");
        return exit_output;
    }
    return code;
}

}  // namespace

int main(int argc, char** argv) {
    CLI::App app{
        "firnray: radio ray tracing through graded-index polar firn and ice.\n"
        "Conventions: points are X,Z or X,Y,Z in metres with z up (the surface is z = 0, the ice z < 0);\n"
        "every other vertical option value is a depth (m, positive down) or a height above the surface;\n"
        "ranges are START:STOP:STEP (values) or MIN:MAX (a region divided into cells). Angles are zenith\n"
        "angles of the direction of travel (0 = up, 90 = horizontal, 180 = down); times in ns.\n"
        "Names of options, columns and JSON members: docs/vocabulary.md.\n"
        "Exit codes: 0 ok, 2 usage (a bad option or option value), 3 bad model/station file, 4 bad data\n"
        "input, 5 numerical failure, 6 output not written, 7 some batch rows failed, 130 interrupted\n"
        "(SIGINT), 143 terminated (SIGTERM).",
        "firnray"};
    app.set_version_flag("--version", std::string("firnray ") + FIRNRAY_VERSION);
    app.require_subcommand(1);

    CommandSlot slot;
    // Commands register here (one line each).
    add_profile_command(app, slot);
    add_trace_command(app, slot);
    add_connect_command(app, slot);
    add_shadow_command(app, slot);
    add_depths_command(app, slot);
    add_delays_command(app, slot);
    add_locate_command(app, slot);
    add_calibrate_command(app, slot);
    add_resolution_command(app, slot);
    add_beams_command(app, slot);

    if (is_unknown_command(app, argc, argv)) return exit_usage;
    install_interrupt_flag();  // from here on SIGINT and SIGTERM end the run cleanly
    try {
        app.parse(argc, argv);
    } catch (const CLI::CallForHelp& e) {
        return help_written(app.exit(e));
    } catch (const CLI::CallForAllHelp& e) {
        return help_written(app.exit(e));
    } catch (const CLI::CallForVersion& e) {
        return help_written(app.exit(e));
    } catch (const CLI::ExtrasError& e) {
        std::vector<std::string> extras;
        for (const CLI::App* command : app.get_subcommands())
            for (const std::string& extra : command->remaining()) extras.push_back(extra);
        fmt::print(stderr, "firnray: usage error: {}{}\n", e.what(), option_suggestions(app, extras));
        fmt::print(stderr, "firnray: run 'firnray COMMAND --help' for the options\n");
        return exit_usage;
    } catch (const CLI::ParseError& e) {
        fmt::print(stderr, "firnray: usage error: {}\n", e.what());
        fmt::print(stderr, "firnray: run 'firnray --help' or 'firnray COMMAND --help' for the options\n");
        return exit_usage;
    } catch (const UsageError& e) {
        fmt::print(stderr, "firnray: usage error: {}\n", e.what());
        return exit_usage;
    }
    if (!slot.run) return exit_usage;
    return run_guarded(slot.run);
}
