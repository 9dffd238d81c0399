// firnray command-line front end: dispatches to one command per file under cli/commands/.
#include <CLI/CLI.hpp>

#include "cli/commands.hpp"
#include "cli/exit_codes.hpp"
#include "cli/run_command.hpp"

int main(int argc, char** argv) {
    using namespace firnray::cli;
    CLI::App app{
        "firnray: radio ray tracing through graded-index polar firn and ice.\n"
        "Conventions: z is up (m), the surface is z = 0 and the ice is z < 0; angles are zenith\n"
        "angles of the direction of travel (0 = up, 90 = horizontal, 180 = down); times in ns.\n"
        "Exit codes: 0 ok, 2 usage, 3 bad model/station file, 4 bad data input, 5 numerical\n"
        "failure, 6 output not written, 7 some batch rows failed, 130 interrupted.",
        "firnray"};
    app.set_version_flag("--version", std::string("firnray ") + FIRNRAY_VERSION);
    app.require_subcommand(1);

    CommandSlot slot;
    // Commands register here (one line each).
    add_profile_command(app, slot);
    add_trace_command(app, slot);
    add_shadow_command(app, slot);
    add_depths_command(app, slot);
    add_delays_command(app, slot);

    try {
        app.parse(argc, argv);
    } catch (const CLI::ParseError& e) {
        const int code = app.exit(e);
        return code == 0 ? exit_ok : exit_usage;
    }
    if (!slot.run) return exit_usage;
    return run_guarded(slot.run);
}
