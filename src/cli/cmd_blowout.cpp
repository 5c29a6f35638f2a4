// holdfast blowout: every grain radius where beta crosses the critical value of the parent
// orbit, beta_max and where it peaks; with --distance the orbit a released grain takes (or
// its speed at infinity) and its Poynting-Robertson drag time.
#include <fmt/format.h>

#include "commands.hpp"
#include "grain_options.hpp"
#include "holdfast/errors.hpp"
#include "holdfast/grain.hpp"
#include "holdfast/parse.hpp"

namespace holdfast::cli {
namespace {

struct BlowoutOptions {
    StarOptions star;
    MaterialOptions material;
    EfficiencyOptions efficiency;
    RadiiOptions radii;
    OrbitOptions orbit;
    std::string threads;
    Words grain_radius;
};

// Which radii are blown out, in words, from the crossings and the sign at the smallest radius.
std::string verdict(const BetaGrid& g, const BlowoutSearch& s) {
    const double bc = s.beta_crit;
    if (s.blowout_radii_um.empty()) {
        if (g.beta.front() >= bc)
            return fmt::format("every radius searched ({:.4g} to {:.4g} um) is blown out "
                               "(beta >= beta_crit = {:.4g})",
                               g.radii_um.front(), g.radii_um.back(), bc);
        return fmt::format("no grain of this material is blown out: beta_max = {:.4g} is below "
                           "beta_crit = {:.4g}{}",
                           s.beta_max, bc,
                           s.peak_at_range_edge ? " within the radii searched" : "");
    }
    // Intervals where beta >= beta_crit: they start and end at crossings or at the ends of the
    // searched radii.
    std::vector<std::string> pieces;
    bool out = g.beta.front() >= bc;
    std::optional<double> start; // empty: the smallest radius searched
    for (double x : s.blowout_radii_um) {
        if (out)
            pieces.push_back(start ? fmt::format("{:.4g} to {:.4g} um", *start, x)
                                   : fmt::format("up to {:.4g} um (from the smallest radius "
                                                 "searched, {:.4g} um)",
                                                 x, g.radii_um.front()));
        out = !out;
        start = x;
    }
    if (out)
        pieces.push_back(fmt::format("{:.4g} um and larger (up to the largest radius searched, "
                                     "{:.4g} um)",
                                     *start, g.radii_um.back()));
    std::string text = "grains blown out: ";
    for (std::size_t i = 0; i < pieces.size(); ++i)
        text += (i ? "; " : "") + pieces[i];
    return text;
}

std::vector<Repr> orbit_reprs(const ReleasedOrbit& orb, const std::optional<Time>& pr) {
    auto len = [](const std::optional<Length>& l) -> Cell {
        if (l) return in_astronomical_units(*l);
        return std::monostate{};
    };
    std::vector<Repr> v;
    v.push_back({"semi_major_axis_au", len(orb.semi_major_axis), "au"});
    v.push_back(
        {"eccentricity", orb.eccentricity ? Cell(*orb.eccentricity) : Cell(std::monostate{}), ""});
    v.push_back({"pericentre_au", len(orb.pericentre), "au"});
    v.push_back({"apocentre_au", len(orb.apocentre), "au"});
    v.push_back({"speed_at_infinity_km_s",
                 orb.speed_at_infinity ? Cell(orb.speed_at_infinity->value() / 1e3)
                                       : Cell(std::monostate{}),
                 "km/s"});
    v.push_back(
        {"pr_drag_time_yr", pr ? Cell(in_julian_years(*pr)) : Cell(std::monostate{}), "yr"});
    return v;
}

Report run_blowout(const BlowoutOptions& o) {
    const unsigned threads = resolve_threads(o.threads);
    const ReleasePoint release = parse_release_point(o.orbit);
    const std::optional<Length> distance = parse_release_distance(o.orbit);
    const std::vector<double> radii = parse_radii_um(o.radii);
    if (radii.size() < 2)
        throw InputError("--radii: cannot use '" + radii_text(o.radii) +
                         "': the search needs a range of radii. Accepted: a range such as "
                         "'0.01um..1mm'");
    std::optional<Length> grain;
    if (!o.grain_radius.empty())
        grain = parse_quantity<Length>(text_of(o.grain_radius), "--grain-radius");
    BetaInputs in = resolve_beta_inputs(o.star, o.material, o.efficiency);
    const Star& star = in.star.star;
    const BetaModel model(star.luminosity, star.mass, in.material.density, in.qpr_mean);
    const double bc = critical_beta(release);
    const BetaGrid g = compute_beta_grid(model, in, radii, threads);
    const std::function<double(double)> beta_fn = [&](double s) { return model.beta_at_um(s); };
    const BlowoutSearch search = search_beta_curve(beta_fn, g.radii_um, g.beta, bc);

    Report r;
    r.command = "blowout";
    r.parameters = in.star.parameters;
    for (auto& e : in.material.parameters)
        r.parameters.push_back(e);
    if (in.constant_qpr)
        r.parameters.push_back(
            number_entry("constant Q_pr", {{"qpr_constant", *in.constant_qpr, ""}}));
    for (auto& e : orbit_parameters(release, distance))
        r.parameters.push_back(e);
    r.parameters.push_back(
        number_entry("smallest radius", {{"radius_min_um", radii.front(), "um"}}));
    r.parameters.push_back(number_entry("largest radius", {{"radius_max_um", radii.back(), "um"}}));
    r.parameters.push_back(
        number_entry("number of radii searched", {{"radius_points", double(radii.size()), ""}}));

    r.results.push_back(number_entry("critical beta", {{"beta_crit", bc, ""}}));
    r.results.push_back(
        number_entry("blow-out radii", {{"blowout_radii_um", search.blowout_radii_um, "um"}}));
    r.results.push_back(number_entry("largest beta", {{"beta_max", search.beta_max, ""}}));
    r.results.push_back(number_entry(
        "radius at largest beta", {{"radius_at_beta_max_um", search.radius_at_beta_max_um, "um"}}));
    r.results.push_back(flag_entry("largest beta at an end of the radii", "peak_at_range_edge",
                                   search.peak_at_range_edge));
    r.results.push_back(text_entry("verdict", "verdict", verdict(g, search)));

    if (grain) {
        const double s = in_micrometres(*grain);
        const double q = model.qpr_mean_at_um(s);
        const double b = model.beta_from_qpr(q, s);
        r.results.push_back(number_entry("grain radius", {{"grain_radius_um", s, "um"}}));
        r.results.push_back(number_entry("grain <Q_pr>", {{"qpr_mean", q, ""}}));
        r.results.push_back(number_entry("grain beta", {{"beta", b, ""}}));
        r.results.push_back(flag_entry("grain stays bound", "bound", b < bc));
        if (distance) {
            const ReleasedOrbit orb = released_orbit(star.mass, b, release, *distance);
            std::optional<Time> pr;
            if (orb.bound && b > 0.0) pr = poynting_robertson_time(star.mass, *distance, b);
            const char* labels[] = {"released orbit: semi-major axis",
                                    "released orbit: eccentricity",
                                    "released orbit: pericentre",
                                    "released orbit: apocentre",
                                    "speed at infinity",
                                    "Poynting-Robertson time"};
            const auto reprs = orbit_reprs(orb, pr);
            for (std::size_t i = 0; i < reprs.size(); ++i)
                if (!std::holds_alternative<std::monostate>(reprs[i].value))
                    r.results.push_back(number_entry(labels[i], {reprs[i]}));
        }
    } else if (distance) {
        Grid grid;
        grid.columns = {{"grain_radius_um", "radius (um)"},
                        {"qpr_mean", "<Q_pr>"},
                        {"beta", "beta"},
                        {"bound", "bound"},
                        {"semi_major_axis_au", "a (au)"},
                        {"eccentricity", "e"},
                        {"pericentre_au", "q (au)"},
                        {"apocentre_au", "Q (au)"},
                        {"speed_at_infinity_km_s", "v_inf (km/s)"},
                        {"pr_drag_time_yr", "t_PR (yr)"}};
        for (std::size_t i = 0; i < radii.size(); ++i) {
            const ReleasedOrbit orb = released_orbit(star.mass, g.beta[i], release, *distance);
            std::optional<Time> pr;
            if (orb.bound && g.beta[i] > 0.0)
                pr = poynting_robertson_time(star.mass, *distance, g.beta[i]);
            std::vector<Cell> row{g.radii_um[i], g.qpr_mean[i], g.beta[i], orb.bound};
            for (auto& rep : orbit_reprs(orb, pr))
                row.push_back(rep.value);
            grid.rows.push_back(std::move(row));
        }
        r.grid = std::move(grid);
    }

    r.assumptions = grain_assumptions(in.constant_qpr.has_value(), in.star, in.material);
    r.assumptions.push_back("Blow-out radii: sign changes of beta - beta_crit between "
                            "neighbouring radii, refined to 1e-6 in radius; two crossings "
                            "closer than the radius spacing can be missed (use more --points)");
    if (distance)
        r.assumptions.push_back(
            "Released grains keep the parent's position and velocity and move on a Kepler orbit "
            "about (1 - beta) G M; the Poynting-Robertson time c r^2 / (4 G M beta) is that of a "
            "circular orbit at the release distance (an estimate for eccentric orbits)");
    r.warnings = in.star.warnings;
    for (auto& n : in.notes)
        r.warnings.push_back(n);
    if (grain && !distance)
        r.warnings.push_back("--grain-radius without --distance: the released orbit and the "
                             "drag time need the release distance");
    return r;
}

} // namespace

Command setup_blowout(CLI::App& app) {
    CLI::App* sub = app.add_subcommand(
        "blowout", "Every grain radius where beta crosses the critical value for the parent "
                   "orbit, the largest beta and where it peaks; with --distance the orbit a "
                   "released grain takes and its Poynting-Robertson drag time");
    auto o = std::make_shared<BlowoutOptions>();
    add_star_options(*sub, o->star);
    add_material_options(*sub, o->material);
    add_efficiency_options(*sub, o->efficiency, "--qpr",
                           "Use this constant <Q_pr> instead of Mie theory (1: perfect absorber)");
    add_radii_options(*sub, o->radii);
    add_threads_option(*sub, o->threads,
                       "The radii's <Q_pr> are shared out between them; the results are the "
                       "same for any number");
    add_orbit_options(*sub, o->orbit, true);
    add_quantity_option(sub, "--grain-radius", o->grain_radius,
                        "One grain radius to follow, e.g. 2 um: its beta and, with --distance, "
                        "its released orbit and drag time (default with --distance: a table "
                        "over --radii)",
                        "QUANTITY");
    Command c;
    c.app = sub;
    c.common = add_common_options(*sub);
    c.run = [o] { return run_blowout(*o); };
    return c;
}

} // namespace holdfast::cli
