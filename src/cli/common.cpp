#include "commands.hpp"

#include "holdfast/errors.hpp"

namespace holdfast::cli {

std::shared_ptr<CommonOptions> add_common_options(CLI::App& sub) {
    auto common = std::make_shared<CommonOptions>();
    sub.add_option("--format", common->format,
                   "Output format: table (for people), csv (one header line) or json (one "
                   "object)")
        ->default_val("table");
    sub.add_option("--output", common->output,
                   "Write to this file instead of standard output (written whole or not at "
                   "all)");
    return common;
}

Format parse_format(const std::string& text) {
    if (text == "table") return Format::table;
    if (text == "csv") return Format::csv;
    if (text == "json") return Format::json;
    throw InputError("--format: cannot use '" + text + "'. Accepted: table, csv, json");
}

} // namespace holdfast::cli
