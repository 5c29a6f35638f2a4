#pragma once
// The one output module of the command line: every subcommand builds a Report and hands it
// here. Table for people, CSV and JSON for scripts. Names follow DESIGN.md: snake_case,
// ending with the unit where there is one.
#include <optional>
#include <string>
#include <variant>
#include <vector>

namespace holdfast::cli {

// std::monostate: no value here (e.g. the apocentre of an unbound grain): "-" in tables,
// empty in CSV, null in JSON. std::vector<double>: a list (e.g. several blow-out radii):
// joined by ", " in tables and ";" in CSV, an array in JSON.
using Cell = std::variant<double, std::string, bool, std::monostate, std::vector<double>>;

// One value under one machine name, with the unit label the table shows.
struct Repr {
    std::string key; // machine name, e.g. "eddington_luminosity_erg_s"
    Cell value;
    std::string unit; // table label, e.g. "erg/s"; empty for dimensionless or text
};

// One quantity, shown on one table line in several units.
struct Entry {
    std::string label; // human label, e.g. "Eddington luminosity"
    std::vector<Repr> reprs;
};

struct Column {
    std::string key;   // machine name
    std::string label; // table header
};

// A grid of rows, e.g. beta against grain radius.
struct Grid {
    std::vector<Column> columns;
    std::vector<std::vector<Cell>> rows;
};

struct Report {
    std::string command;
    std::vector<Entry> parameters; // the effective inputs
    std::vector<Entry> results;
    std::optional<Grid> grid;
    std::vector<std::string> assumptions; // limits of the model, shown with the results
    std::vector<std::string> warnings;    // also printed on stderr
};

enum class Format { table, csv, json };

// Helpers to build entries tersely.
Entry number_entry(std::string label, std::vector<Repr> reprs);
Entry text_entry(std::string label, std::string key, std::string text);
Entry flag_entry(std::string label, std::string key, bool value);

// Renders the report. Throws InternalError if any number is not finite: a NaN never reaches
// the user.
std::string render(const Report& report, Format format);

// Writes `text` to `path` through a temporary file in the same folder and a rename, so a
// failed run never leaves a half-written file. Throws InputError if the folder is not
// writable.
void write_file_atomically(const std::string& path, const std::string& text);

// Formats a number for the table (6 significant digits) or for machines (10).
std::string format_table_number(double v);
std::string format_machine_number(double v);

} // namespace holdfast::cli
