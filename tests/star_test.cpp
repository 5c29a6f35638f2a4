// The star: Stefan-Boltzmann relations, the IAU nominal Sun, custom stars, Planck's law and
// tabulated spectra.
#include <catch2/catch.hpp>

#include "blackbody_reference.hpp"

#include <cmath>
#include <cstdio>
#include <filesystem>
#include <fstream>
#include <numbers>
#include <string>

#include "holdfast/errors.hpp"
#include "holdfast/star.hpp"

using namespace holdfast;
using Catch::Matchers::Contains;

namespace {

std::string error_of(const std::function<void()>& f) {
    try {
        f();
    } catch (const InputError& e) {
        return e.what();
    }
    return "(no InputError)";
}

// A file in the system temp folder, removed at the end of the test.
struct TempFile {
    std::filesystem::path path;
    TempFile(const std::string& name, const std::string& text)
        : path(std::filesystem::temp_directory_path() / ("holdfast_star_test_" + name)) {
        std::ofstream(path) << text;
    }
    ~TempFile() { std::filesystem::remove(path); }
};

using holdfast::test::reference_fraction_below;

} // namespace

TEST_CASE("Stefan-Boltzmann relations invert each other", "[star]") {
    // Round trip (identity): only rounding, a few ulp through pow and sqrt.
    const Length r = solar_radii(2.3);
    const Temperature t = kelvin(7250.0);
    const Power l = stefan_boltzmann_luminosity(r, t);
    CHECK(stefan_boltzmann_teff(l, r).value() == Approx(t.value()).epsilon(1e-13));
    CHECK(stefan_boltzmann_radius(l, t).value() == Approx(r.value()).epsilon(1e-13));
    // L = 4 pi R^2 sigma T^4 by hand (analytic), CODATA 2018 sigma.
    CHECK(l.value() == Approx(4.0 * std::numbers::pi * r.value() * r.value() *
                              constants::stefan_boltzmann_SI * std::pow(7250.0, 4))
                           .epsilon(1e-13));
}

TEST_CASE("the Sun is the IAU 2015 B3 nominal Sun", "[star]") {
    const Star s = sun();
    // IAU 2015 Resolution B3 nominal values, exact by definition: equality.
    CHECK(s.luminosity.value() == 3.828e26);
    CHECK(s.teff.value() == 5772.0);
    CHECK(s.radius.value() == 6.957e8);
    // M = GM_sun (IAU 2015 B3: 1.3271244e20 m^3 s^-2) / G (CODATA 2018): rounding only.
    CHECK(s.mass.value() == Approx(1.3271244e20 / 6.67430e-11).epsilon(1e-15));
    // The nominal values satisfy Stefan-Boltzmann to 2.4e-6 (computed with CODATA 2018
    // sigma; IAU 2015 B3 chose them consistent): tolerance 1e-5.
    CHECK(stefan_boltzmann_luminosity(s.radius, s.teff).value() == Approx(3.828e26).epsilon(1e-5));
    REQUIRE(s.spectrum);
    CHECK_THAT(s.spectrum->describe(), Contains("5772"));
}

TEST_CASE("Planck B_lambda agrees with astropy", "[star][planck]") {
    // Reference values from astropy 5.2.1 (Debian python3-astropy, CODATA 2018), made with:
    //   /usr/bin/python3 -c "from astropy.modeling.models import BlackBody; import astropy.units as
    //   u;
    //     bb = BlackBody(temperature=T*u.K, scale=1.0*u.W/(u.m**2*u.sr*u.um));
    //     print(bb(lam*u.um).to_value(u.W/(u.m**2*u.sr*u.um)))"
    // Tolerance 1e-10: the same exact constants; only rounding in exp/expm1 differs.
    struct Case {
        double t_K, wavelength_um, b;
    };
    const Case cases[] = {
        {5772, 0.1, 177.96755350699777},        {5772, 0.5, 26238540.56859585},
        {5772, 1.0, 10736224.706023872},        {5772, 10.0, 4207.349474735922},
        {5772, 1000.0, 4.772203027608802e-05},  {3000, 0.1, 1.7680673783294406e-08},
        {3000, 0.5, 260268.33955405338},        {3000, 1.0, 992403.3330070705},
        {3000, 10.0, 1935.347225527881},        {3000, 1000.0, 2.477498489332888e-05},
        {10000, 0.1, 6720461.386135188},        {10000, 0.5, 227261027.9303971},
        {10000, 1.0, 37040256.13720853},        {10000, 10.0, 7696.9171119559105},
        {10000, 1000.0, 8.272209360080378e-05},
    };
    for (const auto& c : cases) {
        INFO("T = " << c.t_K << " K, lambda = " << c.wavelength_um << " um");
        const double b = planck_b_lambda_W_m2_sr_um(c.wavelength_um, c.t_K);
        REQUIRE(std::isfinite(b));
        CHECK(b == Approx(c.b).epsilon(1e-10));
        // The spectrum object returns the same shape.
        CHECK(planck_spectrum(kelvin(c.t_K))->f_lambda_shape(c.wavelength_um) == b);
    }
}

TEST_CASE("Planck B_lambda does not overflow at the extremes", "[star][planck]") {
    // Far Wien side: exp(hc/lambda k T) ~ exp(4.8e6) would overflow; the true value underflows.
    const double wien = planck_b_lambda_W_m2_sr_um(1e-3, 3.0);
    CHECK_FALSE(std::isnan(wien));
    CHECK(wien == 0.0);
    // Just below the switch to the exp(-x) form (x = 50) and above it: the two forms agree
    // (identity; tolerance = rounding).
    const double t = 1000.0;
    const double c2 =
        constants::planck_J_s * constants::speed_of_light_m_s / constants::boltzmann_J_K * 1e6;
    const double lam50 = c2 / (50.0 * t);
    CHECK(planck_b_lambda_W_m2_sr_um(lam50 * (1 + 1e-12), t) ==
          Approx(planck_b_lambda_W_m2_sr_um(lam50 * (1 - 1e-12), t)).epsilon(1e-9));
    // Far Rayleigh-Jeans side: B_lambda -> 2 c k T / lambda^4 (analytic limit); at x ~ 1.4e-5
    // the next-order correction is x/2 ~ 7e-6, so tolerance 2e-5.
    const double lam_um = 1e6, temp = 1000.0;
    const double rj = 2.0 * constants::speed_of_light_m_s * constants::boltzmann_J_K * temp /
                      std::pow(lam_um * 1e-6, 4) * 1e-6;
    CHECK(planck_b_lambda_W_m2_sr_um(lam_um, temp) == Approx(rj).epsilon(2e-5));
    CHECK(planck_b_lambda_W_m2_sr_um(0.0, 5772.0) == 0.0);
    CHECK(planck_b_lambda_W_m2_sr_um(-1.0, 5772.0) == 0.0);
}

TEST_CASE("Planck B_lambda peaks where Wien's displacement law says", "[star][planck]") {
    // Wien's displacement constant b = 2897.771955 um K (CODATA 2018).
    const double b = 2897.771955;
    for (double t : {3000.0, 5772.0, 10000.0, 40000.0}) {
        // Golden-section search for the maximum of B_lambda in ln(lambda), to ~1e-12.
        double lo = std::log(0.3 * b / t), hi = std::log(3.0 * b / t);
        const double g = (std::sqrt(5.0) - 1.0) / 2.0;
        auto f = [&](double u) { return planck_b_lambda_W_m2_sr_um(std::exp(u), t); };
        for (int i = 0; i < 200 && hi - lo > 1e-12; ++i) {
            const double a = hi - g * (hi - lo), c = lo + g * (hi - lo);
            if (f(a) > f(c))
                hi = c;
            else
                lo = a;
        }
        const double peak_um = std::exp(0.5 * (lo + hi));
        INFO("T = " << t);
        // Near the maximum B varies quadratically, so rounding in B (1e-16) limits the peak
        // position to ~1e-8 relative: tolerance 1e-7.
        CHECK(peak_um * t == Approx(b).epsilon(1e-7));
    }
}

TEST_CASE("blackbody fraction below a wavelength", "[star][planck]") {
    const double t = 5772.0;
    for (double lam : {0.1, 0.3, 0.5, 0.7, 1.0, 2.0, 4.0, 10.0, 40.0}) {
        INFO("lambda = " << lam << " um");
        const double below = blackbody_fraction_below(lam, t);
        const double above = blackbody_fraction_above(lam, t);
        REQUIRE(std::isfinite(below));
        REQUIRE(std::isfinite(above));
        // Complement (identity): rounding only.
        CHECK(below + above == Approx(1.0).epsilon(1e-14));
        // Independent long exponential series (Widger & Woodall 1976): both sides exact to
        // rounding; tolerance 1e-12 relative, plus 1e-15 absolute for the tiny UV fractions.
        CHECK(below == Approx(reference_fraction_below(lam, t)).epsilon(1e-12).margin(1e-15));
    }
    // At the Wien peak, 25.0% of the flux lies at shorter wavelengths (from memory: the
    // classic blackbody-fraction tables give 0.2500 at lambda T = 2898 um K); tolerance 1e-3.
    CHECK(blackbody_fraction_below(2897.771955 / t, t) == Approx(0.25).margin(1e-3));
    // Limits (analytic): nothing below 0, everything below infinity.
    CHECK(blackbody_fraction_below(0.0, t) == 0.0);
    CHECK(blackbody_fraction_above(INFINITY, t) == 0.0);
    // Long-wavelength tail from the power series: above(lambda) -> (15/pi^4) x^3/3 for
    // x << 1 (Rayleigh-Jeans, analytic); at x ~ 2.5e-4 the next term is -3x/8 ~ 1e-4 relative.
    const double c2 =
        constants::planck_J_s * constants::speed_of_light_m_s / constants::boltzmann_J_K * 1e6;
    const double x = c2 / (1e4 * t);
    CHECK(blackbody_fraction_above(1e4, t) ==
          Approx(15.0 / std::pow(std::numbers::pi, 4) * x * x * x / 3.0).epsilon(2e-4));
    // Outside a band = below(low) + above(high).
    CHECK(blackbody_flux_fraction_outside(0.3, 3.0, t) ==
          Approx(blackbody_fraction_below(0.3, t) + blackbody_fraction_above(3.0, t)));
    CHECK_THROWS_AS(blackbody_fraction_below(1.0, -5.0), InputError);
}

TEST_CASE("custom stars fill the missing value by Stefan-Boltzmann", "[star]") {
    StarInputs in;
    in.mass = solar_masses(1.5);
    in.teff = kelvin(6500.0);
    in.radius = solar_radii(1.8);
    SECTION("luminosity from R and T") {
        const Star s = custom_star(in);
        CHECK(s.luminosity.value() ==
              Approx(stefan_boltzmann_luminosity(*in.radius, *in.teff).value()).epsilon(1e-14));
        REQUIRE(s.spectrum);
        CHECK_THAT(s.spectrum->describe(), Contains("6500"));
    }
    SECTION("temperature from L and R") {
        const Power l = stefan_boltzmann_luminosity(*in.radius, *in.teff);
        in.teff.reset();
        in.luminosity = l;
        CHECK(custom_star(in).teff.value() == Approx(6500.0).epsilon(1e-13));
    }
    SECTION("radius from L and T") {
        const Power l = stefan_boltzmann_luminosity(*in.radius, *in.teff);
        in.radius.reset();
        in.luminosity = l;
        CHECK(custom_star(in).radius.value() == Approx(solar_radii(1.8).value()).epsilon(1e-13));
    }
    SECTION("three consistent values within 1% are accepted") {
        in.luminosity = stefan_boltzmann_luminosity(*in.radius, *in.teff) * 1.005;
        CHECK(custom_star(in).luminosity.value() == Approx(in.luminosity->value()));
    }
    SECTION("three that disagree are refused, showing the mismatch") {
        in.luminosity = stefan_boltzmann_luminosity(*in.radius, *in.teff) * 1.05;
        CHECK_THAT(error_of([&] { custom_star(in); }),
                   Contains("disagree") && Contains("--luminosity") && Contains("--teff") &&
                       Contains("--star-radius") && Contains("5% apart") && Contains("within 1%"));
    }
    SECTION("mass is required") {
        in.mass.reset();
        CHECK_THAT(error_of([&] { custom_star(in); }), Contains("--mass"));
    }
    SECTION("too few of L, T, R names what is missing") {
        in.radius.reset();
        CHECK_THAT(error_of([&] { custom_star(in); }),
                   Contains("missing: --luminosity, --star-radius"));
    }
    SECTION("non-positive values are refused") {
        in.teff = kelvin(-10.0);
        CHECK_THAT(error_of([&] { custom_star(in); }), Contains("--teff"));
    }
}

TEST_CASE("tabulated spectra: reading, interpolation, flux fractions", "[star][spectrum]") {
    SECTION("a sampled Planck curve reproduces the analytic fractions") {
        // 600 log-spaced rows of B_lambda(5772 K) from 0.05 to 1000 um, in nm to exercise the
        // unit conversion.
        std::string text = "# a Planck curve at 5772 K\n# wavelength_nm F_lambda\n\n";
        for (int i = 0; i < 600; ++i) {
            const double lam = 0.05 * std::pow(1000.0 / 0.05, i / 599.0);
            char line[80];
            std::snprintf(line, sizeof line, "%.17g, %.17g\n", lam * 1000.0,
                          planck_b_lambda_W_m2_sr_um(lam, 5772.0));
            text += line;
        }
        TempFile f("planck.txt", text);
        const auto s = read_spectrum_file(f.path.string(), micrometres(1e-3));
        CHECK(s->min_wavelength_um() == Approx(0.05).epsilon(1e-12));
        CHECK(s->max_wavelength_um() == Approx(1000.0).epsilon(1e-12));
        // A table node reproduces the value (identity of the interpolant).
        CHECK(s->f_lambda_shape(s->min_wavelength_um()) ==
              Approx(planck_b_lambda_W_m2_sr_um(0.05, 5772.0)).epsilon(1e-12));
        // Log-log between rows 1.7% apart in wavelength: ln B is smooth, the error of the
        // power-law interpolant is second order, ~ (0.017)^2 * x^2/8 ~ 1e-4 at the peak.
        CHECK(s->f_lambda_shape(0.5) ==
              Approx(planck_b_lambda_W_m2_sr_um(0.5, 5772.0)).epsilon(1e-3));
        // Outside the table the spectrum is 0 (documented).
        CHECK(s->f_lambda_shape(0.01) == 0.0);
        // Flux fractions against the analytic blackbody fraction renormalised to the table's
        // band (the table misses < 1e-9 of the flux): interpolation error ~1e-4 as above.
        for (double lam : {0.3, 0.5, 1.0, 3.0}) {
            INFO("lambda = " << lam);
            CHECK(s->flux_fraction_below(lam) ==
                  Approx(blackbody_fraction_below(lam, 5772.0)).epsilon(3e-4));
        }
        CHECK(s->flux_fraction_below(0.01) == 0.0);
        CHECK(s->flux_fraction_below(2000.0) == 1.0);
    }
    SECTION("refusals name the file and the line") {
        auto refused = [](const std::string& name, const std::string& text) {
            TempFile f(name, text);
            try {
                read_spectrum_file(f.path.string());
            } catch (const DataFileError& e) {
                return std::string(e.what());
            }
            return std::string("(no DataFileError)");
        };
        CHECK_THAT(refused("unsorted.txt", "0.1 1\n0.3 2\n0.2 3\n0.4 1\n"),
                   Contains("line 3") && Contains("sorted"));
        CHECK_THAT(refused("dup.txt", "# c\n0.1 1\n0.2 2\n0.2 3\n"),
                   Contains("line 4") && Contains("duplicate"));
        CHECK_THAT(refused("neg.txt", "0.1 1\n0.2 -2\n0.3 3\n"),
                   Contains("line 2") && Contains("negative"));
        CHECK_THAT(refused("negwl.txt", "-0.1 1\n0.2 2\n0.3 3\n"),
                   Contains("line 1") && Contains("not > 0"));
        CHECK_THAT(refused("nan.txt", "0.1 1\n0.2 nan\n0.3 3\n"),
                   Contains("line 2") && Contains("not finite"));
        CHECK_THAT(refused("short.txt", "0.1 1\n0.2 2\n"), Contains("at least 3"));
        CHECK_THAT(refused("garbage.txt", "0.1 1\n0.2 two\n0.3 3\n"),
                   Contains("line 2") && Contains("'two'"));
        CHECK_THAT(refused("cols.txt", "0.1 1\n0.2 2 5\n0.3 3\n"),
                   Contains("line 2") && Contains("expected 2"));
        CHECK_THAT(refused("zero.txt", "0.1 0\n0.2 0\n0.3 0\n"), Contains("0 on every line"));
        CHECK_THROWS_AS(read_spectrum_file("/nonexistent/holdfast/spectrum.txt"), DataFileError);
    }
    SECTION("zero flux rows interpolate linearly") {
        const auto s = tabulated_spectrum({1.0, 2.0, 3.0}, {0.0, 2.0, 2.0}, "test");
        // Linear between (1, 0) and (2, 2): analytic.
        CHECK(s->f_lambda_shape(1.5) == Approx(1.0).epsilon(1e-14));
        // Exact integrals: 1 on [1,2] (triangle), 2 on [2,3]; below 2 um: 1/3.
        CHECK(s->flux_fraction_below(2.0) == Approx(1.0 / 3.0).epsilon(1e-14));
    }
}
