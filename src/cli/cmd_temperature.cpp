// holdfast temperature: equilibrium temperature of a grain versus distance from the star,
// and the sublimation distance for a sublimation temperature.
#include <cmath>

#include <fmt/format.h>

#include "commands.hpp"
#include "grain_options.hpp"
#include "holdfast/errors.hpp"
#include "holdfast/grain.hpp"
#include "holdfast/parse.hpp"

namespace holdfast::cli {
namespace {

struct TemperatureOptions {
    StarOptions star;
    MaterialOptions material;
    EfficiencyOptions efficiency;
    Words grain_radius; // default 1 um
    Words distances;    // default 0.1au..100au
    int points = 50;
    Words sublimation_temperature;
};

Report run_temperature(const TemperatureOptions& o) {
    const std::optional<double> constant_qabs = parse_constant_efficiency(o.efficiency, "--qabs");
    const Length grain = parse_quantity<Length>(text_of(o.grain_radius, "1 um"), "--grain-radius");
    const std::string distances_text = text_of(o.distances, "0.1au..100au");
    if (o.points < 2 || o.points > 100000)
        throw InputError(fmt::format("--points: cannot use '{}': out of range. Accepted: an "
                                     "integer from 2 to 100000",
                                     o.points));
    std::vector<double> distances_m =
        parse_values_si(distances_text, dims::length, "--distances", o.points);
    std::sort(distances_m.begin(), distances_m.end());
    std::optional<Temperature> t_sub;
    if (!o.sublimation_temperature.empty())
        t_sub = parse_quantity<Temperature>(text_of(o.sublimation_temperature),
                                            "--sublimation-temperature");
    const ResolvedStar rs = resolve_star(o.star);
    const ResolvedMaterial mat = resolve_material(o.material);
    const Star& star = rs.star;
    for (double d : distances_m)
        if (d <= star.radius.value())
            throw InputError(fmt::format(
                "--distances: cannot use '{}': {:.4g} au is inside the star (radius {:.4g} au). "
                "Accepted: distances larger than the stellar radius",
                distances_text, d / constants::au_m, in_astronomical_units(star.radius)));
    const GrainEfficiencySettings settings =
        parse_efficiency_settings(o.efficiency, mat.out_of_band);

    const double s_um = in_micrometres(grain);
    double qabs_star = 0.0;
    PlanckMean planck_mean;
    std::vector<std::string> notes;
    if (constant_qabs) {
        qabs_star = *constant_qabs;
        const double q = *constant_qabs;
        planck_mean = [q](double) { return q; };
    } else {
        const SpectralEfficiency e = starlight_qabs_mean(mat.optics, star.spectrum, settings);
        if (!e.note.empty()) notes.push_back(e.note);
        qabs_star = e.mean(s_um);
        if (!(qabs_star > 0.0))
            throw InputError("the grain absorbs no starlight (<Q_abs> = 0, a transparent "
                             "material): it has no equilibrium temperature. Use a material "
                             "with k > 0");
        planck_mean = planck_qabs_mean(mat.optics, s_um, settings);
    }

    Report r;
    r.command = "temperature";
    r.parameters = rs.parameters;
    for (auto& e : mat.parameters)
        r.parameters.push_back(e);
    if (constant_qabs)
        r.parameters.push_back(
            number_entry("constant Q_abs", {{"qabs_constant", *constant_qabs, ""}}));
    r.parameters.push_back(number_entry("grain radius", {{"grain_radius_um", s_um, "um"}}));
    if (t_sub)
        r.parameters.push_back(number_entry("sublimation temperature",
                                            {{"sublimation_temperature_K", t_sub->value(), "K"}}));

    r.results.push_back(number_entry("<Q_abs> in starlight", {{"qabs_star_mean", qabs_star, ""}}));
    if (t_sub) {
        const double q_sub = planck_mean(t_sub->value());
        const auto d = sublimation_distance(star.luminosity, star.radius, qabs_star, *t_sub, q_sub);
        r.results.push_back(
            number_entry("sublimation distance",
                         {{"sublimation_distance_au",
                           d ? Cell(in_astronomical_units(*d)) : Cell(std::monostate{}), "au"}}));
        if (!d)
            r.results.push_back(
                text_entry("sublimation", "sublimation_note",
                           fmt::format("the grain stays below {:.4g} K even at the stellar surface",
                                       t_sub->value())));
    }

    Grid grid;
    grid.columns = {{"distance_au", "distance (au)"},
                    {"temperature_K", "T (K)"},
                    {"blackbody_temperature_K", "T_bb (K)"}};
    const PlanckMean one = [](double) { return 1.0; };
    for (double d : distances_m) {
        const Temperature t = equilibrium_temperature(star.luminosity, star.radius, metres(d),
                                                      qabs_star, planck_mean);
        const Temperature tbb =
            equilibrium_temperature(star.luminosity, star.radius, metres(d), 1.0, one);
        grid.rows.push_back({d / constants::au_m, t.value(), tbb.value()});
    }
    r.grid = std::move(grid);

    r.assumptions = grain_assumptions(constant_qabs.has_value(), rs, mat);
    if (constant_qabs)
        r.assumptions[0] = "Absorption efficiency held constant at the given value "
                           "(a grey grain; 1 is a blackbody), not Mie theory";
    r.assumptions.push_back("Equilibrium temperature from absorbed starlight = thermal emission "
                            "over the whole grain surface (4 pi s^2), one temperature throughout "
                            "the grain; no heating other than starlight, no stochastic heating of "
                            "very small grains, no cooling by sublimation");
    r.assumptions.push_back("T_bb: a blackbody (Q_abs = 1) at the same distance, for comparison");
    r.warnings = rs.warnings;
    for (auto& n : notes)
        r.warnings.push_back(n);
    return r;
}

} // namespace

Command setup_temperature(CLI::App& app) {
    CLI::App* sub = app.add_subcommand(
        "temperature", "Equilibrium temperature of a grain versus distance from the star; the "
                       "sublimation distance for a sublimation temperature");
    auto o = std::make_shared<TemperatureOptions>();
    add_star_options(*sub, o->star);
    add_material_options(*sub, o->material);
    add_efficiency_options(*sub, o->efficiency, "--qabs",
                           "Use this constant Q_abs instead of Mie theory (1: a blackbody)");
    add_quantity_option(sub, "--grain-radius", o->grain_radius,
                        "Grain radius, e.g. 0.5 um; default 1 um", "QUANTITY");
    add_quantity_option(sub, "--distances", o->distances,
                        "Distances from the star: a range low..high (log-spaced), a list or one "
                        "value; default 0.1au..100au",
                        "RANGE");
    sub->add_option("--points", o->points, "Number of distances in a --distances range (>= 2)")
        ->default_val(50);
    add_quantity_option(sub, "--sublimation-temperature", o->sublimation_temperature,
                        "Also give the distance where the grain reaches this temperature, e.g. "
                        "1500 K",
                        "QUANTITY");
    Command c;
    c.app = sub;
    c.common = add_common_options(*sub);
    c.run = [o] { return run_temperature(*o); };
    return c;
}

} // namespace holdfast::cli
