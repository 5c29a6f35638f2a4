#include "grain_options.hpp"

#include <algorithm>
#include <charconv>
#include <cmath>
#include <filesystem>
#include <numbers>
#include <thread>

#include <fmt/format.h>

#include "holdfast/errors.hpp"
#include "holdfast/parse.hpp"

namespace holdfast::cli {
namespace {

std::string lower(std::string s) {
    std::transform(s.begin(), s.end(), s.begin(),
                   [](unsigned char c) { return static_cast<char>(std::tolower(c)); });
    return s;
}

[[noreturn]] void refuse(const std::string& option, const std::string& text, const std::string& why,
                         const std::string& accepted) {
    throw InputError(
        fmt::format("{}: cannot use '{}': {}. Accepted: {}", option, text, why, accepted));
}

void require_file(const std::string& option, const std::string& path) {
    namespace fs = std::filesystem;
    std::error_code ec;
    if (!fs::exists(path, ec)) refuse(option, path, "no such file", "the path of a readable file");
    if (fs::is_directory(path, ec))
        refuse(option, path, "that is a folder", "the path of a readable file");
}

// A plain number within [low, high] (or (low, ...) when low_open).
double bounded_number(const std::string& text, const std::string& option, double low, bool low_open,
                      double high, bool high_open, const std::string& accepted) {
    const double v = parse_number(text, option);
    const bool above = low_open ? v > low : v >= low;
    const bool below = high_open ? v < high : v <= high;
    if (!above || !below) refuse(option, text, "out of range", accepted);
    return v;
}

std::string format_index(std::complex<double> m) {
    return fmt::format("{:.6g}{:+.6g}i", m.real(), m.imag());
}

} // namespace

// ---- star -----------------------------------------------------------------------------------

void add_star_options(CLI::App& app, StarOptions& o) {
    app.add_option("--star", o.star,
                   "A named star: 'sun' (IAU 2015 nominal values, Planck spectrum at 5772 K). "
                   "The default unless --luminosity/--mass/--teff/--star-radius are given");
    add_quantity_option(&app, "--luminosity", o.luminosity,
                        "Stellar luminosity, e.g. 2.5 Lsun, 1e34 W", "QUANTITY");
    add_quantity_option(&app, "--mass", o.mass,
                        "Stellar mass, e.g. 1.6 Msun (needed for a custom star)", "QUANTITY");
    add_quantity_option(&app, "--teff", o.teff, "Effective temperature, e.g. 8000 K", "QUANTITY");
    add_quantity_option(&app, "--star-radius", o.radius,
                        "Stellar radius, e.g. 1.8 Rsun. Of --luminosity, --teff, --star-radius "
                        "give two (the third follows from Stefan-Boltzmann) or three that agree "
                        "within 1%",
                        "QUANTITY");
    app.add_option("--spectrum", o.spectrum,
                   "Tabulated stellar spectrum: two columns, wavelength in um and F_lambda (any "
                   "unit; scaled to the luminosity). Default: a Planck curve at T_eff");
}

ResolvedStar resolve_star(const StarOptions& o) {
    ResolvedStar out;
    const std::string luminosity = text_of(o.luminosity), mass = text_of(o.mass),
                      teff = text_of(o.teff), radius = text_of(o.radius);
    const bool custom = !luminosity.empty() || !mass.empty() || !teff.empty() || !radius.empty();
    if (!o.star.empty()) {
        if (lower(o.star) != "sun")
            refuse("--star", o.star, "unknown star",
                   "'sun', or a custom star from --mass with two of --luminosity, --teff, "
                   "--star-radius");
        if (custom)
            throw InputError("--star: cannot combine '" + o.star +
                             "' with --luminosity, --mass, --teff or --star-radius: give either "
                             "a named star or the custom star's values");
    }
    if (custom) {
        StarInputs in;
        if (!luminosity.empty()) in.luminosity = parse_quantity<Power>(luminosity, "--luminosity");
        if (!mass.empty()) in.mass = parse_quantity<Mass>(mass, "--mass");
        if (!teff.empty()) in.teff = parse_quantity<Temperature>(teff, "--teff");
        if (!radius.empty()) in.radius = parse_quantity<Length>(radius, "--star-radius");
        out.star = custom_star(in);
    } else {
        out.star = sun();
    }
    out.spectrum_assumption = "Stellar spectrum: a Planck curve at T_eff (no lines, no limb "
                              "darkening); the star is a uniformly bright disc";
    if (!o.spectrum.empty()) {
        require_file("--spectrum", o.spectrum);
        try {
            out.star.spectrum = read_spectrum_file(o.spectrum);
        } catch (const DataFileError& e) {
            throw DataFileError(std::string("--spectrum: ") + e.what());
        }
        const double missed = blackbody_flux_fraction_outside(
            out.star.spectrum->min_wavelength_um(), out.star.spectrum->max_wavelength_um(),
            out.star.teff.value());
        if (missed > 0.01)
            out.warnings.push_back(fmt::format(
                "--spectrum: the file covers {:.4g}-{:.4g} um, which misses {:.1f}% of a "
                "blackbody's flux at T_eff = {:.0f} K; the means use only the tabulated part",
                out.star.spectrum->min_wavelength_um(), out.star.spectrum->max_wavelength_um(),
                100.0 * missed, out.star.teff.value()));
        out.spectrum_assumption = "Stellar spectrum: tabulated from " + o.spectrum +
                                  ", scaled to the luminosity (zero outside the table)";
    }
    const Star& s = out.star;
    out.parameters.push_back(text_entry("star", "star", s.name));
    out.parameters.push_back(number_entry(
        "luminosity", {{"luminosity_Lsun", in_solar_luminosities(s.luminosity), "Lsun"},
                       {"luminosity_W", s.luminosity.value(), "W"}}));
    out.parameters.push_back(
        number_entry("stellar mass", {{"star_mass_Msun", in_solar_masses(s.mass), "Msun"}}));
    out.parameters.push_back(
        number_entry("effective temperature", {{"teff_K", s.teff.value(), "K"}}));
    out.parameters.push_back(
        number_entry("stellar radius", {{"star_radius_Rsun", in_solar_radii(s.radius), "Rsun"}}));
    out.parameters.push_back(text_entry("spectrum", "spectrum", s.spectrum->describe()));
    return out;
}

// ---- material ---------------------------------------------------------------------------------

void add_material_options(CLI::App& app, MaterialOptions& o) {
    app.add_option("--material", o.material,
                   "A shipped material (see 'holdfast materials'); default 'silicate'");
    app.add_option("--index", o.index,
                   "A constant refractive index n+ki instead, e.g. '1.7+0.03i' (needs --density)");
    app.add_option("--nk", o.nk,
                   "Optical constants from a file instead: columns wavelength_um n k (.txt) or a "
                   "refractiveindex.info .yml entry (needs --density)");
    app.add_flag("--clip-negative-k", o.clip_negative_k,
                 "Accept rows of the --nk file with k < 0 (measurement noise in some published "
                 "tables) by setting k = 0 there; without it such a file is refused");
    app.add_option("--out-of-band", o.out_of_band,
                   "Where the optical constants do not cover the spectrum's band: 'refuse' "
                   "(default), 'hold' (use the end values) or 'limit-band' (integrate only "
                   "where they are defined)")
        ->default_val("refuse");
    add_quantity_option(&app, "--density", o.density,
                        "Bulk density of the solid grain material, e.g. 3.3 g/cm3 (default: the "
                        "material's)",
                        "QUANTITY");
    app.add_option("--porosity", o.porosity,
                   "Volume fraction of vacuum in the grain, in [0, 1); the optics follow from "
                   "an effective-medium rule and the density is scaled by (1 - P)")
        ->default_val("0");
    app.add_option("--mixing-rule", o.mixing_rule,
                   "Effective-medium rule for porosity: 'bruggeman' (default) or "
                   "'maxwell-garnett' (vacuum inclusions in the solid)")
        ->default_val("bruggeman");
    app.add_option("--mantle-material", o.mantle_material,
                   "A coated grain: shipped material of the mantle around the core");
    app.add_option("--mantle-index", o.mantle_index,
                   "A coated grain: constant refractive index of the mantle, e.g. '1.31+1e-4i'");
    add_quantity_option(&app, "--mantle-density", o.mantle_density,
                        "Density of the mantle material (default: the mantle material's)",
                        "QUANTITY");
    app.add_option("--core-fraction", o.core_fraction,
                   "A coated grain: core radius / grain radius, in (0, 1]");
}

namespace {

struct Component {
    std::shared_ptr<const OpticalConstants> optics;
    std::optional<MassDensity> density;
    std::string name;
    std::string limits;
};

Component shipped(const std::string& name, const std::string& option) {
    try {
        const Material m = shipped_material(name);
        return {m.optics, m.density, m.name, m.limits};
    } catch (const InputError& e) {
        throw InputError(option + ": " + e.what());
    }
}

} // namespace

ResolvedMaterial resolve_material(const MaterialOptions& o) {
    ResolvedMaterial out;
    const int sources = int(!o.material.empty()) + int(!o.index.empty()) + int(!o.nk.empty());
    if (sources > 1)
        throw InputError("--material, --index and --nk each give the grain's optical constants: "
                         "use only one of them");
    Component core;
    if (!o.index.empty()) {
        const auto m = parse_refractive_index(o.index, "--index");
        core = {constant_index(m), std::nullopt, "index " + format_index(m),
                "constant index " + format_index(m) + " at all wavelengths"};
    } else if (!o.nk.empty()) {
        require_file("--nk", o.nk);
        std::vector<std::string> nk_notes;
        try {
            NkTable table =
                read_nk_file(o.nk, o.clip_negative_k ? NegativeK::clip_to_zero : NegativeK::refuse);
            nk_notes = table.notes; // e.g. how many k < 0 rows were clipped
            core.optics = tabulated_index(std::move(table));
        } catch (const InputError& e) {
            throw DataFileError(std::string("--nk: ") + e.what());
        }
        core.name = "optical constants from " + o.nk;
        core.limits = "optical constants interpolated from " + o.nk;
        for (const auto& note : nk_notes)
            core.limits += "; " + note;
    } else {
        core = shipped(o.material.empty() ? "silicate" : o.material, "--material");
    }

    out.out_of_band = parse_out_of_band(o.out_of_band, "--out-of-band");
    const std::string rule_text = lower(o.mixing_rule);
    MixingRule rule;
    if (rule_text == "bruggeman")
        rule = MixingRule::bruggeman;
    else if (rule_text == "maxwell-garnett" || rule_text == "maxwell_garnett")
        rule = MixingRule::maxwell_garnett;
    else
        refuse("--mixing-rule", o.mixing_rule, "unknown rule", "bruggeman, maxwell-garnett");
    const double porosity = bounded_number(o.porosity, "--porosity", 0.0, false, 1.0, true,
                                           "a number in [0, 1), e.g. 0.5 for half vacuum");

    // Density of the solid: --density, else the material's.
    std::optional<MassDensity> density = core.density;
    const std::string density_text = text_of(o.density);
    const std::string mantle_density_text = text_of(o.mantle_density);
    if (!density_text.empty()) density = parse_quantity<MassDensity>(density_text, "--density");

    // Mantle.
    const bool has_mantle = !o.mantle_material.empty() || !o.mantle_index.empty();
    if (!o.mantle_material.empty() && !o.mantle_index.empty())
        throw InputError("--mantle-material and --mantle-index both give the mantle's optical "
                         "constants: use only one of them");
    if (!has_mantle && !o.core_fraction.empty())
        throw InputError("--core-fraction: a core fraction needs a mantle: add "
                         "--mantle-material or --mantle-index");
    if (!has_mantle && !mantle_density_text.empty())
        throw InputError("--mantle-density: there is no mantle: add --mantle-material or "
                         "--mantle-index");
    Component mantle;
    double fraction = 1.0;
    if (has_mantle) {
        if (o.core_fraction.empty())
            throw InputError("--core-fraction: a coated grain needs the core's radius as a "
                             "fraction of the grain's radius, in (0, 1]");
        fraction = bounded_number(o.core_fraction, "--core-fraction", 0.0, true, 1.0, false,
                                  "a number in (0, 1]: core radius / grain radius");
        if (!o.mantle_index.empty()) {
            const auto m = parse_refractive_index(o.mantle_index, "--mantle-index");
            mantle = {constant_index(m), std::nullopt, "index " + format_index(m),
                      "mantle: constant index " + format_index(m) + " at all wavelengths"};
        } else {
            mantle = shipped(o.mantle_material, "--mantle-material");
        }
        if (!mantle_density_text.empty())
            mantle.density = parse_quantity<MassDensity>(mantle_density_text, "--mantle-density");
        if (density_text.empty()) {
            if (!core.density)
                throw InputError("--density: the core material has no known density; give "
                                 "--density (of the whole solid grain)");
            if (!mantle.density)
                throw InputError("--mantle-density: the mantle material has no known "
                                 "density; give --mantle-density or --density");
            // Volume-weighted: the core fills f^3 of the sphere.
            const double f3 = fraction * fraction * fraction;
            density = MassDensity::from_value(core.density->value() * f3 +
                                              mantle.density->value() * (1.0 - f3));
        }
    }
    if (!density)
        throw InputError("--density: optical constants from --index or --nk carry no density; "
                         "give one, e.g. --density '3.3 g/cm3'");

    GrainOptics optics;
    optics.core = core.optics;
    if (has_mantle) {
        optics.mantle = mantle.optics;
        optics.core_radius_fraction = fraction;
    }
    if (porosity > 0.0) {
        optics.core = with_porosity(optics.core, porosity, rule);
        if (optics.mantle) optics.mantle = with_porosity(optics.mantle, porosity, rule);
    }
    out.optics = optics;
    out.density = MassDensity::from_value(density->value() * (1.0 - porosity));

    out.description = core.name;
    if (has_mantle)
        out.description +=
            fmt::format(" core ({:.3g} of the radius) in a {} mantle", fraction, mantle.name);
    if (porosity > 0.0)
        out.description += fmt::format(", porosity {:.3g} ({})", porosity, rule_text);
    out.parameters.push_back(text_entry("material", "material", out.description));
    out.parameters.push_back(number_entry(
        "grain density", {{"grain_density_g_cm3", in_g_per_cm3(out.density), "g/cm3"}}));
    out.parameters.push_back(number_entry("porosity", {{"porosity", porosity, ""}}));
    if (has_mantle)
        out.parameters.push_back(
            number_entry("core radius fraction", {{"core_radius_fraction", fraction, ""}}));
    out.parameters.push_back(
        text_entry("out-of-band choice", "out_of_band", out_of_band_name(out.out_of_band)));
    if (!core.limits.empty()) out.assumptions.push_back(core.limits);
    if (has_mantle && !mantle.limits.empty()) out.assumptions.push_back(mantle.limits);
    return out;
}

// ---- efficiencies -------------------------------------------------------------------------------

void add_efficiency_options(CLI::App& app, EfficiencyOptions& o, const std::string& constant_option,
                            const std::string& constant_help) {
    app.add_option(constant_option, o.constant, constant_help);
    app.add_option("--spectral-tolerance", o.spectral_tolerance,
                   "Relative tolerance of the spectral averages' quadrature, in [1e-10, 1e-2]; "
                   "default 1e-5 (<Q_pr> is then good to 1e-4 or better, see README)")
        ->default_val("1e-5");
}

std::optional<double> parse_constant_efficiency(const EfficiencyOptions& o,
                                                const std::string& constant_option) {
    if (o.constant.empty()) return std::nullopt;
    return bounded_number(o.constant, constant_option, 0.0, true, 10.0, false,
                          "a number in (0, 10], e.g. 1 for a perfect absorber");
}

GrainEfficiencySettings parse_efficiency_settings(const EfficiencyOptions& o,
                                                  OutOfBand out_of_band) {
    GrainEfficiencySettings s;
    s.spectral.relative_tolerance =
        bounded_number(o.spectral_tolerance, "--spectral-tolerance", 1e-10, false, 1e-2, false,
                       "a number in [1e-10, 1e-2]");
    s.out_of_band = out_of_band;
    return s;
}

// ---- radii ------------------------------------------------------------------------------------

void add_radii_options(CLI::App& app, RadiiOptions& o) {
    add_quantity_option(&app, "--radii", o.radii,
                        "Grain radii (not diameters): a range low..high sampled log-spaced, a "
                        "list a,b,c or one value; default 0.01um..1mm",
                        "RANGE");
    app.add_option("--points", o.points, "Number of log-spaced radii in a --radii range (>= 2)")
        ->default_val(200);
}

void add_threads_option(CLI::App& app, std::string& threads, const std::string& what) {
    app.add_option("--threads", threads, "Threads; default 0, one per core. " + what)
        ->default_val("0");
}

unsigned resolve_threads(const std::string& text) {
    unsigned n = 0;
    const char* end = text.data() + text.size();
    const auto [ptr, ec] = std::from_chars(text.data(), end, n);
    if (ec != std::errc() || ptr != end || text.empty() || n > 1024)
        throw InputError("--threads: cannot use '" + text +
                         "'. Accepted: a whole number from 1 to 1024, or 0 for one per core");
    return n ? n : std::max(1u, std::thread::hardware_concurrency());
}

std::string radii_text(const RadiiOptions& o) { return text_of(o.radii, "0.01um..1mm"); }

std::vector<double> parse_radii_um(const RadiiOptions& o) {
    if (o.points < 2 || o.points > 100000)
        refuse("--points", std::to_string(o.points), "out of range", "an integer from 2 to 100000");
    std::vector<double> v = parse_values_si(radii_text(o), dims::length, "--radii", o.points);
    for (double& r : v)
        r *= 1e6;
    std::sort(v.begin(), v.end());
    v.erase(std::unique(v.begin(), v.end()), v.end());
    return v;
}

// ---- orbit
// ----------------------------------------------------------------------------------------

void add_orbit_options(CLI::App& app, OrbitOptions& o, bool with_distance) {
    app.add_option("--eccentricity", o.eccentricity,
                   "Eccentricity of the parent body's orbit, in [0, 1); default 0")
        ->default_val("0");
    app.add_option("--release", o.release,
                   "Where on its orbit the parent releases grains: 'pericentre' (default), "
                   "'apocentre', or the true anomaly in degrees, e.g. 90")
        ->default_val("pericentre");
    if (with_distance)
        add_quantity_option(&app, "--distance", o.distance,
                            "Star-parent distance at release (the orbit's radius for a circular "
                            "parent), e.g. 40 au: gives the released grains' orbits and drag "
                            "times",
                            "QUANTITY");
}

ReleasePoint parse_release_point(const OrbitOptions& o) {
    ReleasePoint r;
    r.eccentricity = bounded_number(o.eccentricity, "--eccentricity", 0.0, false, 1.0, true,
                                    "a number in [0, 1): 0 circular, 0.9 very elongated");
    const std::string t = lower(o.release);
    const std::string accepted =
        "'pericentre', 'apocentre', or a true anomaly in degrees from -360 to 360, e.g. 90";
    if (t == "pericentre" || t == "pericenter" || t == "periapsis" || t == "perihelion") {
        r.true_anomaly_rad = 0.0;
    } else if (t == "apocentre" || t == "apocenter" || t == "apoapsis" || t == "aphelion") {
        r.true_anomaly_rad = std::numbers::pi;
    } else {
        std::string number = o.release;
        for (const char* suffix : {"deg", "degrees", "degree"}) {
            const std::string s(suffix);
            if (t.size() > s.size() && t.compare(t.size() - s.size(), s.size(), s) == 0) {
                number = o.release.substr(0, o.release.size() - s.size());
                break;
            }
        }
        double deg = 0.0;
        try {
            deg = parse_number(number, "--release");
        } catch (const InputError&) {
            refuse("--release", o.release, "not a place on the orbit", accepted);
        }
        if (!(deg >= -360.0 && deg <= 360.0))
            refuse("--release", o.release, "the angle is out of range", accepted);
        r.true_anomaly_rad = deg * std::numbers::pi / 180.0;
    }
    return r;
}

std::optional<Length> parse_release_distance(const OrbitOptions& o) {
    const std::string text = text_of(o.distance);
    if (text.empty()) return std::nullopt;
    return parse_quantity<Length>(text, "--distance");
}

std::vector<Entry> orbit_parameters(const ReleasePoint& r, const std::optional<Length>& distance) {
    std::vector<Entry> e;
    e.push_back(number_entry("parent eccentricity", {{"parent_eccentricity", r.eccentricity, ""}}));
    e.push_back(number_entry(
        "release true anomaly",
        {{"release_true_anomaly_deg", r.true_anomaly_rad * 180.0 / std::numbers::pi, "deg"}}));
    if (distance) {
        e.push_back(number_entry(
            "release distance", {{"release_distance_au", in_astronomical_units(*distance), "au"}}));
        // The parent's orbit: r = a (1 - e^2) / (1 + e cos f).
        const double a = distance->value() * (1.0 + r.eccentricity * std::cos(r.true_anomaly_rad)) /
                         (1.0 - r.eccentricity * r.eccentricity);
        e.push_back(number_entry("parent semi-major axis",
                                 {{"parent_semi_major_axis_au", a / constants::au_m, "au"}}));
    }
    return e;
}

std::vector<std::string> grain_assumptions(bool constant_efficiency, const ResolvedStar& star,
                                           const ResolvedMaterial& material) {
    std::vector<std::string> a;
    if (constant_efficiency) {
        a.push_back("Efficiency held constant at the given value for every radius and wavelength "
                    "(a comparison model, not Mie theory)");
    } else {
        a.push_back(
            "Compact spheres (or a concentric core and mantle), Mie theory; in the spectral "
            "means above size parameter 1000 a sphere's Q comes from geometric optics with an "
            "edge correction fitted to averages of the series, a coated sphere's from averages "
            "of its series, within 1e-4 of the series in <Q_pr>");
        a.push_back("Porosity as vacuum inclusions through an effective-medium rule (valid for "
                    "inclusions much smaller than the wavelength)");
        for (const auto& l : material.assumptions)
            a.push_back(l);
    }
    a.push_back(star.spectrum_assumption);
    a.push_back("Radiation pressure from the star only: no stellar-wind drag, no charging or "
                "Lorentz forces, no planets; grain radius and material do not change");
    return a;
}

} // namespace holdfast::cli

namespace holdfast::cli {

BetaInputs resolve_beta_inputs(const StarOptions& star, const MaterialOptions& material,
                               const EfficiencyOptions& efficiency) {
    BetaInputs in;
    in.constant_qpr = parse_constant_efficiency(efficiency, "--qpr");
    in.star = resolve_star(star);
    in.material = resolve_material(material);
    const GrainEfficiencySettings settings =
        parse_efficiency_settings(efficiency, in.material.out_of_band);
    if (in.constant_qpr) {
        const double q = *in.constant_qpr;
        in.qpr_mean = [q](double) { return q; };
        in.qpr_curve = [q](std::span<const double> radii_um, unsigned, const std::atomic<bool>*) {
            return std::vector<double>(radii_um.size(), q);
        };
    } else {
        SpectralEfficiency e =
            starlight_qpr_mean(in.material.optics, in.star.star.spectrum, settings);
        in.qpr_mean = std::move(e.mean);
        in.qpr_curve = std::move(e.curve);
        if (!e.note.empty()) in.notes.push_back(e.note);
    }
    return in;
}

BetaGrid compute_beta_grid(const BetaModel& model, const BetaInputs& in,
                           const std::vector<double>& radii_um, unsigned threads) {
    BetaGrid g;
    g.radii_um = radii_um;
    g.qpr_mean = in.qpr_curve(radii_um, threads, nullptr);
    for (std::size_t i = 0; i < radii_um.size(); ++i) {
        BetaModel::check_qpr_mean(g.qpr_mean[i], radii_um[i]);
        g.beta.push_back(model.beta_from_qpr(g.qpr_mean[i], radii_um[i]));
    }
    return g;
}

} // namespace holdfast::cli
