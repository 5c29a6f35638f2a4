#include "text_table.hpp"

#include <charconv>
#include <cmath>
#include <cstdio>
#include <fstream>
#include <sstream>

#include "holdfast/errors.hpp"

namespace holdfast::detail {

void data_file_error(std::string_view source, std::size_t line, const std::string& why) {
    throw DataFileError(std::string(source) + ", line " + std::to_string(line) + ": " + why);
}

void data_file_error(std::string_view source, const std::string& why) {
    throw DataFileError(std::string(source) + ": " + why);
}

std::string read_text_file(const std::string& path) {
    std::ifstream in(path, std::ios::binary);
    if (!in) throw DataFileError(path + ": cannot open the file for reading");
    std::ostringstream buffer;
    buffer << in.rdbuf();
    if (in.bad()) throw DataFileError(path + ": read error");
    return buffer.str();
}

std::string num(double value, int digits) {
    char buffer[64];
    std::snprintf(buffer, sizeof buffer, "%.*g", digits, value);
    return buffer;
}

std::vector<std::string_view> split_lines(std::string_view text) {
    std::vector<std::string_view> lines;
    std::size_t start = 0;
    while (start <= text.size()) {
        std::size_t end = text.find('\n', start);
        if (end == std::string_view::npos) end = text.size();
        std::string_view line = text.substr(start, end - start);
        if (!line.empty() && line.back() == '\r') line.remove_suffix(1);
        if (end == text.size() && line.empty()) break; // no empty line after a final newline
        lines.push_back(line);
        start = end + 1;
    }
    return lines;
}

namespace {

bool is_separator(char c) { return c == ' ' || c == '\t' || c == ',' || c == '\v' || c == '\f'; }

} // namespace

std::vector<NumericRow> read_numeric_rows(std::string_view text, std::string_view source,
                                          std::size_t columns,
                                          const std::vector<std::string>& column_names,
                                          std::size_t first_line) {
    std::vector<NumericRow> rows;
    const auto lines = split_lines(text);
    for (std::size_t i = 0; i < lines.size(); ++i) {
        const std::size_t line_number = first_line + i;
        std::string_view line = lines[i];
        if (const auto hash = line.find('#'); hash != std::string_view::npos)
            line = line.substr(0, hash);
        NumericRow row{line_number, {}};
        std::size_t pos = 0;
        while (pos < line.size()) {
            while (pos < line.size() && is_separator(line[pos]))
                ++pos;
            if (pos >= line.size()) break;
            std::size_t end = pos;
            while (end < line.size() && !is_separator(line[end]))
                ++end;
            std::string_view field = line.substr(pos, end - pos);
            // from_chars does not take a leading '+', which some tables write.
            std::string_view digits = field;
            if (digits.size() > 1 && digits.front() == '+') digits.remove_prefix(1);
            double value = 0.0;
            const auto [ptr, ec] =
                std::from_chars(digits.data(), digits.data() + digits.size(), value);
            const std::string column = row.values.size() < column_names.size()
                                           ? column_names[row.values.size()]
                                           : "column " + std::to_string(row.values.size() + 1);
            if (ec == std::errc::result_out_of_range)
                data_file_error(source, line_number,
                                "'" + std::string(field) + "' (" + column +
                                    ") is out of the range of a double");
            if (ec != std::errc() || ptr != digits.data() + digits.size())
                data_file_error(source, line_number,
                                "cannot read '" + std::string(field) + "' as a number (" + column +
                                    "); expected " + std::to_string(columns) + " numbers per line");
            if (!std::isfinite(value))
                data_file_error(source, line_number,
                                "'" + std::string(field) + "' (" + column + ") is not finite");
            row.values.push_back(value);
            pos = end;
        }
        if (row.values.empty()) continue; // blank or comment-only line
        if (row.values.size() != columns) {
            std::string names;
            for (const auto& n : column_names)
                names += (names.empty() ? "" : " ") + n;
            data_file_error(source, line_number,
                            "found " + std::to_string(row.values.size()) + " numbers, expected " +
                                std::to_string(columns) + " (" + names + ")");
        }
        rows.push_back(std::move(row));
    }
    return rows;
}

} // namespace holdfast::detail
