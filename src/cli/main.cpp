// holdfast: wires the subcommands and maps errors to exit status.
// Exit status: 0 success; 2 bad input (options, values, data files); 1 a computation failed
// or an internal error.
#include <cstdio>
#include <iostream>
#include <vector>

#include <fmt/format.h>
#include <gsl/gsl_errno.h>

#include "commands.hpp"
#include "holdfast/errors.hpp"
#include "holdfast/version.hpp"

namespace cli = holdfast::cli;

int main(int argc, char** argv) {
    // GSL's default handler aborts the process; the core checks every status instead.
    gsl_set_error_handler_off();

    CLI::App app{"holdfast: does light win over gravity? Radiation-pressure to gravity ratio "
                 "(beta) of dust grains from Mie theory, blow-out sizes, grain temperatures, "
                 "and Eddington limits of accreting objects.\n"
                 "Quantities take their units: --mass 1.4 Msun, --luminosity 3e38 erg/s.",
                 "holdfast"};
    app.set_version_flag(
        "--version",
        fmt::format("holdfast {} (git {})", holdfast::version_string, holdfast::git_hash),
        "Print the version and git hash, then exit");
    app.require_subcommand(1);
    app.footer("Exit status: 0 success, 2 bad input, 1 a computation failed.\n"
               "Run 'holdfast SUBCOMMAND --help' for the options of each subcommand.");

    std::vector<cli::Command> commands;
    commands.push_back(cli::setup_eddington(app));
    commands.push_back(cli::setup_materials(app));
    commands.push_back(cli::setup_mie(app));
    commands.push_back(cli::setup_beta(app));
    commands.push_back(cli::setup_blowout(app));
    commands.push_back(cli::setup_temperature(app));
    commands.push_back(cli::setup_sweep(app));

    try {
        app.parse(argc, argv);
    } catch (const CLI::CallForHelp& e) {
        return app.exit(e);
    } catch (const CLI::CallForAllHelp& e) {
        return app.exit(e);
    } catch (const CLI::CallForVersion& e) {
        return app.exit(e);
    } catch (const CLI::ParseError& e) {
        std::cerr << "holdfast: error: " << e.what() << "\n"
                  << "Run with --help for the options and their units.\n";
        return 2;
    }

    try {
        for (const auto& c : commands) {
            if (!c.app->parsed()) continue;
            const cli::Format format = cli::parse_format(c.common->format);
            const cli::Report report = c.run();
            const std::string text = cli::render(report, format);
            if (c.common->output.empty()) {
                std::cout << text << std::flush;
            } else {
                cli::write_file_atomically(c.common->output, text);
            }
            if (format != cli::Format::table || !c.common->output.empty())
                for (const auto& w : report.warnings)
                    std::cerr << "holdfast: warning: " << w << "\n";
            return 0;
        }
        std::cerr << "holdfast: error: no subcommand given\n";
        return 2;
    } catch (const cli::StoppedBySignal& e) {
        std::cerr << "holdfast: " << e.what() << "\n";
        return 128 + e.signal;
    } catch (const holdfast::InputError& e) {
        std::cerr << "holdfast: error: " << e.what() << "\n";
        return 2;
    } catch (const holdfast::NumericalError& e) {
        std::cerr << "holdfast: computation failed: " << e.what() << "\n";
        return 1;
    } catch (const std::exception& e) {
        std::cerr << "holdfast: internal error: " << e.what() << "\n";
        return 1;
    }
}
