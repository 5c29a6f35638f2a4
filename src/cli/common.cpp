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

std::string text_of(const Words& words, const char* fallback) {
    if (words.empty()) return fallback;
    std::string t;
    for (const auto& w : words)
        t += (t.empty() ? "" : " ") + w;
    return t;
}

CLI::Option* add_quantity_option(CLI::App* sub, const std::string& name, Words& target,
                                 const std::string& help, const std::string& type_name) {
    return sub->add_option(name, target, help)
        ->expected(1, CLI::detail::expected_max_vector_size)
        ->type_name(type_name);
}

Format parse_format(const std::string& text) {
    if (text == "table") return Format::table;
    if (text == "csv") return Format::csv;
    if (text == "json") return Format::json;
    throw InputError("--format: cannot use '" + text + "'. Accepted: table, csv, json");
}

} // namespace holdfast::cli
