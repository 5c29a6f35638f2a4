#pragma once
// Private to holdfast_core: reading whitespace- (or comma-) separated numeric columns from the
// data files the tool accepts (optical constants, spectra), with line numbers in every error.
#include <cstddef>
#include <string>
#include <string_view>
#include <vector>

namespace holdfast::detail {

struct NumericRow {
    std::size_t line = 0; // 1-based line number in the file
    std::vector<double> values;
};

// Throws DataFileError "<source>, line <line>: <why>".
[[noreturn]] void data_file_error(std::string_view source, std::size_t line,
                                  const std::string& why);
// Throws DataFileError "<source>: <why>".
[[noreturn]] void data_file_error(std::string_view source, const std::string& why);

// The whole file as text; DataFileError if it cannot be opened or read.
std::string read_text_file(const std::string& path);

// Splits `text` into rows of exactly `columns` finite numbers. '#' starts a comment to the end
// of the line; blank lines are skipped; fields are separated by spaces, tabs or commas.
// `first_line` is the file line number of the first line of `text` (for blocks inside a
// larger file). Throws DataFileError for a malformed line, a wrong column count or a value
// that is not finite.
std::vector<NumericRow> read_numeric_rows(std::string_view text, std::string_view source,
                                          std::size_t columns,
                                          const std::vector<std::string>& column_names,
                                          std::size_t first_line = 1);

// A number as printf's %.<digits>g would write it, for messages.
std::string num(double value, int digits = 6);

// Splits text into lines (without the end-of-line characters, \r removed).
std::vector<std::string_view> split_lines(std::string_view text);

} // namespace holdfast::detail
