// holdfast temperature: equilibrium temperature of grains of one or several radii versus
// distance from the star; the sublimation distance of each radius for a sublimation
// temperature, and the radii that sublimate at a given distance; optionally a plot.
#include <algorithm>
#include <cmath>

#include <fmt/format.h>

#include "commands.hpp"
#include "grain_options.hpp"
#include "holdfast/constants.hpp"
#include "holdfast/errors.hpp"
#include "holdfast/grain.hpp"
#include "holdfast/parse.hpp"
#include "plot.hpp"

namespace holdfast::cli {
namespace {

struct TemperatureOptions {
    StarOptions star;
    MaterialOptions material;
    EfficiencyOptions efficiency;
    bool blackbody = false;
    Words grain_radius; // default 1 um; one value, a list or a range
    int radius_points = 5;
    Words distances; // default 0.1au..100au
    int points = 100;
    Words sublimation_temperature;
    Words sublimating_radii_at;
    Words search_radii; // default 0.01um..1mm
    int search_points = 200;
    std::string plot;
};

constexpr const char* default_distances = "0.1au..100au";
constexpr const char* default_search_radii = "0.01um..1mm";

void check_points(int points, const char* option) {
    if (points < 2 || points > 100000)
        throw InputError(fmt::format("{}: cannot use '{}': out of range. Accepted: an integer "
                                     "from 2 to 100000",
                                     option, points));
}

// Values of a list or log-spaced range option, ascending and without repeats.
std::vector<double> sorted_values_si(const std::string& text, const Dimension& dim,
                                     const char* option, int points) {
    std::vector<double> v = parse_values_si(text, dim, option, points);
    std::sort(v.begin(), v.end());
    v.erase(std::unique(v.begin(), v.end()), v.end());
    return v;
}

std::string radius_label(double s_um) { return fmt::format("s = {:.4g} µm", s_um); }

Report run_temperature(const TemperatureOptions& o) {
    if (!o.plot.empty()) check_plot_request(o.plot, "--plot");
    std::optional<double> constant_qabs = parse_constant_efficiency(o.efficiency, "--qabs");
    if (o.blackbody) {
        if (constant_qabs)
            throw InputError(fmt::format("--blackbody: cannot use it with --qabs {}: both set the "
                                         "absorption efficiency. Accepted: one of the two",
                                         o.efficiency.constant));
        constant_qabs = 1.0;
    }
    check_points(o.points, "--points");
    check_points(o.radius_points, "--radius-points");
    check_points(o.search_points, "--search-points");
    const std::string radii_text = text_of(o.grain_radius, "1 um");
    std::vector<double> radii_um =
        sorted_values_si(radii_text, dims::length, "--grain-radius", o.radius_points);
    for (double& s : radii_um)
        s *= 1e6;
    const std::string distances_text = text_of(o.distances, default_distances);
    const std::vector<double> distances_m =
        sorted_values_si(distances_text, dims::length, "--distances", o.points);

    std::optional<Temperature> t_sub;
    if (!o.sublimation_temperature.empty()) {
        const std::string text = text_of(o.sublimation_temperature);
        t_sub = parse_quantity<Temperature>(text, "--sublimation-temperature");
        // Fixsen (2009): the microwave background alone keeps every grain at 2.725 K or more.
        if (!(t_sub->value() > constants::cmb_temperature_K))
            throw InputError(fmt::format(
                "--sublimation-temperature: cannot use '{}': it is not above the cosmic "
                "microwave background temperature {} K (Fixsen 2009), below which no grain "
                "cools. Accepted: a temperature above {} K, e.g. 1500 K for silicates",
                text, constants::cmb_temperature_K, constants::cmb_temperature_K));
    }
    std::optional<Length> sublimating_at;
    if (!o.sublimating_radii_at.empty()) {
        const std::string text = text_of(o.sublimating_radii_at);
        sublimating_at = parse_quantity<Length>(text, "--sublimating-radii-at");
        if (!(sublimating_at->value() > 0.0))
            throw InputError(fmt::format("--sublimating-radii-at: cannot use '{}': the distance "
                                         "must be positive. Accepted: a distance such as 0.5 au",
                                         text));
        if (!t_sub)
            throw InputError(fmt::format("--sublimating-radii-at: cannot use '{}' without "
                                         "--sublimation-temperature. Accepted: both together, "
                                         "e.g. --sublimation-temperature 1500 K "
                                         "--sublimating-radii-at 0.1 au",
                                         text));
    }
    const std::string search_text = text_of(o.search_radii, default_search_radii);
    std::vector<double> search_radii_um;
    if (sublimating_at) {
        search_radii_um =
            sorted_values_si(search_text, dims::length, "--search-radii", o.search_points);
        if (search_radii_um.size() < 2)
            throw InputError(fmt::format("--search-radii: cannot use '{}': the search needs at "
                                         "least two radii. Accepted: a range such as "
                                         "'0.01um..1mm'",
                                         search_text));
        for (double& s : search_radii_um)
            s *= 1e6;
    }

    const ResolvedStar rs = resolve_star(o.star);
    const ResolvedMaterial mat = resolve_material(o.material);
    const Star& star = rs.star;
    const double star_radius_au = in_astronomical_units(star.radius);
    auto check_outside_star = [&](double d_m, const std::string& option, const std::string& text) {
        if (d_m <= star.radius.value())
            throw InputError(fmt::format("{}: cannot use '{}': {:.4g} au is inside the star "
                                         "(radius {:.4g} au). Accepted: distances larger than "
                                         "the stellar radius",
                                         option, text, d_m / constants::au_m, star_radius_au));
    };
    for (double d : distances_m)
        check_outside_star(d, "--distances", distances_text);
    if (sublimating_at)
        check_outside_star(sublimating_at->value(), "--sublimating-radii-at",
                           text_of(o.sublimating_radii_at));
    const GrainEfficiencySettings settings =
        parse_efficiency_settings(o.efficiency, mat.out_of_band);

    // <Q_abs> in starlight for every radius (one spectral curve, so the radii share its work)
    // and each radius's Planck mean as a function of its temperature.
    std::vector<std::string> notes;
    MeanEfficiency qabs_star_of;
    std::function<PlanckMean(double)> planck_of;
    if (constant_qabs) {
        const double q = *constant_qabs;
        qabs_star_of = [q](double) { return q; };
        planck_of = [q](double) -> PlanckMean { return [q](double) { return q; }; };
    } else {
        SpectralEfficiency e = starlight_qabs_mean(mat.optics, star.spectrum, settings);
        if (!e.note.empty()) notes.push_back(e.note);
        qabs_star_of = std::move(e.mean);
        planck_of = [&mat, settings](double s_um) {
            return planck_qabs_mean(mat.optics, s_um, settings);
        };
    }
    auto qabs_star_at = [&](double s_um) {
        const double q = qabs_star_of(s_um);
        if (!(q > 0.0) || !std::isfinite(q))
            throw InputError(fmt::format(
                "the grain of radius {:.4g} um absorbs no starlight (<Q_abs> = {:.3g}, a "
                "transparent material): it has no equilibrium temperature. Use a material with "
                "k > 0",
                s_um, q));
        return q;
    };

    std::vector<Length> distances;
    distances.reserve(distances_m.size());
    for (double d : distances_m)
        distances.push_back(metres(d));
    const GrainTemperatureModel blackbody(star.luminosity, star.radius, 1.0,
                                          [](double) { return 1.0; });
    const std::vector<Temperature> t_bb = blackbody.temperatures(distances);

    Grid grid;
    grid.columns = {{"grain_radius_um", "radius (um)"},
                    {"distance_au", "distance (au)"},
                    {"temperature_K", "T (K)"},
                    {"blackbody_temperature_K", "T_bb (K)"}};
    if (t_sub) grid.columns.push_back({"sublimation_distance_au", "r_sub (au)"});
    std::vector<double> qabs_star_means;
    std::vector<double> sublimation_distances_au; // for the plot
    std::vector<double> never_sublimating_um;
    double worst_residual = 0.0;
    LogLogPlot plot;
    for (double s_um : radii_um) {
        const double q_star = qabs_star_at(s_um);
        qabs_star_means.push_back(q_star);
        const GrainTemperatureModel model(star.luminosity, star.radius, q_star, planck_of(s_um));
        std::vector<TemperatureSolution> t;
        try {
            t = model.solve(distances);
        } catch (const InputError& e) {
            // E.g. optical constants that do not cover a far-out grain's Planck band, or an
            // index outside the Mie series' range there. Say which radius.
            throw InputError(
                fmt::format("--grain-radius: the grain of radius {:.4g} um: {}", s_um, e.what()));
        }
        Cell r_sub = std::monostate{};
        if (t_sub) {
            if (const auto d = model.sublimation_distance(*t_sub)) {
                r_sub = in_astronomical_units(*d);
                sublimation_distances_au.push_back(in_astronomical_units(*d));
            } else {
                never_sublimating_um.push_back(s_um);
            }
        }
        PlotSeries series{radius_label(s_um), {}, {}};
        for (std::size_t i = 0; i < distances.size(); ++i) {
            worst_residual = std::max(worst_residual, std::abs(t[i].balance_residual));
            std::vector<Cell> row{s_um, distances_m[i] / constants::au_m, t[i].temperature.value(),
                                  t_bb[i].value()};
            if (t_sub) row.push_back(r_sub);
            grid.rows.push_back(std::move(row));
            series.x.push_back(distances_m[i] / constants::au_m);
            series.y.push_back(t[i].temperature.value());
        }
        plot.series.push_back(std::move(series));
    }

    Report r;
    r.command = "temperature";
    r.parameters = rs.parameters;
    if (!constant_qabs) // a constant Q_abs replaces the material
        for (auto& e : mat.parameters)
            r.parameters.push_back(e);
    if (constant_qabs)
        r.parameters.push_back(
            number_entry("constant Q_abs", {{"qabs_constant", *constant_qabs, ""}}));
    r.parameters.push_back(number_entry("grain radii", {{"grain_radius_um", radii_um, "um"}}));
    r.parameters.push_back(number_entry(
        "nearest distance", {{"distance_min_au", distances_m.front() / constants::au_m, "au"}}));
    r.parameters.push_back(number_entry(
        "farthest distance", {{"distance_max_au", distances_m.back() / constants::au_m, "au"}}));
    r.parameters.push_back(
        number_entry("number of distances", {{"distance_points", double(distances_m.size()), ""}}));
    if (t_sub)
        r.parameters.push_back(number_entry("sublimation temperature",
                                            {{"sublimation_temperature_K", t_sub->value(), "K"}}));

    r.results.push_back(number_entry("<Q_abs> in starlight, per radius",
                                     {{"qabs_star_mean", qabs_star_means, ""}}));
    r.results.push_back(number_entry("largest energy-balance residual",
                                     {{"balance_residual_max", worst_residual, ""}}));
    if (t_sub && !never_sublimating_um.empty())
        r.results.push_back(
            number_entry("radii that stay cooler even at the stellar surface",
                         {{"never_sublimating_radii_um", never_sublimating_um, "um"}}));

    if (sublimating_at) {
        const double at_au = in_astronomical_units(*sublimating_at);
        r.parameters.push_back(number_entry("sublimating radii searched at",
                                            {{"sublimating_radii_at_au", at_au, "au"}}));
        r.parameters.push_back(number_entry(
            "smallest searched radius", {{"search_radius_min_um", search_radii_um.front(), "um"}}));
        r.parameters.push_back(number_entry(
            "largest searched radius", {{"search_radius_max_um", search_radii_um.back(), "um"}}));
        r.parameters.push_back(number_entry(
            "number of searched radii", {{"search_points", double(search_radii_um.size()), ""}}));
        // <Q_abs> at T_sub as a function of radius: a spectral mean over the Planck spectrum at
        // T_sub, which shares its work across radii like the starlight mean.
        MeanEfficiency qabs_at_sub;
        if (constant_qabs) {
            qabs_at_sub = qabs_star_of;
        } else {
            SpectralEfficiency e =
                starlight_qabs_mean(mat.optics, planck_spectrum(*t_sub), settings);
            qabs_at_sub = std::move(e.mean);
        }
        const std::function<double(double)> margin = [&](double s_um) {
            const double q_t = qabs_at_sub(s_um);
            if (!(q_t > 0.0) || !std::isfinite(q_t))
                throw InputError(fmt::format("the grain of radius {:.4g} um emits nothing at "
                                             "{:.4g} K (<Q_abs> = {:.3g}): use a material with "
                                             "k > 0",
                                             s_um, t_sub->value(), q_t));
            return sublimation_margin(star.luminosity, star.radius, *sublimating_at,
                                      qabs_star_at(s_um), *t_sub, q_t);
        };
        std::vector<double> scan;
        scan.reserve(search_radii_um.size());
        for (double s : search_radii_um)
            scan.push_back(margin(s));
        const RadiusIntervals iv = positive_radius_intervals(margin, search_radii_um, scan);
        r.results.push_back(number_entry("sublimating radii from",
                                         {{"sublimating_radii_from_um", iv.from_um, "um"}}));
        r.results.push_back(
            number_entry("sublimating radii to", {{"sublimating_radii_to_um", iv.to_um, "um"}}));
        std::string verdict;
        if (iv.from_um.empty()) {
            verdict =
                fmt::format("no grain from {:.4g} to {:.4g} um reaches {:.4g} K at {:.4g} au",
                            search_radii_um.front(), search_radii_um.back(), t_sub->value(), at_au);
        } else {
            std::vector<std::string> parts;
            for (std::size_t i = 0; i < iv.from_um.size(); ++i)
                parts.push_back(fmt::format("{:.4g} to {:.4g} um", iv.from_um[i], iv.to_um[i]));
            verdict = fmt::format("grains from {} reach {:.4g} K or more at {:.4g} au",
                                  fmt::join(parts, ", "), t_sub->value(), at_au);
        }
        r.results.push_back(text_entry("sublimating radii", "sublimating_radii", verdict));
        if (iv.includes_smallest || iv.includes_largest)
            r.warnings.push_back(fmt::format(
                "the sublimating radii reach {} of --search-radii ({}): the range may extend "
                "beyond it",
                iv.includes_smallest && iv.includes_largest ? "both ends"
                : iv.includes_smallest                      ? "the smallest radius"
                                                            : "the largest radius",
                search_text));
    }

    r.grid = std::move(grid);

    r.assumptions = grain_assumptions(constant_qabs.has_value(), rs, mat);
    if (constant_qabs)
        r.assumptions[0] = "Absorption efficiency held constant at the given value in starlight "
                           "and in the grain's own emission (a grey grain; 1 is a blackbody), "
                           "not Mie theory";
    r.assumptions.push_back(
        "Equilibrium temperature from absorbed starlight = thermal emission over the whole grain "
        "surface (4 pi s^2), one temperature throughout the grain; optically thin (no other "
        "grain shades it), no heating other than starlight (none by the microwave background), "
        "no stochastic heating of very small grains, no cooling by sublimation");
    r.assumptions.push_back(
        "Finite disc: the absorbed flux is L / (4 pi r^2) times D = 2 / (1 + sqrt(1 - (R/r)^2)), "
        "exact for a uniformly bright star of radius R (1 far away, 2 at its surface)");
    r.assumptions.push_back("T_bb: a blackbody (Q_abs = 1) at the same distance, for comparison");
    if (t_sub)
        r.assumptions.push_back(
            "Sublimation distance: where the equilibrium temperature equals the given sublimation "
            "temperature (a fixed threshold; real sublimation depends on pressure and time)");
    for (const auto& w : rs.warnings)
        r.warnings.push_back(w);
    for (auto& n : notes)
        r.warnings.push_back(n);

    if (!o.plot.empty()) {
        (void)render(r, Format::json); // refuses non-finite numbers before anything is drawn
        plot.title = fmt::format("Grain temperature, {} around {}",
                                 constant_qabs ? fmt::format("Q_abs = {:g}", *constant_qabs)
                                               : mat.description,
                                 star.name);
        plot.x_label = "distance from the star r (au)";
        plot.y_label = "equilibrium temperature T (K)";
        if (!constant_qabs || *constant_qabs != 1.0) {
            PlotSeries bb{"blackbody", {}, {}};
            for (std::size_t i = 0; i < distances.size(); ++i) {
                bb.x.push_back(distances_m[i] / constants::au_m);
                bb.y.push_back(t_bb[i].value());
            }
            plot.dashed_series.push_back(std::move(bb));
        }
        if (t_sub) {
            plot.horizontal_line = t_sub->value();
            plot.horizontal_label = fmt::format("T_{{sub}} = {:.4g} K", t_sub->value());
            // Only the sublimation distances inside the plotted range (gnuplot would draw the
            // others outside the frame).
            for (double d : sublimation_distances_au)
                if (d >= distances_m.front() / constants::au_m &&
                    d <= distances_m.back() / constants::au_m)
                    plot.vertical_marks.push_back(d);
        }
        write_plot(o.plot, plot, "--plot");
    }
    return r;
}

} // namespace

Command setup_temperature(CLI::App& app) {
    CLI::App* sub = app.add_subcommand(
        "temperature", "Equilibrium temperature of grains versus distance from the star; the "
                       "sublimation distance for a sublimation temperature and the radii that "
                       "sublimate at a distance");
    auto o = std::make_shared<TemperatureOptions>();
    add_star_options(*sub, o->star);
    add_material_options(*sub, o->material);
    add_efficiency_options(*sub, o->efficiency, "--qabs",
                           "Use this constant Q_abs instead of Mie theory (1: a blackbody)");
    sub->add_flag("--blackbody", o->blackbody,
                  "A blackbody grain (Q_abs = 1 at every wavelength; the same as --qabs 1)");
    add_quantity_option(sub, "--grain-radius", o->grain_radius,
                        "Grain radius or radii (not diameters): one value, a list a,b,c or a "
                        "range low..high (log-spaced, --radius-points); default 1 um",
                        "RADII");
    sub->add_option("--radius-points", o->radius_points,
                    "Number of radii in a --grain-radius range (>= 2)")
        ->default_val(5);
    add_quantity_option(sub, "--distances", o->distances,
                        "Distances from the star: a range low..high (log-spaced), a list or one "
                        "value; default 0.1au..100au",
                        "RANGE");
    sub->add_option("--points", o->points, "Number of distances in a --distances range (>= 2)")
        ->default_val(100);
    add_quantity_option(sub, "--sublimation-temperature", o->sublimation_temperature,
                        "Also give each radius's distance where the grain reaches this "
                        "temperature, e.g. 1500 K",
                        "QUANTITY");
    add_quantity_option(sub, "--sublimating-radii-at", o->sublimating_radii_at,
                        "With --sublimation-temperature: the grain radii that reach it at this "
                        "distance, e.g. 0.1 au (searched over --search-radii)",
                        "QUANTITY");
    add_quantity_option(sub, "--search-radii", o->search_radii,
                        "Radii scanned by --sublimating-radii-at, log-spaced; default 0.01um..1mm",
                        "RANGE");
    sub->add_option("--search-points", o->search_points,
                    "Number of radii scanned by --sublimating-radii-at (>= 2)")
        ->default_val(200);
    sub->add_option("--plot", o->plot,
                    "Also draw log-log temperature against distance, one curve per radius, with "
                    "the blackbody and the sublimation temperature, to FILE.svg or FILE.png "
                    "(needs gnuplot)");
    Command c;
    c.app = sub;
    c.common = add_common_options(*sub);
    c.run = [o] { return run_temperature(*o); };
    return c;
}

} // namespace holdfast::cli
