// holdfast materials list | show NAME | check FILE
// The shipped grain materials, and a check of a user's optical-constants file before use.
#include <cmath>

#include "commands.hpp"
#include "holdfast/errors.hpp"
#include "holdfast/material.hpp"

namespace holdfast::cli {
namespace {

// The wavelength at which list and show quote n and k (the middle of the visible).
constexpr double quote_wavelength_um = 0.55;

struct MaterialsOptions {
    std::string name;
    std::string file;
    bool clip_negative_k = false;
};

// The first line of a multi-line provenance text.
std::string first_line(const std::string& text) { return text.substr(0, text.find('\n')); }

Report list_report() {
    Report r;
    r.command = "materials list";
    Grid g;
    g.columns = {{"name", "name"},
                 {"density_g_cm3", "density (g/cm3)"},
                 {"n", "n (0.55 um)"},
                 {"k", "k (0.55 um)"},
                 {"source", "what it is"}};
    for (const auto& name : shipped_material_names()) {
        const Material m = shipped_material(name);
        const auto idx = m.optics->index_at_um(quote_wavelength_um);
        g.rows.push_back(
            {m.name, in_g_per_cm3(m.density), idx.real(), idx.imag(), first_line(m.provenance)});
        if (!m.limits.empty()) r.assumptions.push_back(m.limits);
    }
    r.grid = std::move(g);
    r.assumptions.push_back("materials are read from " + tables_directory() +
                            "/materials (set HOLDFAST_TABLES to use another tables folder)");
    return r;
}

Report show_report(const MaterialsOptions& o) {
    const Material m = shipped_material(o.name);
    Report r;
    r.command = "materials show";
    r.parameters.push_back(text_entry("material", "name", m.name));
    r.results.push_back(
        number_entry("bulk density", {Repr{"density_g_cm3", in_g_per_cm3(m.density), "g/cm3"},
                                      Repr{"density_kg_m3", m.density.value(), "kg/m3"}}));
    const auto idx = m.optics->index_at_um(quote_wavelength_um);
    r.results.push_back(number_entry("n at 0.55 um", {Repr{"n", idx.real(), ""}}));
    r.results.push_back(number_entry("k at 0.55 um", {Repr{"k", idx.imag(), ""}}));
    const double lo = m.optics->min_wavelength_um(), hi = m.optics->max_wavelength_um();
    if (lo > 0.0 && std::isfinite(hi)) {
        r.results.push_back(
            number_entry("shortest wavelength", {Repr{"wavelength_min_um", lo, "um"}}));
        r.results.push_back(
            number_entry("longest wavelength", {Repr{"wavelength_max_um", hi, "um"}}));
    }
    r.results.push_back(text_entry("optical constants", "optics", m.optics->describe()));
    r.results.push_back(text_entry("provenance", "source", m.provenance));
    r.results.push_back(text_entry("read from", "file", m.file));
    if (!m.limits.empty()) r.assumptions.push_back(m.limits);
    return r;
}

Report check_report(const MaterialsOptions& o) {
    const NkCheckSummary s =
        check_nk_file(o.file, o.clip_negative_k ? NegativeK::clip_to_zero : NegativeK::refuse);
    Report r;
    r.command = "materials check";
    r.parameters.push_back(text_entry("file", "source", s.source));
    r.parameters.push_back(flag_entry("clip negative k", "clip_negative_k", o.clip_negative_k));
    r.results.push_back(text_entry("format", "format", s.format));
    r.results.push_back(number_entry("rows", {Repr{"rows", static_cast<double>(s.rows), ""}}));
    r.results.push_back(number_entry("shortest wavelength",
                                     {Repr{"wavelength_min_um", s.wavelength_min_um, "um"}}));
    r.results.push_back(
        number_entry("longest wavelength", {Repr{"wavelength_max_um", s.wavelength_max_um, "um"}}));
    r.results.push_back(number_entry("n from", {Repr{"n_min", s.n_min, ""}}));
    r.results.push_back(number_entry("n to", {Repr{"n_max", s.n_max, ""}}));
    r.results.push_back(number_entry("k from", {Repr{"k_min", s.k_min, ""}}));
    r.results.push_back(number_entry("k to", {Repr{"k_max", s.k_max, ""}}));
    r.results.push_back(number_entry(
        "rows with k = 0", {Repr{"zero_k_rows", static_cast<double>(s.zero_k_rows), ""}}));
    r.assumptions.push_back("between rows: linear in ln(wavelength); n linear, k linear in ln(k) "
                            "where both rows have k > 0 and linear otherwise");
    r.assumptions.push_back("outside its wavelength range the table is not used unless "
                            "--out-of-band hold or limit-band is given to beta/blowout");
    r.warnings = s.warnings;
    return r;
}

} // namespace

Command setup_materials(CLI::App& app) {
    auto* sub = app.add_subcommand("materials", "List the shipped grain materials, show one, "
                                                "or check an optical-constants file");
    sub->require_subcommand(1);
    auto common = add_common_options(*sub);
    auto opts = std::make_shared<MaterialsOptions>();

    auto* list = sub->add_subcommand("list", "List the shipped materials (name, density, n and k "
                                             "at 0.55 um, what each is)");
    auto* show = sub->add_subcommand("show", "Show one shipped material with the provenance of "
                                             "its numbers");
    show->add_option("NAME", opts->name, "Material name (see 'holdfast materials list')")
        ->required();
    auto* check = sub->add_subcommand(
        "check", "Read an optical-constants file as beta would and summarise it: columns "
                 "wavelength_um n k ('#' comments), or a refractiveindex.info YAML entry "
                 "(.yml/.yaml) with tabulated nk data");
    check->add_option("FILE", opts->file, "The file to check")->required();
    check->add_flag("--clip-negative-k", opts->clip_negative_k,
                    "Set rows with k < 0 (unphysical, found in some published tables) to k = 0 "
                    "instead of refusing the file");
    // --format and --output may follow the action: `holdfast materials list --format csv`.
    for (auto* s : {list, show, check})
        s->fallthrough();

    Command c;
    c.app = sub;
    c.common = common;
    c.run = [list, show, check, opts]() -> Report {
        if (list->parsed()) return list_report();
        if (show->parsed()) return show_report(*opts);
        if (check->parsed()) return check_report(*opts);
        throw InputError("materials: give one of list, show NAME, check FILE");
    };
    return c;
}

} // namespace holdfast::cli
