#pragma once
// Options shared by the grain subcommands (beta, blowout, temperature): the star, the grain
// material, the grain radii, the parent orbit. Each is read as text and checked here, so
// every refusal names its option; the core gets quantities.
#include <memory>
#include <optional>
#include <string>
#include <vector>

#include <CLI/CLI.hpp>

#include "commands.hpp"
#include "holdfast/grain.hpp"
#include "holdfast/material.hpp"
#include "holdfast/spectral_mean.hpp"
#include "holdfast/star.hpp"
#include "output.hpp"

namespace holdfast::cli {

// ---- star -----------------------------------------------------------------------------------
struct StarOptions {
    std::string star;     // "sun" (default when nothing else is given)
    Words luminosity;     // --luminosity
    Words mass;           // --mass
    Words teff;           // --teff
    Words radius;         // --star-radius
    std::string spectrum; // --spectrum FILE
};
void add_star_options(CLI::App& app, StarOptions& o);

struct ResolvedStar {
    Star star;
    std::vector<Entry> parameters;
    std::vector<std::string> warnings;
    std::string spectrum_assumption;
};
ResolvedStar resolve_star(const StarOptions& o);

// ---- grain material -----------------------------------------------------------------------
struct MaterialOptions {
    std::string material;         // --material NAME (default "silicate")
    std::string index;            // --index 1.7+0.03i
    std::string nk;               // --nk FILE
    bool clip_negative_k = false; // --clip-negative-k
    std::string out_of_band = "refuse";
    Words density; // --density
    std::string porosity = "0";
    std::string mixing_rule = "bruggeman";
    std::string mantle_material;
    std::string mantle_index;
    Words mantle_density;
    std::string core_fraction;
};
void add_material_options(CLI::App& app, MaterialOptions& o);

struct ResolvedMaterial {
    GrainOptics optics;  // after porosity
    MassDensity density; // of the porous grain, (1 - P) times the solid's
    OutOfBand out_of_band = OutOfBand::refuse;
    std::string description; // one line
    std::vector<Entry> parameters;
    std::vector<std::string> assumptions; // limits of the materials used
};
// `needs_optics` false (a constant --qpr or --qabs replaces Mie): only the density matters,
// but the options are still checked.
ResolvedMaterial resolve_material(const MaterialOptions& o);

// ---- efficiencies ------------------------------------------------------------------------------
struct EfficiencyOptions {
    std::string constant; // --qpr (beta, blowout) or --qabs (temperature)
    std::string spectral_tolerance = "1e-5";
};
// Adds --qpr or --qabs (named by `constant_option`) and --spectral-tolerance.
void add_efficiency_options(CLI::App& app, EfficiencyOptions& o, const std::string& constant_option,
                            const std::string& constant_help);
// The constant efficiency if given (> 0), else empty. InputError naming the option.
std::optional<double> parse_constant_efficiency(const EfficiencyOptions& o,
                                                const std::string& constant_option);
GrainEfficiencySettings parse_efficiency_settings(const EfficiencyOptions& o,
                                                  OutOfBand out_of_band);

// ---- grain radii --------------------------------------------------------------------------------
struct RadiiOptions {
    Words radii; // default 0.01um..1mm
    int points = 200;
};
void add_radii_options(CLI::App& app, RadiiOptions& o);
std::string radii_text(const RadiiOptions& o);
// Log-spaced radii in micrometres, ascending; InputError naming --radii / --points.
std::vector<double> parse_radii_um(const RadiiOptions& o);

// ---- threads ------------------------------------------------------------------------------------
// Adds --threads (0, the default: one per core). `what` ends the help: what runs on them.
void add_threads_option(CLI::App& app, std::string& threads, const std::string& what);
// The thread count to use: the number read, or one per core for 0. InputError naming
// --threads unless it is a whole number from 0 to 1024.
unsigned resolve_threads(const std::string& text);

// ---- parent orbit
// --------------------------------------------------------------------------------
struct OrbitOptions {
    std::string eccentricity = "0";
    std::string release = "pericentre";
    Words distance; // optional
};
void add_orbit_options(CLI::App& app, OrbitOptions& o, bool with_distance);
ReleasePoint parse_release_point(const OrbitOptions& o);
std::optional<Length> parse_release_distance(const OrbitOptions& o);
// Table lines for the parent orbit and beta_crit.
std::vector<Entry> orbit_parameters(const ReleasePoint& r, const std::optional<Length>& distance);

// Lines for Report::assumptions shared by the grain subcommands.
std::vector<std::string> grain_assumptions(bool constant_efficiency, const ResolvedStar& star,
                                           const ResolvedMaterial& material);

} // namespace holdfast::cli

namespace holdfast::cli {

// Everything beta(s) needs, from the shared options: the star, the material and the
// spectrum-weighted <Q_pr>(s) (Mie theory, or the constant from --qpr).
struct BetaInputs {
    ResolvedStar star;
    ResolvedMaterial material;
    std::optional<double> constant_qpr;
    MeanEfficiency qpr_mean;
    MeanEfficiencyCurve qpr_curve;  // the same on threads, sharing qpr_mean's caches
    std::vector<std::string> notes; // e.g. the out-of-band note, for warnings
};
BetaInputs resolve_beta_inputs(const StarOptions& star, const MaterialOptions& material,
                               const EfficiencyOptions& efficiency);

// <Q_pr> and beta at each radius.
struct BetaGrid {
    std::vector<double> radii_um, qpr_mean, beta;
};
// <Q_pr> and beta at each radius; <Q_pr> from in.qpr_curve on `threads` threads.
BetaGrid compute_beta_grid(const BetaModel& model, const BetaInputs& in,
                           const std::vector<double>& radii_um, unsigned threads);

} // namespace holdfast::cli
