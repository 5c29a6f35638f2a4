#include "output.hpp"

#include <cmath>
#include <cstdio>
#include <filesystem>
#include <fstream>
#include <random>

#include <fmt/format.h>
#include <nlohmann/json.hpp>

#include "holdfast/errors.hpp"
#include "holdfast/version.hpp"

namespace holdfast::cli {
namespace {

void check_finite(const Cell& c, const std::string& key) {
    if (const double* d = std::get_if<double>(&c); d && !std::isfinite(*d))
        throw InternalError("result '" + key + "' is not a finite number; refusing to print it");
    if (const auto* v = std::get_if<std::vector<double>>(&c))
        for (double d : *v)
            if (!std::isfinite(d))
                throw InternalError("result '" + key +
                                    "' holds a number that is not finite; refusing to print it");
}

std::string join(const std::vector<double>& v, const char* sep, std::string (*fmt)(double)) {
    std::string out;
    for (std::size_t i = 0; i < v.size(); ++i)
        out += (i ? sep : "") + fmt(v[i]);
    return out;
}

std::string table_cell(const Cell& c) {
    if (const double* d = std::get_if<double>(&c)) return format_table_number(*d);
    if (const bool* b = std::get_if<bool>(&c)) return *b ? "yes" : "no";
    if (std::holds_alternative<std::monostate>(c)) return "-";
    if (const auto* v = std::get_if<std::vector<double>>(&c))
        return v->empty() ? "none" : join(*v, ", ", format_table_number);
    return std::get<std::string>(c);
}

std::string csv_escape(const std::string& s) {
    if (s.find_first_of(",\"\n") == std::string::npos) return s;
    std::string out = "\"";
    for (char ch : s) {
        if (ch == '"') out += '"';
        out += ch;
    }
    return out + "\"";
}

std::string csv_cell(const Cell& c) {
    if (const double* d = std::get_if<double>(&c)) return format_machine_number(*d);
    if (const bool* b = std::get_if<bool>(&c)) return *b ? "true" : "false";
    if (std::holds_alternative<std::monostate>(c)) return "";
    if (const auto* v = std::get_if<std::vector<double>>(&c))
        return join(*v, ";", format_machine_number);
    return csv_escape(std::get<std::string>(c));
}

nlohmann::json json_cell(const Cell& c) {
    if (const double* d = std::get_if<double>(&c)) return *d;
    if (const bool* b = std::get_if<bool>(&c)) return *b;
    if (std::holds_alternative<std::monostate>(c)) return nullptr;
    if (const auto* v = std::get_if<std::vector<double>>(&c)) return *v;
    return std::get<std::string>(c);
}

void table_section(std::string& out, const char* title, const std::vector<Entry>& entries) {
    if (entries.empty()) return;
    std::size_t width = 0;
    for (const auto& e : entries)
        width = std::max(width, e.label.size());
    out += fmt::format("{}\n", title);
    for (const auto& e : entries) {
        std::string line;
        for (const auto& r : e.reprs) {
            if (!line.empty()) line += "  =  ";
            line += table_cell(r.value);
            const auto* list = std::get_if<std::vector<double>>(&r.value);
            const bool no_number =
                std::holds_alternative<std::monostate>(r.value) || (list && list->empty());
            if (!r.unit.empty() && !no_number) line += " " + r.unit;
        }
        out += fmt::format("  {:<{}}  {}\n", e.label, width, line);
    }
}

std::string render_table(const Report& r) {
    std::string out = fmt::format("holdfast {}\n", r.command);
    table_section(out, "parameters", r.parameters);
    table_section(out, "results", r.results);
    if (r.grid) {
        const Grid& g = *r.grid;
        std::vector<std::size_t> w(g.columns.size());
        std::vector<std::vector<std::string>> text(g.rows.size());
        for (std::size_t j = 0; j < g.columns.size(); ++j)
            w[j] = g.columns[j].label.size();
        for (std::size_t i = 0; i < g.rows.size(); ++i)
            for (std::size_t j = 0; j < g.rows[i].size(); ++j) {
                text[i].push_back(table_cell(g.rows[i][j]));
                w[j] = std::max(w[j], text[i].back().size());
            }
        out += "\n";
        for (std::size_t j = 0; j < g.columns.size(); ++j)
            out += fmt::format("{:>{}}{}", g.columns[j].label, w[j],
                               j + 1 < g.columns.size() ? "  " : "\n");
        for (const auto& row : text)
            for (std::size_t j = 0; j < row.size(); ++j)
                out += fmt::format("{:>{}}{}", row[j], w[j], j + 1 < row.size() ? "  " : "\n");
    }
    if (!r.assumptions.empty()) {
        out += "\nassumptions and limits\n";
        for (const auto& a : r.assumptions)
            out += "  - " + a + "\n";
    }
    if (!r.warnings.empty()) {
        out += "\nwarnings\n";
        for (const auto& a : r.warnings)
            out += "  ! " + a + "\n";
    }
    return out;
}

std::string render_csv(const Report& r) {
    std::string out;
    if (r.grid) {
        const Grid& g = *r.grid;
        for (std::size_t j = 0; j < g.columns.size(); ++j)
            out += g.columns[j].key + (j + 1 < g.columns.size() ? "," : "\n");
        for (const auto& row : g.rows)
            for (std::size_t j = 0; j < row.size(); ++j)
                out += csv_cell(row[j]) + (j + 1 < row.size() ? "," : "\n");
        return out;
    }
    std::vector<const Repr*> all;
    for (const auto* list : {&r.parameters, &r.results})
        for (const auto& e : *list)
            for (const auto& rep : e.reprs)
                all.push_back(&rep);
    for (std::size_t j = 0; j < all.size(); ++j)
        out += all[j]->key + (j + 1 < all.size() ? "," : "\n");
    for (std::size_t j = 0; j < all.size(); ++j)
        out += csv_cell(all[j]->value) + (j + 1 < all.size() ? "," : "\n");
    return out;
}

std::string render_json(const Report& r) {
    nlohmann::ordered_json j;
    j["command"] = r.command;
    j["holdfast_version"] = version_string;
    j["git_hash"] = git_hash;
    auto section = [](const std::vector<Entry>& entries) {
        nlohmann::ordered_json o = nlohmann::ordered_json::object();
        for (const auto& e : entries)
            for (const auto& rep : e.reprs)
                o[rep.key] = json_cell(rep.value);
        return o;
    };
    j["parameters"] = section(r.parameters);
    j["results"] = section(r.results);
    if (r.grid) {
        nlohmann::ordered_json rows = nlohmann::ordered_json::array();
        for (const auto& row : r.grid->rows) {
            nlohmann::ordered_json o;
            for (std::size_t k = 0; k < row.size(); ++k)
                o[r.grid->columns[k].key] = json_cell(row[k]);
            rows.push_back(o);
        }
        j["rows"] = rows;
    }
    j["assumptions"] = r.assumptions;
    j["warnings"] = r.warnings;
    return j.dump(2) + "\n";
}

} // namespace

std::string format_table_number(double v) { return fmt::format("{:.6g}", v); }
std::string format_machine_number(double v) { return fmt::format("{:.10g}", v); }

Entry number_entry(std::string label, std::vector<Repr> reprs) {
    return Entry{std::move(label), std::move(reprs)};
}
Entry text_entry(std::string label, std::string key, std::string text) {
    return Entry{std::move(label), {Repr{std::move(key), std::move(text), ""}}};
}
Entry flag_entry(std::string label, std::string key, bool value) {
    return Entry{std::move(label), {Repr{std::move(key), value, ""}}};
}

std::string render(const Report& report, Format format) {
    for (const auto* list : {&report.parameters, &report.results})
        for (const auto& e : *list)
            for (const auto& rep : e.reprs)
                check_finite(rep.value, rep.key);
    if (report.grid)
        for (const auto& row : report.grid->rows)
            for (std::size_t k = 0; k < row.size(); ++k)
                check_finite(row[k], report.grid->columns.at(k).key);
    switch (format) {
    case Format::table:
        return render_table(report);
    case Format::csv:
        return render_csv(report);
    case Format::json:
        return render_json(report);
    }
    throw InternalError("unknown output format");
}

void write_file_atomically(const std::string& path, const std::string& text) {
    namespace fs = std::filesystem;
    const fs::path target(path);
    const fs::path dir = target.has_parent_path() ? target.parent_path() : fs::path(".");
    std::random_device rd;
    const fs::path tmp = dir / fmt::format(".{}.tmp-{:08x}", target.filename().string(), rd());
    {
        std::ofstream f(tmp, std::ios::binary);
        if (!f) throw InputError("--output: cannot write in folder '" + dir.string() + "'");
        f << text;
        f.flush();
        if (!f) {
            std::error_code ec;
            fs::remove(tmp, ec);
            throw InputError("--output: writing '" + path + "' failed");
        }
    }
    std::error_code ec;
    fs::rename(tmp, target, ec);
    if (ec) {
        fs::remove(tmp, ec);
        throw InputError("--output: cannot create '" + path + "': " + ec.message());
    }
}

} // namespace holdfast::cli
