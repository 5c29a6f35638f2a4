// Planck means of Q_abs on nodes fixed per grain (PlanckNodeRule, grain_spectral_rule.cpp)
// against the reference: the adaptive quadrature (spectral_mean.cpp) of the grain's exact
// efficiencies over the same Planck band at tolerance 1e-10, for tabulated indices, and the
// temperatures solved with either.
#include <catch2/catch.hpp>

#include <cmath>
#include <complex>
#include <vector>

#include "holdfast/grain.hpp"
#include "holdfast/material.hpp"
#include "holdfast/parse.hpp"
#include "holdfast/spectral_mean.hpp"
#include "holdfast/star.hpp"
#include "holdfast/units.hpp"
#include "synthetic_nk.hpp"

using namespace holdfast;

namespace {
double rel(double a, double b) { return std::abs(a - b) / std::abs(b); }

// An invented silicate-like table (the benchmark's): n = 1.7, k = 0.03 plus 10 and 18 um bands.
std::shared_ptr<const OpticalConstants> banded_table() {
    NkTable t;
    t.source = "invented for the test";
    t.format = "in memory";
    for (double lam : log_spaced(0.05, 1.0e5, 300)) {
        const double l10 = std::log(lam / 10.0) / 0.15;
        const double l18 = std::log(lam / 18.0) / 0.2;
        const double k = 0.03 + 0.8 * std::exp(-l10 * l10) + 0.4 * std::exp(-l18 * l18);
        t.rows.push_back({lam, 1.7, k});
    }
    return tabulated_index(std::move(t));
}

// A nearly transparent ice-like table, 0.1-1e5 um: n 1.31-1.33 with a wiggle at the rows,
// k from 1e-8 to 1e-3 (log-linear), so Q_abs has narrow resonances where x > 2.
std::shared_ptr<const OpticalConstants> transparent_table() {
    return tabulated_index(testing::transparent_nk_table(1.0e5, 121, 1e5, "invented for the test"));
}

// The reference Planck mean: the adaptive quadrature of grain_efficiencies over the Planck
// band (integration_band with the settings' excluded fraction, as planck_qabs_mean uses),
// cut at the table's rows, to 1e-10.
double reference_planck_mean(const GrainOptics& o, double radius_um, double t_K,
                             const GrainEfficiencySettings& settings) {
    const std::shared_ptr<const Spectrum> planck = planck_spectrum(kelvin(t_K));
    SpectralMeanSettings s = settings.spectral;
    s.relative_tolerance = 1e-10;
    s.subintervals = 64;
    s.breakpoints_um = o.core->breakpoints_um();
    const WavelengthBand band = integration_band(*planck, s.excluded_flux_fraction);
    const std::function<double(double)> q = [&](double wavelength_um) {
        return grain_efficiencies(o, radius_um, wavelength_um, settings).q_abs;
    };
    return spectral_mean(q, *planck, band, s);
}
} // namespace

TEST_CASE("Planck means on fixed nodes equal the adaptive reference", "[grain_optics][planck]") {
    // Tolerance: planck_qabs_mean promises the spectral tolerance (1e-6, the library's
    // default, and 1e-5, the commands'); the node rule's interpolation test bounds its error by
    // that, and it is held to a tenth of the tighter one, "well below" (measured: at most
    // 5.2e-13; the panels cut at the table's rows leave Q_abs smooth on each, so
    // the 8-point rule converges far beyond the test that accepted it).
    for (const double tolerance : {1e-5, 1e-6})
        for (const bool transparent : {false, true}) {
            GrainEfficiencySettings settings;
            settings.spectral.relative_tolerance = tolerance;
            GrainOptics o;
            o.core = transparent ? transparent_table() : banded_table();
            // The transparent table up to 1 um: at 30 um its resonances (k ~ 1e-8, x ~ 600) make
            // the adaptive reference itself give up at 1e-10 (GSL roundoff).
            for (const double s_um : {0.03, 1.0, 30.0}) {
                if (transparent && s_um > 1.0) continue;
                const PlanckMean fast = planck_qabs_mean(o, s_um, settings);
                for (const double t_K : {15.0, 60.0, 300.0, 1500.0}) {
                    INFO((transparent ? "transparent" : "banded")
                         << " table, tolerance " << tolerance << ", s = " << s_um
                         << " um, T = " << t_K << " K");
                    const double a = fast(t_K);
                    const double b = reference_planck_mean(o, s_um, t_K, settings);
                    INFO("node rule " << a << ", reference " << b << ", rel " << rel(a, b));
                    REQUIRE(std::isfinite(a));
                    CHECK(rel(a, b) < 1e-7);
                }
            }
        }
}

TEST_CASE("temperatures with node Planck means equal those with the reference",
          "[grain_optics][planck][temperature]") {
    // The same grain's temperatures with the reference Planck mean of the test above:
    // d ln T = -d ln<Q>_T / (4 + d ln<Q>_T / d ln T), so a 1e-7 difference in the mean is
    // at most ~5e-8 in T (the slope is between -1 and 2 here); held to 1e-6 relative (the
    // target asked for), with the solver's own 1e-9 on top (measured: below 1e-15). The residual
    // measures the root search against the Planck mean it used, so it stays below 1e-8 either way
    // (the requirement, tests/grain_optics_test.cpp).
    const Star sun_star = sun();
    const GrainEfficiencySettings settings;
    GrainOptics o;
    o.core = banded_table();
    const double s_um = 1.0;
    const double q_star = starlight_qabs_mean(o, sun_star.spectrum, settings).mean(s_um);
    const GrainTemperatureModel fast(sun_star.luminosity, sun_star.radius, q_star,
                                     planck_qabs_mean(o, s_um, settings));
    const GrainTemperatureModel reference(
        sun_star.luminosity, sun_star.radius, q_star,
        [&](double t_K) { return reference_planck_mean(o, s_um, t_K, settings); });
    std::vector<Length> distances;
    for (double au : {0.1, 1.0, 10.0, 100.0})
        distances.push_back(astronomical_units(au));
    const std::vector<TemperatureSolution> a = fast.solve(distances);
    const std::vector<TemperatureSolution> b = reference.solve(distances);
    for (std::size_t i = 0; i < distances.size(); ++i) {
        INFO("distance " << in_astronomical_units(distances[i]) << " au: "
                         << a[i].temperature.value() << " K against " << b[i].temperature.value()
                         << " K, rel " << rel(a[i].temperature.value(), b[i].temperature.value()));
        REQUIRE(std::isfinite(a[i].temperature.value()));
        CHECK(rel(a[i].temperature.value(), b[i].temperature.value()) < 1e-6);
        CHECK(std::abs(a[i].balance_residual) < 1e-8);
        CHECK(std::abs(fast.balance_residual(distances[i], a[i].temperature)) < 1e-8);
    }
}

TEST_CASE("node Planck means at a tight tolerance and for coated tabulated grains",
          "[grain_optics][planck]") {
    // Tolerance 1e-8 (below the fixed rule's 1e-7, so a constant index takes the nodes too)
    // against the reference at 1e-10: held to 1e-8 (the promised tolerance). A coated grain
    // of the banded table in an ice-like constant mantle: same 1e-7 as the first test.
    GrainEfficiencySettings tight;
    tight.spectral.relative_tolerance = 1e-8;
    GrainOptics silicate;
    silicate.core = constant_index({1.7, 0.03});
    for (const double t_K : {40.0, 700.0}) {
        const double a = planck_qabs_mean(silicate, 0.5, tight)(t_K);
        CHECK(rel(a, reference_planck_mean(silicate, 0.5, t_K, tight)) < 1e-8);
    }
    GrainOptics coated;
    coated.core = banded_table();
    coated.mantle = constant_index({1.31, 0.01});
    coated.core_radius_fraction = 0.7;
    const GrainEfficiencySettings settings;
    const PlanckMean fast = planck_qabs_mean(coated, 2.0, settings);
    for (const double t_K : {30.0, 500.0}) {
        const double a = fast(t_K);
        const double b = reference_planck_mean(coated, 2.0, t_K, settings);
        INFO("T = " << t_K << " K: " << a << " against " << b);
        CHECK(rel(a, b) < 1e-7);
    }
}
