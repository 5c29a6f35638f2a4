#pragma once
// Wiring shared by the subcommands. Each subcommand lives in its own file: an options
// struct, a setup_* that declares its options on CLI11, and a run that calls the core and
// returns a Report for output.cpp. main.cpp only lists the subcommands.
#include <functional>
#include <memory>
#include <stdexcept>
#include <string>
#include <vector>

#include <CLI/CLI.hpp>

#include "output.hpp"

namespace holdfast::cli {

struct CommonOptions {
    std::string format = "table";
    std::string output; // empty: standard output
};

struct Command {
    CLI::App* app = nullptr;
    std::shared_ptr<CommonOptions> common;
    std::function<Report()> run;
};

// A quantity option's value as typed: it may come as one shell word ('10 Msun') or as
// several (10 Msun); the words up to the next option are joined with spaces before parsing.
using Words = std::vector<std::string>;
std::string text_of(const Words& words, const char* fallback = "");
CLI::Option* add_quantity_option(CLI::App* sub, const std::string& name, Words& target,
                                 const std::string& help, const std::string& type_name);

// --format and --output, the same on every subcommand.
std::shared_ptr<CommonOptions> add_common_options(CLI::App& sub);
Format parse_format(const std::string& text);

// One per subcommand file.
// (subcommand setup functions are declared here as they land)
Command setup_eddington(CLI::App& app);
Command setup_materials(CLI::App& app);
Command setup_mie(CLI::App& app);
Command setup_beta(CLI::App& app);
Command setup_blowout(CLI::App& app);
Command setup_temperature(CLI::App& app);
Command setup_sweep(CLI::App& app);

// Thrown by a command that stopped cleanly on SIGINT or SIGTERM (holdfast sweep): main prints
// the message and exits with 128 + the signal number, the shell's convention.
struct StoppedBySignal : std::runtime_error {
    StoppedBySignal(const std::string& message, int signal_number)
        : std::runtime_error(message), signal(signal_number) {}
    int signal;
};

} // namespace holdfast::cli
