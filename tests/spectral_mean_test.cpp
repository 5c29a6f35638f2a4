// Spectrum-weighted means: band from the blackbody fraction, Stefan-Boltzmann, constant and
// step efficiencies, convergence, cost, errors, and the out-of-band plans.
#include <catch2/catch.hpp>

#include "blackbody_reference.hpp"

#include <cmath>
#include <numbers>

#include <gsl/gsl_errno.h>

#include "holdfast/errors.hpp"
#include "holdfast/material.hpp"
#include "holdfast/spectral_mean.hpp"

using namespace holdfast;
using Catch::Matchers::Contains;

namespace {

using holdfast::test::reference_fraction_below;

} // namespace

TEST_CASE("the integration band leaves out the requested flux", "[spectral]") {
    for (double t : {3000.0, 5772.0, 20000.0}) {
        const auto s = planck_spectrum(kelvin(t));
        const WavelengthBand band = integration_band(*s, 1e-6);
        INFO("T = " << t << " K, band " << band.low_um << " - " << band.high_um << " um");
        REQUIRE(std::isfinite(band.low_um));
        REQUIRE(std::isfinite(band.high_um));
        // Half of 1e-6 on each side, by the analytic fractions; the bisection stops at
        // 1e-12 in ln(lambda), far below the 1e-6 relative tolerance used here.
        CHECK(blackbody_fraction_below(band.low_um, t) == Approx(5e-7).epsilon(1e-6));
        CHECK(blackbody_fraction_above(band.high_um, t) == Approx(5e-7).epsilon(1e-6));
        // The same band in lambda T for every T (Planck's law depends on lambda T only).
        CHECK(band.low_um * t ==
              Approx(integration_band(*planck_spectrum(kelvin(5772.0)), 1e-6).low_um * 5772.0)
                  .epsilon(1e-9));
    }
    CHECK_THROWS_AS(integration_band(*planck_spectrum(kelvin(5772.0)), 0.0), InputError);
    CHECK_THROWS_AS(integration_band(*planck_spectrum(kelvin(5772.0)), 0.7), InputError);
}

TEST_CASE("the integral of B_lambda is sigma T^4 / pi", "[spectral]") {
    // Stefan-Boltzmann (analytic): int_0^inf B_lambda dlambda = sigma T^4 / pi.
    const double t = 5772.0;
    const auto s = planck_spectrum(kelvin(t));
    const double exact = constants::stefan_boltzmann_SI * std::pow(t, 4) / std::numbers::pi;
    SpectralMeanSettings tight;
    tight.relative_tolerance = 1e-12;
    auto one = [](double) { return 1.0; };
    // Over a band leaving out 1e-13 of the flux: the 1e-10 tolerance covers the quadrature
    // (asked for 1e-12) and the omitted flux.
    const double wide = spectral_integral(one, *s, integration_band(*s, 1e-13), tight);
    REQUIRE(std::isfinite(wide));
    CHECK(wide == Approx(exact).epsilon(1e-10));
    // Over the default band: exactly (1 - 1e-6) of it, same tolerance.
    const double standard = spectral_integral(one, *s, integration_band(*s, 1e-6), tight);
    CHECK(standard == Approx((1.0 - 1e-6) * exact).epsilon(1e-10));
}

TEST_CASE("a constant efficiency comes back unchanged", "[spectral]") {
    const auto s = planck_spectrum(kelvin(5772.0));
    for (double q : {0.0, 1e-5, 0.37, 2.0}) {
        const auto r = spectral_mean_with_diagnostics([q](double) { return q; }, *s,
                                                      integration_band(*s, 1e-6));
        INFO("Q = " << q);
        REQUIRE(std::isfinite(r.mean));
        // The same nodes and weights in numerator and denominator: rounding only.
        CHECK(r.mean == Approx(q).epsilon(1e-13).margin(1e-300));
        // Smooth Q: the first Gauss-Kronrod pass is enough, 8 pieces x 21 points.
        CHECK(r.q_evaluations == 168);
    }
}

TEST_CASE("a step in Q gives the blackbody fraction below the step", "[spectral]") {
    const double t = 5772.0;
    const auto s = planck_spectrum(kelvin(t));
    const WavelengthBand band = integration_band(*s, 1e-6);
    SpectralMeanSettings settings;
    settings.relative_tolerance = 1e-9;
    for (double step_um : {0.3, 0.5, 0.8, 2.0, 7.0}) {
        auto q = [step_um](double lam) { return lam < step_um ? 1.0 : 0.0; };
        const auto r = spectral_mean_with_diagnostics(q, *s, band, settings);
        // Analytic: the fraction of flux below the step, within the band, renormalised to it.
        const double lo = reference_fraction_below(band.low_um, t);
        const double hi = reference_fraction_below(band.high_um, t);
        const double expected = (reference_fraction_below(step_um, t) - lo) / (hi - lo);
        INFO("step at " << step_um << " um; " << r.q_evaluations << " evaluations");
        REQUIRE(std::isfinite(r.mean));
        // qag bisects down to the discontinuity; asked for 1e-9, allow 1e-8.
        CHECK(r.mean == Approx(expected).epsilon(1e-8));
        CHECK(r.estimated_relative_error < 1e-8);
    }
}

TEST_CASE("tighter tolerance agrees; smooth Q is cheap", "[spectral]") {
    const auto s = planck_spectrum(kelvin(5772.0));
    const WavelengthBand band = integration_band(*s, 1e-6);
    // A smooth Rayleigh-to-geometric-like efficiency, and a rippled one (Mie-like interference
    // ripple, 20 periods per e-fold of wavelength).
    auto smooth = [](double lam) { return 1.0 / (1.0 + std::pow(0.3 / lam, -4.0)); };
    auto rippled = [](double lam) { return 1.0 + 0.3 * std::sin(120.0 * std::log(lam)); };
    SpectralMeanSettings loose, tight;
    loose.relative_tolerance = 1e-6;
    tight.relative_tolerance = 1e-11;
    for (const auto& [name, q] :
         {std::pair<const char*, std::function<double(double)>>{"smooth", smooth},
          {"rippled", rippled}}) {
        const auto a = spectral_mean_with_diagnostics(q, *s, band, loose);
        const auto b = spectral_mean_with_diagnostics(q, *s, band, tight);
        INFO(name << ": " << a.q_evaluations << " and " << b.q_evaluations << " evaluations");
        REQUIRE(std::isfinite(a.mean));
        REQUIRE(std::isfinite(b.mean));
        // Convergence: the loose result is within its requested tolerance of the tight one.
        CHECK(a.mean == Approx(b.mean).epsilon(1e-6));
        CHECK(a.estimated_relative_error <= 1e-6);
    }
    // Cost (the beta curve calls this once per radius): a smooth Q in a few hundred calls.
    CHECK(spectral_mean_with_diagnostics(smooth, *s, band, loose).q_evaluations <= 400);
}

TEST_CASE("failures of Q are reported, not swallowed", "[spectral]") {
    // As in main.cpp: GSL's default handler would abort instead of returning a status.
    gsl_set_error_handler_off();
    const auto s = planck_spectrum(kelvin(5772.0));
    auto nan_q = [](double lam) { return lam > 1.0 ? std::nan("") : 1.0; };
    try {
        spectral_mean(nan_q, *s);
        FAIL("no exception for a NaN efficiency");
    } catch (const NumericalError& e) {
        CHECK_THAT(std::string(e.what()), Contains("not a finite number"));
    }
    // An exception from Q passes through GSL unchanged (type and message).
    auto throwing_q = [](double lam) -> double {
        if (lam > 2.0) throw InputError("test: Q undefined beyond 2 um");
        return 1.0;
    };
    CHECK_THROWS_WITH(spectral_mean(throwing_q, *s), Contains("beyond 2 um"));
    CHECK_THROWS_AS(spectral_mean(throwing_q, *s), InputError);
    // A quadrature that cannot converge names what failed: a Q that oscillates faster than
    // any bisection can follow, with a workspace of only 4 intervals.
    SpectralMeanSettings starved;
    starved.max_intervals_per_piece = 4;
    starved.relative_tolerance = 1e-12;
    auto wild = [](double lam) { return 1.0 + std::sin(1e5 * lam); };
    CHECK_THROWS_WITH(spectral_mean(wild, *s, starved), Contains("GSL qag") && Contains("um"));
    CHECK_THROWS_AS(spectral_mean(wild, *s, starved), NumericalError);
    // Settings and bands out of range.
    SpectralMeanSettings bad;
    bad.relative_tolerance = 0.0;
    CHECK_THROWS_AS(spectral_mean([](double) { return 1.0; }, *s, bad), InputError);
    CHECK_THROWS_AS(spectral_mean([](double) { return 1.0; }, *s, WavelengthBand{2.0, 1.0}),
                    InputError);
}

TEST_CASE("tabulated spectra integrate within their own band", "[spectral]") {
    // F = lambda^-2 on [1, 10] um: int F = 0.9; fraction below 2 um = (1 - 1/2) / 0.9 (analytic).
    const auto s = tabulated_spectrum({1.0, 3.0, 10.0}, {1.0, 1.0 / 9.0, 0.01}, "power law");
    const WavelengthBand band = integration_band(*s, 1e-6);
    CHECK(band.low_um >= 1.0);
    CHECK(band.high_um <= 10.0);
    CHECK(s->flux_fraction_below(2.0) == Approx(0.5 / 0.9).epsilon(1e-13));
    // <lambda> = int lambda^-1 / int lambda^-2 = ln(10) / 0.9 over the whole table (analytic),
    // and the band leaves out 1e-6 of the flux: tolerance 1e-5.
    const double mean = spectral_mean([](double lam) { return lam; }, *s);
    CHECK(mean == Approx(std::log(10.0) / 0.9).epsilon(1e-5));
}

namespace {
std::shared_ptr<const OpticalConstants> table_0p2_to_20um() {
    NkTable t;
    t.source = "test table";
    t.format = "test";
    t.rows = {{0.2, 1.5, 0.01}, {2.0, 1.6, 0.02}, {20.0, 1.7, 0.5}};
    return tabulated_index(t);
}
} // namespace

TEST_CASE("out-of-band plans: refuse, hold, limit the band", "[spectral][material]") {
    const auto s = planck_spectrum(kelvin(5772.0));
    const auto optics = table_0p2_to_20um();
    SECTION("refuse names both ranges") {
        try {
            plan_spectral_band(*s, optics, OutOfBand::refuse);
            FAIL("not refused");
        } catch (const InputError& e) {
            const std::string m = e.what();
            CHECK_THAT(m, Contains("0.2-20 um") && Contains("needs") && Contains("--out-of-band"));
        }
    }
    SECTION("hold keeps the band and wraps the optics") {
        const auto plan = plan_spectral_band(*s, optics, OutOfBand::hold_end_values);
        CHECK(plan.dropped_flux_fraction == 0.0);
        CHECK(plan.optics->index_at_um(0.05) == optics->index_at_um(0.2));
        CHECK(plan.optics->index_at_um(100.0) == optics->index_at_um(20.0));
        CHECK_THAT(plan.note, Contains("held"));
        // Q from the held optics is defined over the whole band.
        const double m = spectral_mean(
            [&](double lam) { return plan.optics->index_at_um(lam).imag(); }, *s, plan.band);
        CHECK(std::isfinite(m));
    }
    SECTION("limit-band integrates where the table is and reports the flux dropped") {
        const auto plan = plan_spectral_band(*s, optics, OutOfBand::limit_band);
        CHECK(plan.band.low_um == 0.2);
        CHECK(plan.band.high_um == 20.0);
        // Dropped = flux outside 0.2-20 um beyond the 1e-6 excluded anyway (analytic
        // blackbody fractions); rounding only.
        const double outside = blackbody_flux_fraction_outside(0.2, 20.0, 5772.0);
        CHECK(plan.dropped_flux_fraction == Approx(outside - 1e-6).epsilon(1e-9));
        CHECK_THAT(plan.note, Contains("left out"));
        // <Q = 1> over the limited band is still 1: renormalised.
        CHECK(spectral_mean([](double) { return 1.0; }, *s, plan.band) ==
              Approx(1.0).epsilon(1e-13));
    }
    SECTION("optics that cover the band need no plan") {
        NkTable wide;
        wide.source = "wide";
        wide.rows = {{0.01, 1.5, 0.01}, {1e4, 1.6, 0.02}};
        const auto plan = plan_spectral_band(*s, tabulated_index(wide), OutOfBand::refuse);
        CHECK(plan.note.empty());
    }
}

TEST_CASE("a Q with kinks at every row of a dense table converges", "[spectral]") {
    // Interpolated optical constants have a kink at every table row; QUADPACK's roundoff
    // heuristic trips on such integrands, and the pieces are then split and retried.
    gsl_set_error_handler_off();
    NkTable t;
    t.source = "zigzag";
    for (int i = 0; i < 600; ++i) {
        const double lam = 0.1 * std::pow(1200.0, i / 599.0);
        t.rows.push_back({lam, 1.5 + 0.3 * std::sin(1.7 * i), 0.5 + 0.4 * std::sin(2.3 * i)});
    }
    const auto optics = tabulated_index(t);
    const auto s = planck_spectrum(kelvin(5772.0));
    const WavelengthBand band = integration_band(*s, 1e-6);
    auto q = [&](double lam) { return optics->index_at_um(lam).imag(); };
    SpectralMeanSettings normal, tight;
    tight.relative_tolerance = 1e-9;
    const auto a = spectral_mean_with_diagnostics(q, *s, band, normal);
    const auto b = spectral_mean_with_diagnostics(q, *s, band, tight);
    INFO(a.q_evaluations << " and " << b.q_evaluations << " evaluations");
    REQUIRE(std::isfinite(a.mean));
    REQUIRE(std::isfinite(b.mean));
    // Convergence: the default result within its requested tolerance of the tight one.
    CHECK(a.mean == Approx(b.mean).epsilon(1e-6));
    CHECK(a.estimated_relative_error <= 1e-6);
    CHECK(b.estimated_relative_error <= 1e-9);
    // With the table's rows as breakpoints every piece is smooth: the same mean, and about
    // 21 evaluations per row instead of hundreds.
    SpectralMeanSettings with_rows;
    with_rows.breakpoints_um = optics->breakpoints_um();
    const auto c = spectral_mean_with_diagnostics(q, *s, band, with_rows);
    INFO(c.q_evaluations << " evaluations with breakpoints");
    REQUIRE(std::isfinite(c.mean));
    CHECK(c.mean == Approx(b.mean).epsilon(1e-6));
    CHECK(c.estimated_relative_error <= 1e-6);
    CHECK(c.q_evaluations < 30 * 600);
}
