// Optical constants from tables: plain nk text files and refractiveindex.info YAML entries
// (M. N. Polyanskiy 2024, Sci. Data 11, 94: the database's file format, "tabulated nk",
// "tabulated n", "tabulated k" and "formula N" data items), interpolation between rows, and
// the summary behind `holdfast materials check`.
#include <algorithm>
#include <cmath>
#include <limits>
#include <optional>

#include "holdfast/errors.hpp"
#include "holdfast/material.hpp"
#include "holdfast/spectral_mean.hpp"
#include "text_table.hpp"

namespace holdfast {
namespace {

using detail::data_file_error;
using detail::num;

struct LineRow {
    std::size_t line = 0; // file line (0 where rows were not read from a file)
    NkRow row;
};

// The same checks for every source. `where(i)` says where row i came from for messages.
template <class Where>
NkTable validate_rows(const std::vector<LineRow>& rows, const std::string& source,
                      std::string format, NegativeK negative_k, Where where) {
    NkTable table{{}, source, std::move(format), {}};
    std::size_t clipped = 0;
    for (std::size_t i = 0; i < rows.size(); ++i) {
        NkRow r = rows[i].row;
        auto fail = [&](const std::string& why) {
            throw DataFileError(source + ", " + where(i) + ": " + why);
        };
        if (!std::isfinite(r.wavelength_um) || !std::isfinite(r.n) || !std::isfinite(r.k))
            fail("a value is not finite");
        if (!(r.wavelength_um > 0.0)) fail("wavelength " + num(r.wavelength_um) + " um is not > 0");
        if (i > 0 && r.wavelength_um == rows[i - 1].row.wavelength_um)
            fail("wavelength " + num(r.wavelength_um, 10) + " um repeats the previous row " +
                 "(duplicate wavelength)");
        if (i > 0 && r.wavelength_um < rows[i - 1].row.wavelength_um)
            fail("wavelength " + num(r.wavelength_um, 10) + " um is below the previous row's " +
                 num(rows[i - 1].row.wavelength_um, 10) +
                 " um; rows must be sorted by increasing wavelength");
        if (!(r.n > 0.0)) fail("n = " + num(r.n) + " is not > 0");
        if (r.k < 0.0) {
            if (negative_k == NegativeK::refuse)
                fail("k = " + num(r.k) +
                     " is negative (unphysical: m = n + ik with k >= 0 is "
                     "an absorbing medium); fix the table, or accept "
                     "clipping negative k to 0 (--clip-negative-k)");
            r.k = 0.0;
            ++clipped;
        }
        table.rows.push_back(r);
    }
    if (table.rows.size() < 2)
        throw DataFileError(source + ": " + std::to_string(table.rows.size()) +
                            " data rows; an optical-constants table needs at least 2 "
                            "(wavelength_um n k per line)");
    if (clipped > 0)
        table.notes.push_back(std::to_string(clipped) + " rows with k < 0 clipped to k = 0");
    return table;
}

NkTable validate_file_rows(const std::vector<LineRow>& rows, const std::string& source,
                           std::string format, NegativeK negative_k) {
    return validate_rows(rows, source, std::move(format), negative_k,
                         [&](std::size_t i) { return "line " + std::to_string(rows[i].line); });
}

std::vector<LineRow> nk_rows(const std::vector<detail::NumericRow>& numeric) {
    std::vector<LineRow> rows;
    rows.reserve(numeric.size());
    for (const auto& r : numeric)
        rows.push_back({r.line, NkRow{r.values[0], r.values[1], r.values[2]}});
    return rows;
}

// Interpolation position of x in the sorted grid: segment index i and fraction t in ln(x).
struct Position {
    std::size_t i;
    double t;
};
Position locate(const std::vector<double>& wl, const std::vector<double>& log_wl, double x) {
    const auto it = std::upper_bound(wl.begin(), wl.end(), x);
    std::size_t i = static_cast<std::size_t>(it - wl.begin());
    i = std::min(i == 0 ? 0 : i - 1, wl.size() - 2);
    const double t = (std::log(x) - log_wl[i]) / (log_wl[i + 1] - log_wl[i]);
    return {i, t};
}

// k between two rows: log-linear where both are > 0 (k spans decades), linear otherwise.
double interpolate_k(double k0, double k1, double t) {
    if (k0 > 0.0 && k1 > 0.0) return k0 * std::pow(k1 / k0, t);
    return k0 + (k1 - k0) * t;
}

class TabulatedIndex final : public OpticalConstants {
  public:
    explicit TabulatedIndex(NkTable table) : table_(std::move(table)) {
        for (const auto& r : table_.rows) {
            wl_.push_back(r.wavelength_um);
            log_wl_.push_back(std::log(r.wavelength_um));
        }
    }
    std::complex<double> index_at_um(double wavelength_um) const override {
        // Quadrature nodes come from exp(ln lambda): at a band edge set to the table's end they
        // can land a rounding error outside it. Within 1e-12 relative, take the end row.
        constexpr double edge_slack = 1e-12;
        if (wavelength_um < wl_.front() && wavelength_um >= wl_.front() * (1.0 - edge_slack))
            wavelength_um = wl_.front();
        if (wavelength_um > wl_.back() && wavelength_um <= wl_.back() * (1.0 + edge_slack))
            wavelength_um = wl_.back();
        if (!(wavelength_um >= wl_.front() && wavelength_um <= wl_.back()))
            throw InputError("optical constants " + table_.source + " cover " + num(wl_.front()) +
                             "-" + num(wl_.back()) + " um; asked for " + num(wavelength_um) +
                             " um (see --out-of-band)");
        const auto [i, t] = locate(wl_, log_wl_, wavelength_um);
        const NkRow& a = table_.rows[i];
        const NkRow& b = table_.rows[i + 1];
        return {a.n + (b.n - a.n) * t, interpolate_k(a.k, b.k, t)};
    }
    double min_wavelength_um() const override { return wl_.front(); }
    double max_wavelength_um() const override { return wl_.back(); }
    std::vector<double> breakpoints_um() const override { return wl_; }
    std::string describe() const override {
        return "tabulated n, k from " + table_.source + " (" + table_.format + ", " +
               std::to_string(table_.rows.size()) + " rows, " + num(wl_.front()) + "-" +
               num(wl_.back()) + " um)";
    }

  private:
    NkTable table_;
    std::vector<double> wl_, log_wl_;
};

// ---- refractiveindex.info YAML ---------------------------------------------------------------

std::size_t indentation(std::string_view line) {
    std::size_t i = 0;
    while (i < line.size() && line[i] == ' ')
        ++i;
    return i;
}

std::string_view trim(std::string_view s) {
    while (!s.empty() && (s.front() == ' ' || s.front() == '\t'))
        s.remove_prefix(1);
    while (!s.empty() && (s.back() == ' ' || s.back() == '\t'))
        s.remove_suffix(1);
    return s;
}

bool blank_or_comment(std::string_view line) {
    const auto t = trim(line);
    return t.empty() || t.front() == '#';
}

struct YamlItem {
    std::string type;
    std::size_t type_line = 0;
    std::string data;          // the literal block, lines joined by '\n'
    std::size_t data_line = 0; // file line of the block's first line
    bool has_data = false;
};

// The items of the top-level DATA list: each "- type: X" with its "data: |" block.
std::vector<YamlItem> yaml_data_items(const std::string& text, const std::string& path) {
    const auto lines = detail::split_lines(text);
    std::size_t i = 0;
    while (i < lines.size() && trim(lines[i]) != "DATA:")
        ++i;
    if (i == lines.size())
        data_file_error(path, "no 'DATA:' section; expected a refractiveindex.info database "
                              "entry (YAML with DATA: - type: tabulated nk)");
    std::vector<YamlItem> items;
    for (++i; i < lines.size(); ++i) {
        const std::string_view line = lines[i];
        if (blank_or_comment(line)) continue;
        // The next top-level key ends DATA (a list may also start at column 0).
        if (indentation(line) == 0 && !trim(line).starts_with("- ")) break;
        std::string_view body = trim(line);
        if (body.starts_with("- ")) {
            items.emplace_back();
            body = trim(body.substr(2));
        }
        if (items.empty())
            data_file_error(path, i + 1, "expected a list item '- type: ...' under DATA:");
        const auto colon = body.find(':');
        if (colon == std::string_view::npos)
            data_file_error(path, i + 1,
                            "cannot read '" + std::string(body) +
                                "': expected 'key: value' in the DATA item");
        const std::string_view key = trim(body.substr(0, colon));
        const std::string_view value = trim(body.substr(colon + 1));
        if (key == "type") {
            items.back().type = std::string(value);
            items.back().type_line = i + 1;
        } else if (key == "data") {
            if (!value.starts_with("|"))
                data_file_error(path, i + 1, "expected 'data: |' followed by an indented block");
            const std::size_t key_indent =
                indentation(line) + (line.find("- ") == indentation(line) ? 2 : 0);
            std::string block;
            std::size_t j = i + 1;
            for (; j < lines.size(); ++j) {
                if (!trim(lines[j]).empty() && indentation(lines[j]) <= key_indent) break;
                block += std::string(lines[j]) + "\n";
            }
            items.back().data = std::move(block);
            items.back().data_line = i + 2;
            items.back().has_data = true;
            i = j - 1;
        }
        // Other keys (wavelength_range, coefficients, ...) belong to formula items; skipped.
    }
    if (items.empty()) data_file_error(path, "the DATA section has no items");
    return items;
}

std::vector<LineRow> item_rows(const YamlItem& item, const std::string& path, std::size_t columns,
                               const std::vector<std::string>& names) {
    if (!item.has_data)
        data_file_error(path, item.type_line,
                        "the '" + item.type + "' item has no 'data: |' block");
    const auto numeric = detail::read_numeric_rows(item.data, path, columns, names, item.data_line);
    std::vector<LineRow> rows;
    for (const auto& r : numeric)
        rows.push_back({r.line, NkRow{r.values[0], r.values[1], columns == 3 ? r.values[2] : 0.0}});
    return rows;
}

// Checks one column of a "tabulated n" / "tabulated k" item (sorted, positive wavelengths).
void check_single_column(const std::vector<LineRow>& rows, const std::string& path,
                         const std::string& what) {
    if (rows.size() < 2) data_file_error(path, "the " + what + " item has fewer than 2 rows");
    for (std::size_t i = 0; i < rows.size(); ++i) {
        if (!(rows[i].row.wavelength_um > 0.0))
            data_file_error(path, rows[i].line, "wavelength is not > 0");
        if (i > 0 && !(rows[i].row.wavelength_um > rows[i - 1].row.wavelength_um))
            data_file_error(path, rows[i].line,
                            "wavelength " + num(rows[i].row.wavelength_um, 10) +
                                " um is not above the previous row's; rows must be sorted by "
                                "increasing wavelength without duplicates");
    }
}

// Value of a two-column table at x (within its range), linear in ln(lambda), the second column
// in log where `log_values` and both neighbours are > 0.
double table_value(const std::vector<LineRow>& rows, double x, bool log_values) {
    std::size_t i = 0;
    while (i + 2 < rows.size() && rows[i + 1].row.wavelength_um <= x)
        ++i;
    const double x0 = rows[i].row.wavelength_um, x1 = rows[i + 1].row.wavelength_um;
    const double t = std::log(x / x0) / std::log(x1 / x0);
    const double v0 = rows[i].row.n, v1 = rows[i + 1].row.n;
    if (log_values) return interpolate_k(v0, v1, t);
    return v0 + (v1 - v0) * t;
}

} // namespace

NkTable read_nk_text(const std::string& path, NegativeK negative_k) {
    const std::string text = detail::read_text_file(path);
    const auto numeric = detail::read_numeric_rows(text, path, 3, {"wavelength_um", "n", "k"});
    return validate_file_rows(nk_rows(numeric), path, "nk text", negative_k);
}

NkTable read_nk_yaml(const std::string& path, NegativeK negative_k) {
    const std::string text = detail::read_text_file(path);
    const auto items = yaml_data_items(text, path);
    const YamlItem* nk = nullptr;
    const YamlItem* n_only = nullptr;
    const YamlItem* k_only = nullptr;
    for (const auto& it : items) {
        if (it.type == "tabulated nk" && nk == nullptr) nk = &it;
        if (it.type == "tabulated n" && n_only == nullptr) n_only = &it;
        if (it.type == "tabulated k" && k_only == nullptr) k_only = &it;
    }
    if (nk != nullptr)
        return validate_file_rows(item_rows(*nk, path, 3, {"wavelength_um", "n", "k"}), path,
                                  "refractiveindex.info YAML, tabulated nk", negative_k);
    if (n_only != nullptr && k_only != nullptr) {
        const auto n_rows = item_rows(*n_only, path, 2, {"wavelength_um", "n"});
        const auto k_rows = item_rows(*k_only, path, 2, {"wavelength_um", "k"});
        check_single_column(n_rows, path, "tabulated n");
        check_single_column(k_rows, path, "tabulated k");
        const double lo =
            std::max(n_rows.front().row.wavelength_um, k_rows.front().row.wavelength_um);
        const double hi =
            std::min(n_rows.back().row.wavelength_um, k_rows.back().row.wavelength_um);
        if (!(hi > lo))
            data_file_error(path, "the 'tabulated n' and 'tabulated k' items do not overlap in "
                                  "wavelength");
        // Both grids' wavelengths within the common range; each column interpolated onto them.
        std::vector<double> grid;
        for (const auto* rows : {&n_rows, &k_rows})
            for (const auto& r : *rows)
                if (r.row.wavelength_um >= lo && r.row.wavelength_um <= hi)
                    grid.push_back(r.row.wavelength_um);
        std::sort(grid.begin(), grid.end());
        grid.erase(std::unique(grid.begin(), grid.end()), grid.end());
        std::vector<LineRow> merged;
        for (double x : grid)
            merged.push_back(
                {0, NkRow{x, table_value(n_rows, x, false), table_value(k_rows, x, true)}});
        return validate_rows(merged, path, "refractiveindex.info YAML, tabulated n + tabulated k",
                             negative_k, [&](std::size_t i) {
                                 return "merged row at " + num(merged[i].row.wavelength_um) + " um";
                             });
    }
    std::string types;
    for (const auto& it : items)
        types += (types.empty() ? "'" : ", '") + it.type + "'";
    for (const auto& it : items)
        if (it.type.starts_with("formula"))
            data_file_error(path, it.type_line,
                            "the entry gives n as a dispersion formula (" + it.type +
                                "); holdfast reads tabulated data only. Tabulate the formula "
                                "as wavelength_um n k rows, or pick a tabulated entry");
    data_file_error(path, "no 'tabulated nk' item, nor a 'tabulated n' + 'tabulated k' pair, "
                          "in DATA (found " +
                              types + ")");
}

NkTable read_nk_file(const std::string& path, NegativeK negative_k) {
    auto ends_with = [&](std::string_view suffix) {
        if (path.size() < suffix.size()) return false;
        std::string tail = path.substr(path.size() - suffix.size());
        std::transform(tail.begin(), tail.end(), tail.begin(),
                       [](unsigned char c) { return static_cast<char>(std::tolower(c)); });
        return tail == suffix;
    };
    if (ends_with(".yml") || ends_with(".yaml")) return read_nk_yaml(path, negative_k);
    return read_nk_text(path, negative_k);
}

std::shared_ptr<const OpticalConstants> tabulated_index(NkTable table) {
    std::vector<LineRow> rows;
    for (const auto& r : table.rows)
        rows.push_back({0, r});
    // Re-check rows built in code (the file readers have done so already, cheaply repeated).
    NkTable checked = validate_rows(rows, table.source.empty() ? "optical constants" : table.source,
                                    table.format, NegativeK::refuse,
                                    [](std::size_t i) { return "row " + std::to_string(i + 1); });
    checked.notes = std::move(table.notes);
    return std::make_shared<TabulatedIndex>(std::move(checked));
}

NkCheckSummary check_nk_file(const std::string& path, NegativeK negative_k) {
    NkTable table = read_nk_file(path, negative_k);
    NkCheckSummary s;
    s.source = path;
    s.format = table.format;
    s.rows = table.rows.size();
    s.wavelength_min_um = table.rows.front().wavelength_um;
    s.wavelength_max_um = table.rows.back().wavelength_um;
    s.n_min = s.k_min = std::numeric_limits<double>::infinity();
    s.n_max = s.k_max = -std::numeric_limits<double>::infinity();
    std::size_t below_one = 0;
    double widest_gap = 0.0;
    std::size_t widest_at = 0;
    for (std::size_t i = 0; i < table.rows.size(); ++i) {
        const NkRow& r = table.rows[i];
        s.n_min = std::min(s.n_min, r.n);
        s.n_max = std::max(s.n_max, r.n);
        s.k_min = std::min(s.k_min, r.k);
        s.k_max = std::max(s.k_max, r.k);
        if (r.k == 0.0) ++s.zero_k_rows;
        if (r.n < 1.0) ++below_one;
        if (i > 0) {
            const double gap = r.wavelength_um / table.rows[i - 1].wavelength_um;
            if (gap > widest_gap) {
                widest_gap = gap;
                widest_at = i;
            }
        }
    }
    s.warnings = table.notes;
    const auto optics = tabulated_index(table);
    // The interpolant between every pair of rows must be finite.
    for (std::size_t i = 0; i + 1 < table.rows.size(); ++i) {
        const double mid = std::sqrt(table.rows[i].wavelength_um * table.rows[i + 1].wavelength_um);
        const auto m = optics->index_at_um(mid);
        if (!std::isfinite(m.real()) || !std::isfinite(m.imag()))
            throw NumericalError(path + ": the interpolated index at " + num(mid) +
                                 " um is not finite");
    }
    if (s.zero_k_rows > 0)
        s.warnings.push_back(std::to_string(s.zero_k_rows) +
                             " rows have k = 0 (no absorption there: Q_abs = 0, and the grain "
                             "cannot be heated by that light)");
    if (below_one > 0)
        s.warnings.push_back(std::to_string(below_one) +
                             " rows have n < 1 (usual for metals and far-UV or X-ray data; "
                             "check it is intended)");
    // A factor 2 in wavelength between rows is common practice's limit for trusting
    // interpolation of n and k across features.
    if (widest_gap > 2.0)
        s.warnings.push_back("rows are sparse: " + num(table.rows[widest_at - 1].wavelength_um) +
                             " to " + num(table.rows[widest_at].wavelength_um) +
                             " um has no row in between (a factor " + num(widest_gap, 3) +
                             "); interpolation there is a guess");
    // Coverage of what a Sun-like star needs (its band holding all but 1e-6 of the flux).
    const auto sun_band = integration_band(*planck_spectrum(kelvin(constants::solar_teff_K)), 1e-6);
    if (s.wavelength_min_um > sun_band.low_um || s.wavelength_max_um < sun_band.high_um)
        s.warnings.push_back("the table covers " + num(s.wavelength_min_um, 4) + "-" +
                             num(s.wavelength_max_um, 4) + " um, less than the " +
                             num(sun_band.low_um, 3) + "-" + num(sun_band.high_um, 3) +
                             " um a Sun-like (5772 K) spectrum needs; beta and blowout will "
                             "refuse it unless told --out-of-band hold or limit-band");
    return s;
}

} // namespace holdfast
