// holdfast beta: beta and the spectrum-weighted <Q_pr> over a grid of grain radii, with the
// critical beta of the parent orbit, beta_max and the blow-out radii; optionally a plot.
#include <fmt/format.h>

#include "commands.hpp"
#include "grain_options.hpp"
#include "holdfast/errors.hpp"
#include "holdfast/grain.hpp"
#include "plot.hpp"

namespace holdfast::cli {
namespace {

struct BetaOptions {
    StarOptions star;
    MaterialOptions material;
    EfficiencyOptions efficiency;
    RadiiOptions radii;
    OrbitOptions orbit;
    std::string threads;
    std::string plot;
};

Report run_beta(const BetaOptions& o) {
    const unsigned threads = resolve_threads(o.threads);
    if (!o.plot.empty()) check_plot_request(o.plot, "--plot");
    const ReleasePoint release = parse_release_point(o.orbit);
    const std::vector<double> radii = parse_radii_um(o.radii);
    if (radii.size() < 2)
        throw InputError("--radii: cannot use '" + radii_text(o.radii) +
                         "': beta needs at least two radii. Accepted: a range such as "
                         "'0.01um..1mm' or a list of two or more radii");
    BetaInputs in = resolve_beta_inputs(o.star, o.material, o.efficiency);
    const BetaModel model(in.star.star.luminosity, in.star.star.mass, in.material.density,
                          in.qpr_mean);
    const double bc = critical_beta(release);
    const BetaGrid g = compute_beta_grid(model, in, radii, threads);
    const std::function<double(double)> beta_fn = [&](double s) { return model.beta_at_um(s); };
    const BlowoutSearch search = search_beta_curve(beta_fn, g.radii_um, g.beta, bc);

    Report r;
    r.command = "beta";
    r.parameters = in.star.parameters;
    for (auto& e : in.material.parameters)
        r.parameters.push_back(e);
    if (in.constant_qpr)
        r.parameters.push_back(
            number_entry("constant Q_pr", {{"qpr_constant", *in.constant_qpr, ""}}));
    for (auto& e : orbit_parameters(release, std::nullopt))
        r.parameters.push_back(e);
    r.parameters.push_back(
        number_entry("smallest radius", {{"radius_min_um", radii.front(), "um"}}));
    r.parameters.push_back(number_entry("largest radius", {{"radius_max_um", radii.back(), "um"}}));
    r.parameters.push_back(
        number_entry("number of radii", {{"radius_points", double(radii.size()), ""}}));

    r.results.push_back(number_entry("critical beta", {{"beta_crit", bc, ""}}));
    r.results.push_back(number_entry("largest beta", {{"beta_max", search.beta_max, ""}}));
    r.results.push_back(number_entry(
        "radius at largest beta", {{"radius_at_beta_max_um", search.radius_at_beta_max_um, "um"}}));
    r.results.push_back(flag_entry("largest beta at an end of the radii", "peak_at_range_edge",
                                   search.peak_at_range_edge));
    r.results.push_back(
        number_entry("blow-out radii", {{"blowout_radii_um", search.blowout_radii_um, "um"}}));

    Grid grid;
    grid.columns = {{"grain_radius_um", "radius (um)"},
                    {"qpr_mean", "<Q_pr>"},
                    {"beta", "beta"},
                    {"bound", "bound"}};
    for (std::size_t i = 0; i < radii.size(); ++i)
        grid.rows.push_back({g.radii_um[i], g.qpr_mean[i], g.beta[i], g.beta[i] < bc});
    r.grid = std::move(grid);

    r.assumptions = grain_assumptions(in.constant_qpr.has_value(), in.star, in.material);
    r.assumptions.push_back("bound: a grain released from the parent orbit stays bound when "
                            "beta < beta_crit = (1 - e^2) / (2 (1 + e cos f))");
    r.warnings = in.star.warnings;
    for (auto& n : in.notes)
        r.warnings.push_back(n);
    if (search.peak_at_range_edge && !in.constant_qpr)
        r.warnings.push_back(fmt::format(
            "beta is largest at the end of the radii ({:.4g} um): the true peak may lie outside "
            "--radii",
            search.radius_at_beta_max_um));

    if (!o.plot.empty()) {
        (void)render(r, Format::json); // refuses non-finite numbers before anything is drawn
        LogLogPlot p;
        p.title = fmt::format("beta for {} around {}", in.material.description, in.star.star.name);
        p.x_label = "grain radius s (µm)";
        p.y_label = "β = F_{rad} / F_{grav}";
        p.series.push_back({"β", g.radii_um, g.beta});
        p.horizontal_line = bc;
        p.horizontal_label = fmt::format("β_{{crit}} = {:.4g}", bc);
        p.vertical_marks = search.blowout_radii_um;
        write_plot(o.plot, p, "--plot");
    }
    return r;
}

} // namespace

Command setup_beta(CLI::App& app) {
    CLI::App* sub = app.add_subcommand(
        "beta", "Beta (radiation pressure / gravity) and the spectrum-weighted <Q_pr> over a grid "
                "of grain radii, with the critical beta of the parent orbit, the largest beta and "
                "the blow-out radii");
    auto o = std::make_shared<BetaOptions>();
    add_star_options(*sub, o->star);
    add_material_options(*sub, o->material);
    add_efficiency_options(*sub, o->efficiency, "--qpr",
                           "Use this constant <Q_pr> instead of Mie theory (1: perfect absorber)");
    add_radii_options(*sub, o->radii);
    add_threads_option(*sub, o->threads,
                       "The radii's <Q_pr> are shared out between them; the results are the "
                       "same for any number");
    add_orbit_options(*sub, o->orbit, false);
    sub->add_option("--plot", o->plot,
                    "Also draw log-log beta against radius with the critical line, to FILE.svg or "
                    "FILE.png (needs gnuplot)");
    Command c;
    c.app = sub;
    c.common = add_common_options(*sub);
    c.run = [o] { return run_beta(*o); };
    return c;
}

} // namespace holdfast::cli
