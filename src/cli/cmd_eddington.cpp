// holdfast eddington: Eddington luminosity for an opacity, Eddington ratio of a luminosity or
// of a flux at a distance, minimum mass, Eddington accretion rate for an efficiency, a spin
// or a stellar radius, and the time an accretor needs to grow. The physics is in
// src/core/eddington.cpp; this file reads the options, checks them against each other and
// lays out the report.
#include <string>
#include <vector>

#include <fmt/format.h>

#include "commands.hpp"
#include "holdfast/eddington.hpp"
#include "holdfast/errors.hpp"
#include "holdfast/parse.hpp"

namespace holdfast::cli {
namespace {

struct EddingtonOptions {
    Words mass;
    Words hydrogen;
    Words opacity;
    Words gas_temperature;
    Words gas_density;
    Words luminosity;
    Words flux;
    Words distance;
    Words beaming;
    Words efficiency;
    Words spin;
    Words star_radius;
    Words eddington_ratio;
    Words final_mass;
};

struct Given {
    CLI::Option* hydrogen = nullptr;
    CLI::Option* opacity = nullptr;
    CLI::Option* gas_temperature = nullptr;
    CLI::Option* gas_density = nullptr;
    CLI::Option* luminosity = nullptr;
    CLI::Option* flux = nullptr;
    CLI::Option* distance = nullptr;
    CLI::Option* beaming = nullptr;
    CLI::Option* efficiency = nullptr;
    CLI::Option* spin = nullptr;
    CLI::Option* star_radius = nullptr;
    CLI::Option* final_mass = nullptr;
};

bool given(const CLI::Option* o) { return o != nullptr && o->count() > 0; }

// A plain number with a range; `lo_open`/`hi_open` exclude the ends.
double number_in_range(const std::string& text, const std::string& option, const char* what,
                       double lo, bool lo_open, double hi, bool hi_open) {
    const double v = parse_number(text, option);
    const bool ok_lo = lo_open ? v > lo : v >= lo;
    const bool ok_hi = hi_open ? v < hi : v <= hi;
    if (!(ok_lo && ok_hi)) {
        const std::string range =
            fmt::format("{}{}, {}{}", lo_open ? "(" : "[", lo, hi, hi_open ? ")" : "]");
        throw InputError(fmt::format("{}: cannot use '{}': the {} must lie in {}. Accepted: a "
                                     "number in {}",
                                     option, text, what, range, range));
    }
    return v;
}

double positive_number(const std::string& text, const std::string& option, const char* what) {
    const double v = parse_number(text, option);
    if (!(v > 0.0))
        throw InputError(fmt::format("{}: cannot use '{}': the {} must be greater than zero. "
                                     "Accepted: a positive number",
                                     option, text, what));
    return v;
}

Repr num(std::string key, double v, std::string unit) {
    return Repr{std::move(key), v, std::move(unit)};
}

// The options read into core quantities, with every cross-check that names options.
EddingtonInput read_input(const EddingtonOptions& o, const Given& g) {
    EddingtonInput in;
    in.mass = parse_quantity<Mass>(text_of(o.mass), "--mass");

    if (given(g.opacity)) {
        if (given(g.hydrogen))
            throw InputError("--hydrogen: cannot be combined with --opacity: --hydrogen sets the "
                             "electron-scattering opacity, --opacity replaces it. Accepted: one "
                             "of them");
        for (const auto* opt : {g.gas_temperature, g.gas_density})
            if (given(opt))
                throw InputError(opt->get_name() +
                                 ": cannot be combined with --opacity: the Paczynski reduction "
                                 "applies to electron scattering only. Accepted: leave out "
                                 "--opacity, or leave out " +
                                 opt->get_name());
        in.opacity = parse_quantity<MassOpacity>(text_of(o.opacity), "--opacity");
    } else {
        in.hydrogen_mass_fraction =
            number_in_range(text_of(o.hydrogen, "1"), "--hydrogen", "hydrogen mass fraction X", 0.0,
                            false, 1.0, false);
    }
    if (given(g.gas_density) && !given(g.gas_temperature))
        throw InputError("--gas-density: needs --gas-temperature (the Paczynski fit depends on "
                         "both). Accepted: --gas-temperature alone, or both");
    if (given(g.gas_temperature))
        in.gas_temperature =
            parse_quantity<Temperature>(text_of(o.gas_temperature), "--gas-temperature");
    if (given(g.gas_density))
        in.gas_density = parse_quantity<MassDensity>(text_of(o.gas_density), "--gas-density");

    if (given(g.luminosity) && given(g.flux))
        throw InputError("--luminosity and --flux: give one or the other, not both. Accepted: "
                         "--luminosity, or --flux with --distance");
    if (given(g.flux) && !given(g.distance))
        throw InputError("--flux: needs --distance to give a luminosity. Accepted: --flux with "
                         "--distance");
    if (given(g.distance) && !given(g.flux))
        throw InputError("--distance: is used only with --flux. Accepted: --flux with "
                         "--distance, or neither");
    if (given(g.beaming) && !given(g.flux))
        throw InputError("--beaming: is used only with --flux (it turns a flux into a "
                         "luminosity). Accepted: --beaming with --flux and --distance");
    if (given(g.luminosity))
        in.luminosity = parse_quantity<Power>(text_of(o.luminosity), "--luminosity");
    if (given(g.flux)) {
        in.flux = parse_quantity<EnergyFlux>(text_of(o.flux), "--flux");
        in.distance = parse_quantity<Length>(text_of(o.distance), "--distance");
        in.beaming = number_in_range(text_of(o.beaming, "1"), "--beaming", "beaming fraction", 0.0,
                                     true, 1.0, false);
        try {
            (void)luminosity_from_flux(*in.flux, *in.distance, in.beaming);
        } catch (const InputError& e) {
            throw InputError(std::string("--flux and --distance: ") + e.what());
        }
    }

    std::vector<std::string> eff_options;
    for (const auto* opt : {g.efficiency, g.spin, g.star_radius})
        if (given(opt)) eff_options.push_back(opt->get_name());
    if (eff_options.size() > 1) {
        std::string list = eff_options[0];
        for (std::size_t k = 1; k < eff_options.size(); ++k)
            list += (k + 1 == eff_options.size() ? " and " : ", ") + eff_options[k];
        throw InputError(list + ": cannot be combined: --efficiency, --spin and --star-radius "
                                "each set the efficiency. Accepted: at most one of them");
    }
    if (given(g.efficiency))
        in.efficiency = number_in_range(text_of(o.efficiency), "--efficiency", "efficiency", 0.0,
                                        true, 1.0, true);
    if (given(g.spin))
        in.spin = number_in_range(text_of(o.spin), "--spin", "spin a", -1.0, false, 1.0, false);
    if (given(g.star_radius)) {
        in.star_radius = parse_quantity<Length>(text_of(o.star_radius), "--star-radius");
        const Length rs = schwarzschild_radius(in.mass);
        if (!(*in.star_radius > rs))
            throw InputError(fmt::format(
                "--star-radius: cannot use '{}': it is not outside the Schwarzschild radius "
                "2GM/c^2 = {:.6g} km of --mass {}, so it cannot be a surface (and G M/(R c^2) "
                "would be 1/2 or more). Accepted: a radius greater than {:.6g} km",
                text_of(o.star_radius), rs.value() / 1e3, text_of(o.mass), rs.value() / 1e3));
    }

    in.eddington_ratio =
        positive_number(text_of(o.eddington_ratio, "1"), "--eddington-ratio", "Eddington ratio");
    if (given(g.final_mass)) {
        in.final_mass = parse_quantity<Mass>(text_of(o.final_mass), "--final-mass");
        if (*in.final_mass < in.mass)
            throw InputError(fmt::format("--final-mass: cannot use '{}': it is below --mass {}; "
                                         "growth cannot make an object lighter. Accepted: a mass "
                                         "at least --mass",
                                         text_of(o.final_mass), text_of(o.mass)));
    }
    return in;
}

std::vector<Repr> power_reprs(const std::string& key, Power p) {
    return {num(key + "_W", p.value(), "W"), num(key + "_erg_s", in_erg_per_second(p), "erg/s"),
            num(key + "_Lsun", in_solar_luminosities(p), "Lsun")};
}
std::vector<Repr> mass_reprs(const std::string& key, Mass m) {
    return {num(key + "_kg", m.value(), "kg"), num(key + "_Msun", in_solar_masses(m), "Msun")};
}
std::vector<Repr> opacity_reprs(const std::string& key, MassOpacity k) {
    return {num(key + "_m2_kg", k.value(), "m2/kg"), num(key + "_cm2_g", in_cm2_per_g(k), "cm2/g")};
}
std::vector<Repr> rate_reprs(const std::string& key, MassRate r) {
    return {num(key + "_kg_s", r.value(), "kg/s"), num(key + "_g_s", in_grams_per_second(r), "g/s"),
            num(key + "_Msun_yr", in_solar_masses_per_year(r), "Msun/yr")};
}
std::vector<Repr> time_reprs(const std::string& key, Time t) {
    return {num(key + "_s", t.value(), "s"), num(key + "_yr", in_julian_years(t), "yr"),
            num(key + "_Myr", in_julian_years(t) / 1e6, "Myr")};
}
std::vector<Repr> length_km_reprs(const std::string& key, Length l) {
    return {num(key + "_m", l.value(), "m"), num(key + "_km", l.value() / 1e3, "km")};
}

Report build_report(const EddingtonOptions& o, const Given& g, const EddingtonInput& in,
                    const EddingtonResult& r) {
    Report rep;
    rep.command = "eddington";
    auto& p = rep.parameters;
    p.push_back(number_entry("mass", mass_reprs("mass", in.mass)));
    if (r.opacity_source == OpacitySource::given) {
        p.push_back(text_entry("opacity model", "opacity_model", "given mass opacity"));
    } else {
        std::string model = fmt::format("electron scattering, X = {}{}", in.hydrogen_mass_fraction,
                                        given(g.hydrogen) ? "" : " (default)");
        if (r.opacity_factor)
            model += ", with the Klein-Nishina and degeneracy reduction of Paczynski (1983)";
        p.push_back(text_entry("opacity model", "opacity_model", model));
        p.push_back(number_entry("hydrogen mass fraction X",
                                 {num("hydrogen_mass_fraction", in.hydrogen_mass_fraction, "")}));
        if (in.gas_temperature)
            p.push_back(number_entry("gas temperature",
                                     {num("gas_temperature_K", in.gas_temperature->value(), "K")}));
        if (in.gas_density)
            p.push_back(number_entry(
                "gas density", {num("gas_density_kg_m3", in.gas_density->value(), "kg/m3"),
                                num("gas_density_g_cm3", in_g_per_cm3(*in.gas_density), "g/cm3")}));
    }
    if (in.luminosity)
        p.push_back(number_entry("luminosity", power_reprs("luminosity", *in.luminosity)));
    if (in.flux) {
        p.push_back(
            number_entry("flux", {num("flux_W_m2", in.flux->value(), "W/m2"),
                                  num("flux_erg_s_cm2", in.flux->value() * 1e3, "erg/s/cm2")}));
        p.push_back(number_entry(
            "distance", {num("distance_m", in.distance->value(), "m"),
                         num("distance_pc", in.distance->value() / constants::parsec_m, "pc")}));
        p.push_back(number_entry("beaming fraction", {num("beaming", in.beaming, "")}));
    }
    std::string eff_source;
    if (!r.efficiency_source) {
        eff_source = fmt::format("default {} (common practice; set it with --efficiency, --spin "
                                 "or --star-radius)",
                                 default_efficiency);
    } else if (*r.efficiency_source == EfficiencySource::given) {
        eff_source = "given (--efficiency)";
    } else if (*r.efficiency_source == EfficiencySource::spin) {
        eff_source = "black-hole spin: thin disc ending at the ISCO (Bardeen, Press & Teukolsky "
                     "1972)";
    } else {
        eff_source = "star radius: G M / (R c^2)";
    }
    p.push_back(text_entry("efficiency from", "efficiency_source", eff_source));
    if (in.spin) p.push_back(number_entry("spin a", {num("spin", *in.spin, "")}));
    if (in.star_radius)
        p.push_back(number_entry("star radius", length_km_reprs("star_radius", *in.star_radius)));
    p.push_back(number_entry("Eddington ratio for growth",
                             {num("growth_eddington_ratio", in.eddington_ratio, "")}));
    if (in.final_mass)
        p.push_back(number_entry("final mass", mass_reprs("final_mass", *in.final_mass)));

    auto& res = rep.results;
    res.push_back(number_entry("opacity", opacity_reprs("opacity", r.opacity)));
    if (r.thomson_opacity) {
        res.push_back(
            number_entry("Thomson opacity", opacity_reprs("thomson_opacity", *r.thomson_opacity)));
        res.push_back(number_entry("opacity / Thomson opacity",
                                   {num("opacity_reduction_factor", *r.opacity_factor, "")}));
    }
    res.push_back(number_entry("Eddington luminosity",
                               power_reprs("eddington_luminosity", r.eddington_luminosity)));
    if (r.luminosity) {
        if (r.luminosity_from_flux)
            res.push_back(
                number_entry("luminosity 4 pi d^2 F b", power_reprs("luminosity", *r.luminosity)));
        res.push_back(number_entry("Eddington ratio L / L_Edd",
                                   {num("eddington_ratio", *r.eddington_ratio, "")}));
        res.push_back(
            flag_entry("below the Eddington limit", "sub_eddington", *r.eddington_ratio < 1.0));
        res.push_back(number_entry("minimum mass for L <= L_Edd",
                                   mass_reprs("minimum_mass", *r.minimum_mass)));
    }
    res.push_back(number_entry("efficiency eta", {num("efficiency", r.efficiency, "")}));
    if (r.isco_radius) {
        auto reprs = length_km_reprs("isco_radius", *r.isco_radius);
        reprs.push_back(num("isco_radius_rg", *r.isco_radius_gravitational, "GM/c^2"));
        res.push_back(number_entry("ISCO radius", reprs));
    }
    if (r.schwarzschild_radius)
        res.push_back(
            number_entry("Schwarzschild radius",
                         length_km_reprs("schwarzschild_radius", *r.schwarzschild_radius)));
    res.push_back(number_entry("Eddington accretion rate L_Edd/(eta c^2)",
                               rate_reprs("eddington_accretion_rate", r.eddington_accretion_rate)));
    if (r.required_accretion_rate)
        res.push_back(
            number_entry("accretion rate for L, L/(eta c^2)",
                         rate_reprs("required_accretion_rate", *r.required_accretion_rate)));
    res.push_back(
        number_entry("e-folding (Salpeter) time", time_reprs("efolding_time", r.efolding_time)));
    if (r.growth_time)
        res.push_back(number_entry("growth time to the final mass",
                                   time_reprs("growth_time", *r.growth_time)));

    auto& a = rep.assumptions;
    a.push_back("Spherical symmetry: the limit is where the outward radiation force on the gas "
                "equals gravity everywhere, L_Edd = 4 pi G M c / kappa. Discs, outflows and "
                "beamed or anisotropic emission can exceed it.");
    if (r.opacity_source == OpacitySource::given) {
        a.push_back("Opacity: the given mass opacity, taken as gray and the same throughout "
                    "(for example a Rosseland or flux mean); it does not change with "
                    "temperature or density here.");
    } else {
        a.push_back("Opacity: scattering by free electrons in a fully ionised gas, kappa = "
                    "sigma_T (1 + X) / (2 m_p). X = 1 (pure hydrogen) is the usual value for "
                    "accretion; a solar mix is closer to X = 0.7. Any partially ionised gas, "
                    "line or bound-free opacity would lower L_Edd.");
        if (r.opacity_factor)
            a.push_back(std::string("Klein-Nishina and degeneracy reduction from Paczynski's "
                                    "(1983) fit, an approximation made for hot neutron-star "
                                    "envelopes, applied at one temperature and density as if "
                                    "they held throughout.") +
                        (in.gas_density ? ""
                                        : " No --gas-density: the low-density limit "
                                          "(Klein-Nishina term only)."));
        else
            a.push_back("Thomson regime: electrons non-relativistic (kT << 511 keV) and not "
                        "degenerate; give --gas-temperature (and --gas-density) to apply "
                        "Paczynski's (1983) Klein-Nishina and degeneracy reduction.");
    }
    if (r.luminosity_from_flux)
        a.push_back("Luminosity from flux: L = 4 pi d^2 F b, with F the bolometric flux and b "
                    "the fraction of the sphere the source shines into, d the luminosity "
                    "distance for a cosmological source; no extinction or bandpass correction.");
    std::string eff = "Efficiency eta: the fraction of the rest-mass inflow that is radiated, L "
                      "= eta Mdot c^2. ";
    if (!r.efficiency_source)
        eff += "Here the default 0.1, typical of radiatively efficient discs; it sets the "
               "accretion rates and growth times.";
    else if (*r.efficiency_source == EfficiencySource::spin)
        eff += "From the spin: a thin disc ending at the Kerr ISCO, nothing radiated from "
               "inside it (Bardeen, Press & Teukolsky 1972); photon capture limits real spins to "
               "about 0.998 (Thorne 1974).";
    else if (*r.efficiency_source == EfficiencySource::star_radius)
        eff += "From the star radius: the Newtonian G M / (R c^2) released at the surface, "
               "without relativistic or rotational corrections (which are of order eta itself "
               "for a neutron star).";
    else
        eff += "Here as given.";
    a.push_back(eff);
    a.push_back("Eddington accretion rate Mdot_Edd = L_Edd / (eta c^2), the inflow that "
                "radiates L_Edd (other authors use L_Edd / c^2 or 10 L_Edd / c^2).");
    a.push_back("Growth: the accretor keeps (1 - eta) of the inflow, dM/dt = (1 - eta) lambda "
                "L_Edd / (eta c^2), with eta, lambda and kappa fixed, so M grows as exp(t / t_e), "
                "t_e = eta / (1 - eta) kappa c / (4 pi G lambda) (Salpeter 1964); growth time = "
                "ln(M_final / M) t_e. No mergers; eta and kappa do not change as the mass grows.");
    if (in.eddington_ratio > 1.0)
        rep.warnings.push_back(fmt::format(
            "--eddington-ratio {} is above 1: the growth formula is extrapolated beyond the "
            "Eddington limit it assumes",
            text_of(o.eddington_ratio, "1")));
    if (r.eddington_ratio && *r.eddington_ratio > 1.0)
        rep.warnings.push_back(fmt::format("the luminosity exceeds the Eddington luminosity "
                                           "(ratio {:.4g}) for this mass and opacity",
                                           *r.eddington_ratio));
    return rep;
}

} // namespace

Command setup_eddington(CLI::App& app) {
    auto o = std::make_shared<EddingtonOptions>();
    auto g = std::make_shared<Given>();
    CLI::App* sub = app.add_subcommand(
        "eddington",
        "Eddington luminosity for an opacity, Eddington ratio of a luminosity or of a flux at "
        "a distance, minimum mass, Eddington accretion rate for an efficiency, spin or star "
        "radius, and the growth time of an accretor.");
    add_quantity_option(sub, "--mass", o->mass,
                        "Mass of the accreting or radiating object, with a unit (Msun, kg, g), "
                        "e.g. '10 Msun'. Required",
                        "MASS")
        ->required();
    g->hydrogen = add_quantity_option(sub, "--hydrogen", o->hydrogen,
                                      "Hydrogen mass fraction X in [0, 1] of the fully ionised gas "
                                      "for electron scattering, kappa = sigma_T (1+X)/(2 m_p). "
                                      "Default 1 (pure hydrogen, the usual value for accretion)",
                                      "X");
    g->opacity = add_quantity_option(sub, "--opacity", o->opacity,
                                     "Mass opacity to use instead of electron scattering, e.g. "
                                     "'0.34 cm2/g' or a Rosseland mean (cm2/g, m2/kg). Default: "
                                     "electron scattering",
                                     "OPACITY");
    g->gas_temperature =
        add_quantity_option(sub, "--gas-temperature", o->gas_temperature,
                            "Gas temperature (K) for the Klein-Nishina and degeneracy reduction of "
                            "electron scattering (Paczynski 1983). Default: none (Thomson regime)",
                            "TEMPERATURE");
    g->gas_density =
        add_quantity_option(sub, "--gas-density", o->gas_density,
                            "Gas density (g/cm3, kg/m3) for the degeneracy term of the same fit; "
                            "needs --gas-temperature. Default: none (low-density limit)",
                            "DENSITY");
    g->luminosity =
        add_quantity_option(sub, "--luminosity", o->luminosity,
                            "Luminosity of the source (erg/s, W, Lsun), for the "
                            "Eddington ratio, minimum mass and required accretion rate. "
                            "Default: none",
                            "LUMINOSITY");
    g->flux = add_quantity_option(sub, "--flux", o->flux,
                                  "Bolometric flux (erg/s/cm2, W/m2); with --distance gives the "
                                  "luminosity 4 pi d^2 F b instead of --luminosity. Default: none",
                                  "FLUX");
    g->distance = add_quantity_option(sub, "--distance", o->distance,
                                      "Distance to the source (pc, kpc, Mpc, m), used with --flux. "
                                      "Default: none",
                                      "DISTANCE");
    g->beaming =
        add_quantity_option(sub, "--beaming", o->beaming,
                            "Fraction b in (0, 1] of the sphere the source shines into, used with "
                            "--flux. Default 1 (isotropic)",
                            "B");
    g->efficiency = add_quantity_option(sub, "--efficiency", o->efficiency,
                                        "Radiative efficiency eta in (0, 1), L = eta Mdot c^2. "
                                        "Default 0.1 when none of --efficiency, --spin, "
                                        "--star-radius is given",
                                        "ETA");
    g->spin =
        add_quantity_option(sub, "--spin", o->spin,
                            "Black-hole spin a in [-1, 1] (negative: retrograde disc); sets "
                            "eta = 1 - E_isco (Bardeen, Press & Teukolsky 1972). Default: none",
                            "A");
    g->star_radius = add_quantity_option(sub, "--star-radius", o->star_radius,
                                         "Radius of an accretor with a surface (km, Rsun, m); sets "
                                         "eta = G M/(R c^2). Must exceed 2GM/c^2. Default: none",
                                         "RADIUS");
    add_quantity_option(sub, "--eddington-ratio", o->eddington_ratio,
                        "Eddington ratio lambda > 0 at which the object grows, for the e-folding "
                        "and growth times. Default 1",
                        "LAMBDA");
    g->final_mass = add_quantity_option(sub, "--final-mass", o->final_mass,
                                        "Mass to grow to (Msun, kg), at least --mass; gives the "
                                        "growth time. Default: none",
                                        "MASS");
    auto common = add_common_options(*sub);
    auto run = [o, g]() {
        const EddingtonInput in = read_input(*o, *g);
        const EddingtonResult r = eddington(in);
        return build_report(*o, *g, in, r);
    };
    return Command{sub, common, run};
}

} // namespace holdfast::cli
