// Sweep files: the TOML schema (README "The sweep file") read into a SweepSpec. Every refusal names
// the file, the line (toml++ source regions) and the key, then what was read and what is accepted.
// Quantities are strings with units, parsed by parse.hpp, so the units are those of the
// command line.
#include <algorithm>
#include <charconv>
#include <cmath>
#include <filesystem>
#include <fstream>
#include <map>
#include <numbers>
#include <set>
#include <sstream>

#include <toml++/toml.h>

#include "holdfast/errors.hpp"
#include "holdfast/parse.hpp"
#include "holdfast/sweep.hpp"

namespace holdfast {
namespace {

namespace fs = std::filesystem;

// Where a value sits: "FILE:LINE: KEY", the prefix of every message about it.
struct Where {
    const std::string* source;
    std::string key;
    std::uint32_t line = 0;
    std::string text() const { return *source + ":" + std::to_string(line) + ": " + key; }
    Where child(const std::string& sub, const toml::node& n) const {
        return {source, key.empty() ? sub : key + sub, n.source().begin.line};
    }
};

[[noreturn]] void refuse(const Where& w, const std::string& why) {
    throw InputError(w.text() + ": " + why);
}

std::string type_name(const toml::node& n) {
    switch (n.type()) {
    case toml::node_type::string:
        return "text";
    case toml::node_type::integer:
        return "an integer";
    case toml::node_type::floating_point:
        return "a number";
    case toml::node_type::boolean:
        return "true/false";
    case toml::node_type::array:
        return "a list";
    case toml::node_type::table:
        return "a table";
    default:
        return "a date or time";
    }
}

// Refuses keys that are not in `allowed`, naming the first unknown one and its line.
void check_keys(const toml::table& t, const Where& w, const std::vector<std::string>& allowed) {
    for (const auto& [k, v] : t) {
        const std::string name(k.str());
        if (std::find(allowed.begin(), allowed.end(), name) == allowed.end()) {
            std::string list;
            for (const auto& a : allowed)
                list += (list.empty() ? "" : ", ") + a;
            refuse(w.child((w.key.empty() ? "" : ".") + name, v),
                   "unknown key. Accepted here: " + list);
        }
    }
}

// Text values: a string, or for `allow_list` a list of strings.
std::vector<std::pair<std::string, Where>> texts(const toml::node& n, const Where& w,
                                                 bool allow_list, const std::string& example) {
    std::vector<std::pair<std::string, Where>> out;
    if (const auto* s = n.as_string()) {
        out.emplace_back(s->get(), w);
    } else if (const auto* a = n.as_array(); a && allow_list) {
        if (a->empty())
            refuse(w, "the list is empty. Accepted: one or more values, e.g. " + example);
        for (std::size_t i = 0; i < a->size(); ++i) {
            const toml::node& e = *a->get(i);
            const Where we = w.child("[" + std::to_string(i + 1) + "]", e);
            const auto* s2 = e.as_string();
            if (!s2)
                refuse(we, "cannot use " + type_name(e) + ". Accepted: text with its unit, e.g. " +
                               example);
            out.emplace_back(s2->get(), we);
        }
    } else {
        refuse(w, "cannot use " + type_name(n) + ". Accepted: text with its unit, e.g. " + example +
                      (allow_list ? " (or a list of such)" : ""));
    }
    return out;
}

std::string one_text(const toml::node& n, const Where& w, const std::string& example) {
    return texts(n, w, false, example).front().first;
}

// A plain number: TOML integer or float, or text holding one.
double number(const toml::node& n, const Where& w) {
    if (const auto* i = n.as_integer()) return static_cast<double>(i->get());
    if (const auto* f = n.as_floating_point()) {
        if (!std::isfinite(f->get())) refuse(w, "cannot use a value that is not finite");
        return f->get();
    }
    if (const auto* s = n.as_string()) return parse_number(s->get(), w.text());
    refuse(w, "cannot use " + type_name(n) + ". Accepted: a number");
}

double bounded(const toml::node& n, const Where& w, double low, bool low_open, double high,
               bool high_open, const std::string& accepted) {
    const double v = number(n, w);
    const bool above = low_open ? v > low : v >= low;
    const bool below = high_open ? v < high : v <= high;
    if (!above || !below)
        refuse(w, "cannot use " + sweep_number(v) + ": out of range. Accepted: " + accepted);
    return v;
}

// Numbers: one, or a list of them.
std::vector<double> numbers(const toml::node& n, const Where& w, double low, bool low_open,
                            double high, bool high_open, const std::string& accepted) {
    std::vector<double> out;
    if (const auto* a = n.as_array()) {
        if (a->empty()) refuse(w, "the list is empty. Accepted: " + accepted);
        for (std::size_t i = 0; i < a->size(); ++i) {
            const toml::node& e = *a->get(i);
            out.push_back(bounded(e, w.child("[" + std::to_string(i + 1) + "]", e), low, low_open,
                                  high, high_open, accepted));
        }
    } else {
        out.push_back(bounded(n, w, low, low_open, high, high_open, accepted));
    }
    return out;
}

int integer(const toml::node& n, const Where& w, int low, int high) {
    const auto* i = n.as_integer();
    if (!i) refuse(w, "cannot use " + type_name(n) + ". Accepted: an integer");
    if (i->get() < low || i->get() > high)
        refuse(w, "cannot use " + std::to_string(i->get()) +
                      ": out of range. Accepted: an integer "
                      "from " +
                      std::to_string(low) + " to " + std::to_string(high));
    return static_cast<int>(i->get());
}

std::string lower(std::string s) {
    std::transform(s.begin(), s.end(), s.begin(),
                   [](unsigned char c) { return static_cast<char>(std::tolower(c)); });
    return s;
}

std::string resolve_path(const std::string& base, const std::string& file) {
    const fs::path p(file);
    return p.is_absolute() || base.empty() ? file : (fs::path(base) / p).string();
}

void require_file(const Where& w, const std::string& path) {
    std::error_code ec;
    if (!fs::is_regular_file(path, ec))
        refuse(w, "cannot use '" + path +
                      "': no such file. Accepted: the path of a readable file "
                      "(relative to the sweep file's folder)");
}

// Log-spaced values from a range "a..b" with `points`, or a list (text "a,b" or a TOML list).
std::vector<double> values_si(const toml::node& n, const Where& w, const Dimension& dim, int points,
                              const std::string& example) {
    std::vector<double> v;
    for (const auto& [text, wt] : texts(n, w, true, example)) {
        const auto part = parse_values_si(text, dim, wt.text(), points);
        v.insert(v.end(), part.begin(), part.end());
    }
    std::sort(v.begin(), v.end());
    v.erase(std::unique(v.begin(), v.end()), v.end());
    return v;
}

// ---- stars --------------------------------------------------------------------------------------

std::string spectrum_key(const Star& s, const std::string& spectrum_file) {
    // Two stars with the same spectrum shape give the same spectral means: a Planck curve
    // depends on T_eff alone (exact bits), a file on its path.
    if (!spectrum_file.empty()) return "file:" + spectrum_file;
    char buf[64];
    const auto r = std::to_chars(buf, buf + sizeof buf, s.teff.value()); // shortest exact form
    return "planck:" + std::string(buf, r.ptr);
}

void read_stars(const toml::node& node, const Where& w0, const std::string& base,
                std::vector<SweepStar>& out) {
    const auto* arr = node.as_array();
    if (!arr || !arr->is_array_of_tables())
        refuse(w0, "must be tables: write each star as [[star]] with its keys");
    for (std::size_t i = 0; i < arr->size(); ++i) {
        const toml::table& t = *arr->get(i)->as_table();
        const Where w = w0.child("[" + std::to_string(i + 1) + "]", t);
        check_keys(t, w, {"label", "preset", "luminosity", "mass", "teff", "radius", "spectrum"});
        auto at = [&](const char* k) { return w.child(std::string(".") + k, *t.get(k)); };
        std::string label;
        if (const auto* n = t.get("label")) label = one_text(*n, at("label"), "\"Veyra\"");
        std::string spectrum_file;
        std::shared_ptr<const Spectrum> spectrum;
        if (const auto* n = t.get("spectrum")) {
            const Where ws = at("spectrum");
            spectrum_file = resolve_path(base, one_text(*n, ws, "\"star.txt\""));
            require_file(ws, spectrum_file);
            try {
                spectrum = read_spectrum_file(spectrum_file);
            } catch (const DataFileError& e) {
                throw DataFileError(ws.text() + ": " + e.what());
            }
        }
        const bool custom = t.contains("luminosity") || t.contains("mass") || t.contains("teff") ||
                            t.contains("radius");
        if (const auto* n = t.get("preset")) {
            const Where wp = at("preset");
            const std::string p = one_text(*n, wp, "\"sun\"");
            if (lower(p) != "sun")
                refuse(wp, "cannot use '" + p + "': unknown preset. Accepted: sun");
            if (custom)
                refuse(wp, "a preset cannot be combined with luminosity, mass, teff or radius: "
                           "give either the preset or the star's values");
            SweepStar s{label.empty() ? "sun" : label, sun(), ""};
            if (spectrum) s.star.spectrum = spectrum;
            s.spectrum_key = spectrum_key(s.star, spectrum_file);
            out.push_back(std::move(s));
            continue;
        }
        if (!custom)
            refuse(w, "a star needs preset = \"sun\" or its values: mass and two of luminosity, "
                      "teff, radius");
        // Each of luminosity, mass, teff, radius may be a list: the star table then stands
        // for every combination (luminosity outermost).
        std::vector<std::vector<std::pair<std::string, Where>>> axes(4);
        const char* keys[4] = {"luminosity", "mass", "teff", "radius"};
        const char* examples[4] = {"\"2.5 Lsun\"", "\"1.6 Msun\"", "\"8000 K\"", "\"1.8 Rsun\""};
        for (int k = 0; k < 4; ++k)
            if (const auto* n = t.get(keys[k])) axes[k] = texts(*n, at(keys[k]), true, examples[k]);
        std::vector<std::size_t> idx(4, 0);
        for (;;) {
            StarInputs in;
            if (!axes[0].empty())
                in.luminosity =
                    parse_quantity<Power>(axes[0][idx[0]].first, axes[0][idx[0]].second.text());
            if (!axes[1].empty())
                in.mass =
                    parse_quantity<Mass>(axes[1][idx[1]].first, axes[1][idx[1]].second.text());
            if (!axes[2].empty())
                in.teff = parse_quantity<Temperature>(axes[2][idx[2]].first,
                                                      axes[2][idx[2]].second.text());
            if (!axes[3].empty())
                in.radius =
                    parse_quantity<Length>(axes[3][idx[3]].first, axes[3][idx[3]].second.text());
            in.name = label.empty() ? "star " + std::to_string(i + 1) : label;
            Star star;
            try {
                star = custom_star(in);
            } catch (const InputError& e) {
                refuse(w, e.what());
            }
            if (spectrum) star.spectrum = spectrum;
            const std::string key = spectrum_key(star, spectrum_file);
            out.push_back({in.name, std::move(star), key});
            int k = 3;
            for (; k >= 0; --k) {
                if (axes[k].empty()) continue;
                if (++idx[k] < axes[k].size()) break;
                idx[k] = 0;
            }
            if (k < 0) break;
        }
    }
}

// ---- materials
// ------------------------------------------------------------------------------------

struct Source {
    std::shared_ptr<const OpticalConstants> optics;
    std::optional<MassDensity> density;
    std::string label;
    std::string limits;
};

std::string format_index(std::complex<double> m) {
    return sweep_number(m.real()) + "+" + sweep_number(m.imag()) + "i";
}

// One of name / index / nk in table `t`.
Source read_source(const toml::table& t, const Where& w, const std::string& base, bool clip) {
    auto at = [&](const char* k) { return w.child(std::string(".") + k, *t.get(k)); };
    const int given = int(t.contains("name")) + int(t.contains("index")) + int(t.contains("nk")) +
                      int(t.contains("mixture"));
    if (given != 1)
        refuse(w, given == 0 ? "no optical constants: give one of name (a shipped material), "
                               "index, nk or mixture"
                             : "name, index, nk and mixture each give the optical constants: "
                               "use only one of them");
    Source s;
    if (const auto* n = t.get("name")) {
        const Where wn = at("name");
        const std::string name = one_text(*n, wn, "\"silicate\"");
        try {
            const Material m = shipped_material(name);
            return {m.optics, m.density, m.name, m.limits};
        } catch (const InputError& e) {
            refuse(wn, e.what());
        }
    }
    if (const auto* n = t.get("index")) {
        const Where wi = at("index");
        const auto m = parse_refractive_index(one_text(*n, wi, "\"1.7+0.03i\""), wi.text());
        return {constant_index(m), std::nullopt, "index " + format_index(m),
                "constant index " + format_index(m) + " at all wavelengths"};
    }
    const Where wk = at("nk");
    const std::string path = resolve_path(base, one_text(*t.get("nk"), wk, "\"olivine.txt\""));
    require_file(wk, path);
    try {
        NkTable table = read_nk_file(path, clip ? NegativeK::clip_to_zero : NegativeK::refuse);
        std::string limits = "optical constants interpolated from " + path;
        for (const auto& note : table.notes)
            limits += "; " + note;
        return {tabulated_index(std::move(table)), std::nullopt, fs::path(path).filename().string(),
                limits};
    } catch (const InputError& e) {
        throw DataFileError(wk.text() + ": " + e.what());
    }
}

MixingRule mixing_rule(const toml::table& t, const Where& w) {
    const auto* n = t.get("mixing_rule");
    if (!n) return MixingRule::bruggeman;
    const Where wr = w.child(".mixing_rule", *n);
    const std::string r = lower(one_text(*n, wr, "\"bruggeman\""));
    if (r == "bruggeman") return MixingRule::bruggeman;
    if (r == "maxwell-garnett" || r == "maxwell_garnett") return MixingRule::maxwell_garnett;
    refuse(wr, "cannot use '" + r + "': unknown rule. Accepted: bruggeman, maxwell-garnett");
}

void read_materials(const toml::node& node, const Where& w0, const std::string& base,
                    std::vector<SweepMaterial>& out) {
    const auto* arr = node.as_array();
    if (!arr || !arr->is_array_of_tables())
        refuse(w0, "must be tables: write each material as [[material]] with its keys");
    for (std::size_t i = 0; i < arr->size(); ++i) {
        const toml::table& t = *arr->get(i)->as_table();
        const Where w = w0.child("[" + std::to_string(i + 1) + "]", t);
        check_keys(t, w,
                   {"label", "name", "index", "nk", "mixture", "density", "porosity", "mixing_rule",
                    "clip_negative_k"});
        auto at = [&](const char* k) { return w.child(std::string(".") + k, *t.get(k)); };
        bool clip = false;
        if (const auto* n = t.get("clip_negative_k")) {
            if (!n->is_boolean())
                refuse(at("clip_negative_k"),
                       "cannot use " + type_name(*n) + ". Accepted: true, false");
            clip = n->as_boolean()->get();
        }
        const MixingRule rule = mixing_rule(t, w);
        Source src;
        if (const auto* n = t.get("mixture")) {
            const Where wm = at("mixture");
            const auto* parts = n->as_array();
            if (!parts || parts->size() < 2 || !parts->is_array_of_tables())
                refuse(wm, "a mixture is a list of two or more tables, e.g. [{ name = \"ice\", "
                           "fraction = 0.7 }, { name = \"carbon\", fraction = 0.3 }]");
            std::vector<MixtureComponent> comps;
            double mass = 0.0;
            bool all_densities = true;
            std::string label;
            for (std::size_t j = 0; j < parts->size(); ++j) {
                const toml::table& c = *parts->get(j)->as_table();
                const Where wc = wm.child("[" + std::to_string(j + 1) + "]", c);
                check_keys(c, wc, {"name", "index", "nk", "fraction", "density"});
                if (c.contains("mixture")) refuse(wc, "a mixture cannot contain a mixture");
                if (!c.contains("fraction"))
                    refuse(wc, "each component needs its volume fraction, e.g. fraction = 0.3");
                const double f =
                    bounded(*c.get("fraction"), wc.child(".fraction", *c.get("fraction")), 0.0,
                            false, 1.0, false, "a number in [0, 1]");
                Source cs = read_source(c, wc, base, clip);
                if (const auto* d = c.get("density")) {
                    const Where wd = wc.child(".density", *d);
                    cs.density =
                        parse_quantity<MassDensity>(one_text(*d, wd, "\"3 g/cm3\""), wd.text());
                }
                if (cs.density)
                    mass += f * cs.density->value();
                else
                    all_densities = false;
                comps.push_back({cs.optics, f});
                label += (label.empty() ? "" : "+") + cs.label;
                if (!cs.limits.empty()) src.limits += (src.limits.empty() ? "" : "; ") + cs.limits;
            }
            try {
                src.optics = mixture(std::move(comps), rule);
            } catch (const InputError& e) {
                refuse(wm, e.what());
            }
            if (all_densities) src.density = MassDensity::from_value(mass);
            src.label = label;
        } else {
            src = read_source(t, w, base, clip);
        }
        if (const auto* n = t.get("density")) {
            const Where wd = at("density");
            src.density = parse_quantity<MassDensity>(one_text(*n, wd, "\"3.3 g/cm3\""), wd.text());
        }
        if (!src.density)
            refuse(w, "no density: optical constants from index, nk (or a mixture with a "
                      "component of unknown density) carry none; add density = \"3.3 g/cm3\"");
        std::string label = src.label;
        if (const auto* n = t.get("label"))
            label = one_text(*n, at("label"), "\"porous silicate\"");
        std::vector<double> porosities{0.0};
        if (const auto* n = t.get("porosity"))
            porosities = numbers(*n, at("porosity"), 0.0, false, 1.0, true,
                                 "a number in [0, 1) or a list of them, e.g. [0, 0.3, 0.6]");
        for (double p : porosities) {
            SweepMaterial m;
            m.label = label;
            m.porosity = p;
            m.optics.core = p > 0.0 ? with_porosity(src.optics, p, rule) : src.optics;
            m.density = MassDensity::from_value(src.density->value() * (1.0 - p));
            m.description =
                src.label + (p > 0.0 ? ", porosity " + sweep_number(p) +
                                           (rule == MixingRule::bruggeman ? " (bruggeman)"
                                                                          : " (maxwell-garnett)")
                                     : "");
            m.limits = src.limits;
            out.push_back(std::move(m));
        }
    }
}

// ---- orbits
// ----------------------------------------------------------------------------------------

double release_anomaly_rad(const toml::node& n, const Where& w) {
    const std::string accepted =
        "\"pericentre\", \"apocentre\", or a true anomaly in degrees from -360 to 360, e.g. 90";
    double deg = 0.0;
    if (const auto* s = n.as_string()) {
        const std::string t = lower(s->get());
        if (t == "pericentre" || t == "pericenter") return 0.0;
        if (t == "apocentre" || t == "apocenter") return std::numbers::pi;
        std::string num = t;
        if (num.size() > 3 && num.compare(num.size() - 3, 3, "deg") == 0)
            num = num.substr(0, num.size() - 3);
        try {
            deg = parse_number(num, w.text());
        } catch (const InputError&) {
            refuse(w, "cannot use '" + s->get() +
                          "': not a place on the orbit. Accepted: " + accepted);
        }
    } else {
        deg = number(n, w);
    }
    if (!(deg >= -360.0 && deg <= 360.0))
        refuse(w, "cannot use " + sweep_number(deg) + ": out of range. Accepted: " + accepted);
    return deg * std::numbers::pi / 180.0;
}

void read_orbits(const toml::node& node, const Where& w0, std::vector<ReleasePoint>& out) {
    const auto* arr = node.as_array();
    if (!arr || !arr->is_array_of_tables())
        refuse(w0, "must be tables: write each parent orbit as [[orbit]] with its keys");
    for (std::size_t i = 0; i < arr->size(); ++i) {
        const toml::table& t = *arr->get(i)->as_table();
        const Where w = w0.child("[" + std::to_string(i + 1) + "]", t);
        check_keys(t, w, {"eccentricity", "release"});
        std::vector<double> es{0.0};
        if (const auto* n = t.get("eccentricity"))
            es = numbers(*n, w.child(".eccentricity", *n), 0.0, false, 1.0, true,
                         "a number in [0, 1) or a list of them");
        double f = 0.0;
        if (const auto* n = t.get("release")) f = release_anomaly_rad(*n, w.child(".release", *n));
        for (double e : es)
            out.push_back({e, f});
    }
}

std::vector<SweepQuantity> read_quantities(const toml::node& n, const Where& w) {
    static const SweepQuantity all[] = {SweepQuantity::qpr_mean,      SweepQuantity::qabs_mean,
                                        SweepQuantity::beta,          SweepQuantity::bound,
                                        SweepQuantity::blowout_radii, SweepQuantity::temperature,
                                        SweepQuantity::pr_drag_time};
    std::string accepted;
    for (auto q : all)
        accepted += (accepted.empty() ? "" : ", ") + sweep_quantity_name(q);
    std::vector<SweepQuantity> out;
    for (const auto& [text, wt] : texts(n, w, true, "[\"beta\", \"qpr_mean\"]")) {
        const auto it = std::find_if(std::begin(all), std::end(all), [&](SweepQuantity q) {
            return sweep_quantity_name(q) == text;
        });
        if (it == std::end(all))
            refuse(wt, "cannot use '" + text + "': unknown quantity. Accepted: " + accepted);
        if (std::find(out.begin(), out.end(), *it) != out.end())
            refuse(wt, "'" + text + "' is listed twice");
        out.push_back(*it);
    }
    return out;
}

} // namespace

std::string sweep_quantity_name(SweepQuantity q) {
    switch (q) {
    case SweepQuantity::qpr_mean:
        return "qpr_mean";
    case SweepQuantity::qabs_mean:
        return "qabs_mean";
    case SweepQuantity::beta:
        return "beta";
    case SweepQuantity::bound:
        return "bound";
    case SweepQuantity::blowout_radii:
        return "blowout_radii";
    case SweepQuantity::temperature:
        return "temperature";
    case SweepQuantity::pr_drag_time:
        return "pr_drag_time";
    }
    throw InternalError("unknown sweep quantity");
}

bool sweep_quantity_needs_orbit(SweepQuantity q) {
    return q == SweepQuantity::bound || q == SweepQuantity::blowout_radii;
}
bool sweep_quantity_needs_distance(SweepQuantity q) {
    return q == SweepQuantity::temperature || q == SweepQuantity::pr_drag_time;
}

SweepSpec parse_sweep_spec(std::string_view toml_text, const std::string& source_name,
                           const std::string& base_folder) {
    toml::table root;
    try {
        root = toml::parse(toml_text, source_name);
    } catch (const toml::parse_error& e) {
        throw InputError(source_name + ":" + std::to_string(e.source().begin.line) +
                         ": not valid TOML: " + std::string(e.description()));
    }
    SweepSpec spec;
    spec.source_name = source_name;
    const Where top{&spec.source_name, "", 1};
    check_keys(root, top,
               {"quantities", "radii", "points", "distances", "distance_points",
                "spectral_tolerance", "out_of_band", "star", "material", "orbit"});
    auto at = [&](const char* k) { return top.child(k, *root.get(k)); };
    auto missing = [&](const std::string& what) { throw InputError(source_name + ": " + what); };

    spec.quantities = {SweepQuantity::qpr_mean, SweepQuantity::beta};
    if (const auto* n = root.get("quantities"))
        spec.quantities = read_quantities(*n, at("quantities"));
    for (auto q : spec.quantities) {
        spec.has_orbit_axis = spec.has_orbit_axis || sweep_quantity_needs_orbit(q);
        spec.has_distance_axis = spec.has_distance_axis || sweep_quantity_needs_distance(q);
    }

    if (const auto* n = root.get("spectral_tolerance"))
        spec.settings.spectral.relative_tolerance = bounded(
            *n, at("spectral_tolerance"), 1e-10, false, 1e-2, false, "a number in [1e-10, 1e-2]");
    else
        spec.settings.spectral.relative_tolerance = 1e-5; // as the grain subcommands
    if (const auto* n = root.get("out_of_band")) {
        const Where wo = at("out_of_band");
        spec.settings.out_of_band = parse_out_of_band(one_text(*n, wo, "\"refuse\""), wo.text());
    }

    int points = 200;
    if (const auto* n = root.get("points")) points = integer(*n, at("points"), 2, 100000);
    const auto* radii = root.get("radii");
    if (!radii)
        missing("the key 'radii' is missing: give the grain radii, e.g. radii = \"0.01um..1mm\"");
    spec.radii_um = values_si(*radii, at("radii"), dims::length, points, "\"0.01um..1mm\"");
    for (double& r : spec.radii_um)
        r *= 1e6;
    if (spec.radii_um.size() < 2 &&
        std::find(spec.quantities.begin(), spec.quantities.end(), SweepQuantity::blowout_radii) !=
            spec.quantities.end())
        refuse(at("radii"), "blowout_radii needs at least two radii to scan");

    int distance_points = 20;
    if (const auto* n = root.get("distance_points"))
        distance_points = integer(*n, at("distance_points"), 2, 100000);
    if (const auto* n = root.get("distances")) {
        if (!spec.has_distance_axis)
            refuse(at("distances"), "no quantity depends on the distance: add temperature or "
                                    "pr_drag_time to quantities, or remove distances");
        spec.distances_m =
            values_si(*n, at("distances"), dims::length, distance_points, "\"1au..100au\"");
    } else if (spec.has_distance_axis) {
        missing("temperature and pr_drag_time need distances, e.g. distances = \"1au..100au\"");
    }

    const auto* stars = root.get("star");
    if (!stars) missing("no [[star]] table: add one, e.g. [[star]] with preset = \"sun\"");
    read_stars(*stars, at("star"), base_folder, spec.stars);
    const auto* materials = root.get("material");
    if (!materials)
        missing("no [[material]] table: add one, e.g. [[material]] with name = \"silicate\"");
    read_materials(*materials, at("material"), base_folder, spec.materials);
    if (const auto* n = root.get("orbit")) {
        if (!spec.has_orbit_axis)
            refuse(at("orbit"), "no quantity depends on the parent orbit: add bound or "
                                "blowout_radii to quantities, or remove the [[orbit]] tables");
        read_orbits(*n, at("orbit"), spec.orbits);
    } else {
        spec.orbits.push_back({}); // circular, released anywhere: beta_crit = 1/2
    }
    if (!spec.has_orbit_axis) spec.orbits.resize(1);

    // Temperatures need distances outside every star.
    for (double d : spec.distances_m)
        for (const auto& s : spec.stars)
            if (d <= s.star.radius.value())
                refuse(at("distances"),
                       "cannot use " + sweep_number(d / constants::au_m) +
                           " au: inside the star '" + s.label + "' (radius " +
                           sweep_number(in_astronomical_units(s.star.radius)) +
                           " au). Accepted: distances larger than every stellar radius");
    if (!spec.has_distance_axis) spec.distances_m.clear();
    return spec;
}

std::string read_text_file(const std::string& path) {
    std::ifstream in(path, std::ios::binary);
    if (!in) throw InputError(path + ": cannot read the file");
    std::ostringstream s;
    s << in.rdbuf();
    return s.str();
}

SweepSpec read_sweep_spec(const std::string& path) {
    std::error_code ec;
    if (!fs::is_regular_file(path, ec))
        throw InputError(path + ": no such sweep file. Accepted: the path of a readable TOML file");
    return parse_sweep_spec(read_text_file(path), path, fs::path(path).parent_path().string());
}

} // namespace holdfast
