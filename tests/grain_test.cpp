// Grains: beta, critical beta, released orbits, drag time, blow-out search, temperature.
// Every expected value names its source; constant efficiencies make the analytic checks exact.
#include <catch2/catch.hpp>

#include <algorithm>
#include <cmath>
#include <functional>
#include <numbers>
#include <stdexcept>
#include <vector>

#include <gsl/gsl_errno.h>

#include "holdfast/constants.hpp"
#include "holdfast/errors.hpp"
#include "holdfast/grain.hpp"
#include "holdfast/parse.hpp"

using namespace holdfast;
using std::numbers::pi;

namespace {
// As in main.cpp: GSL reports failures by status, which the core turns into exceptions.
const auto gsl_handler = gsl_set_error_handler_off();

const Power sun_luminosity = watts(constants::solar_luminosity_W);
const Mass sun_mass = kilograms(constants::solar_mass_kg);
const Length sun_radius = metres(constants::solar_radius_m);
constexpr double gm_sun = constants::solar_gm_m3_s2;

double rel(double a, double b) { return std::abs(a - b) / std::abs(b); }
} // namespace

TEST_CASE("beta of a perfect absorber around the Sun", "[grain][beta]") {
    // Burns, Lamy & Soter (1979, Icarus 40, 1), eq. 19 and the text after it: for the Sun
    // beta = 5.7e-5 Q_pr / (rho s) with rho in g/cm3 and s in cm. With IAU 2015 and CODATA
    // 2018 values the coefficient is 5.74e-5; tolerance 1% because they give two digits.
    const double b = beta(sun_luminosity, sun_mass, g_per_cm3(1.0), centimetres(1.0), 1.0);
    REQUIRE(std::isfinite(b));
    CHECK(rel(b, 5.7e-5) < 0.01);
    // The coefficient again from its definition 3 L / (16 pi G M c) in g/cm2: an analytic
    // identity, tolerance rounding.
    const double coefficient_cgs = 3.0 * constants::solar_luminosity_W /
                                   (16.0 * pi * gm_sun * constants::speed_of_light_m_s) * 0.1;
    CHECK(rel(b, coefficient_cgs) < 1e-12);
    CHECK(rel(coefficient_cgs, 5.742e-5) < 1e-3); // our constants, 4 digits shown in README

    // beta scales as Q_pr / (rho s) (Burns et al. 1979 eq. 19): exact up to rounding.
    const double b2 = beta(sun_luminosity, sun_mass, g_per_cm3(3.0), micrometres(0.5), 0.7);
    CHECK(rel(b2, 5.742e-5 * 0.7 / (3.0 * 0.5e-4)) < 1e-3);

    // BetaModel gives the same numbers as the free function.
    const BetaModel model(sun_luminosity, sun_mass, g_per_cm3(3.0), [](double) { return 0.7; });
    CHECK(rel(model.beta(micrometres(0.5)), b2) < 1e-14);
    CHECK(rel(model.beta_at_um(0.5), b2) < 1e-14);
    CHECK(model.qpr_mean_at_um(0.5) == 0.7);
}

TEST_CASE("beta refuses nonsense", "[grain][beta]") {
    CHECK_THROWS_AS(beta(sun_luminosity, sun_mass, g_per_cm3(0.0), micrometres(1), 1.0),
                    InputError);
    CHECK_THROWS_AS(beta(sun_luminosity, sun_mass, g_per_cm3(1.0), micrometres(-1), 1.0),
                    InputError);
    CHECK_THROWS_AS(beta(sun_luminosity, sun_mass, g_per_cm3(1.0), micrometres(1), std::nan("")),
                    InputError);
    const BetaModel broken(sun_luminosity, sun_mass, g_per_cm3(1.0),
                           [](double) { return std::nan(""); });
    CHECK_THROWS_AS(broken.beta_at_um(1.0), NumericalError);
    CHECK_THROWS_AS(BetaModel(watts(-1.0), sun_mass, g_per_cm3(1.0), [](double) { return 1.0; }),
                    InputError);
}

TEST_CASE("critical beta for release from a Kepler orbit", "[grain][orbit]") {
    // Analytic: beta_crit = (1 - e^2) / (2 (1 + e cos f)) (derived from the orbital energy in
    // grain.cpp; e.g. Burns et al. 1979 sec. VI for the circular case 1/2). Exact arithmetic,
    // tolerance rounding.
    CHECK(critical_beta({0.0, 0.0}) == 0.5);
    CHECK(critical_beta({0.0, 1.234}) == 0.5);
    const double e = 0.3;
    CHECK(rel(critical_beta({e, 0.0}), (1.0 - e) / 2.0) < 1e-15);
    CHECK(rel(critical_beta({e, pi}), (1.0 + e) / 2.0) < 1e-15);
    CHECK(rel(critical_beta({e, pi / 2}), (1.0 - e * e) / 2.0) < 1e-15);
    CHECK_THROWS_AS(critical_beta({1.0, 0.0}), InputError);
    CHECK_THROWS_AS(critical_beta({-0.1, 0.0}), InputError);
    CHECK_THROWS_AS(critical_beta({0.2, std::nan("")}), InputError);

    // Independent check from the energy (vis-viva, Murray & Dermott 1999 eq. 2.34): a grain
    // released with beta just below beta_crit is bound, just above it is not.
    const double f = 2.1;
    const double r = 2.0 * constants::au_m;
    const double a_parent = r * (1.0 + e * std::cos(f)) / (1.0 - e * e);
    const double v2 = gm_sun * (2.0 / r - 1.0 / a_parent);
    const double bc = critical_beta({e, f});
    auto energy = [&](double b) { return 0.5 * v2 - (1.0 - b) * gm_sun / r; };
    // At beta_crit the energy vanishes; 1e-14 of GM/r is rounding.
    CHECK(std::abs(energy(bc)) < 1e-14 * gm_sun / r);
    CHECK(energy(bc * (1 - 1e-9)) < 0.0);
    CHECK(energy(bc * (1 + 1e-9)) > 0.0);
    CHECK(released_orbit(sun_mass, bc * (1 - 1e-9), {e, f}, metres(r)).bound);
    CHECK_FALSE(released_orbit(sun_mass, bc * (1 + 1e-9), {e, f}, metres(r)).bound);
    CHECK_FALSE(released_orbit(sun_mass, bc, {e, f}, metres(r)).bound); // beta >= beta_crit
}

TEST_CASE("orbit of a grain released from a circular parent", "[grain][orbit]") {
    // Analytic (vis-viva with (1 - beta) G M, release point is the new pericentre):
    // a' = a (1 - beta) / (1 - 2 beta), e' = beta / (1 - beta), q' = a (e.g. Burns et al.
    // 1979, sec. VI). Tolerance rounding.
    const auto beta_value = GENERATE(0.0, 0.01, 0.1, 0.3, 0.45);
    const double a = 5.0 * constants::au_m;
    const ReleasedOrbit o = released_orbit(sun_mass, beta_value, {}, metres(a));
    REQUIRE(o.bound);
    REQUIRE(o.semi_major_axis);
    REQUIRE(o.eccentricity);
    REQUIRE(o.pericentre);
    REQUIRE(o.apocentre);
    CHECK_FALSE(o.speed_at_infinity);
    CHECK(rel(o.semi_major_axis->value(), a * (1 - beta_value) / (1 - 2 * beta_value)) < 1e-13);
    CHECK(std::abs(*o.eccentricity - beta_value / (1 - beta_value)) < 1e-12);
    CHECK(rel(o.pericentre->value(), a) < 1e-13);
    CHECK(rel(o.apocentre->value(),
              o.semi_major_axis->value() * (1.0 + beta_value / (1 - beta_value))) < 1e-12);
}

TEST_CASE("orbit of a grain released from an eccentric parent: vector check", "[grain][orbit]") {
    // Independent computation in Cartesian coordinates: the parent's state from Kepler's
    // orbit (Murray & Dermott 1999 eqs. 2.20, 2.31-2.32), then the grain's energy, angular
    // momentum and eccentricity vector under (1 - beta) G M (eqs. 2.134-2.135, 2.4).
    // Tolerance 1e-11 relative: rounding in two different formula paths.
    const auto [e, f, beta_value] = GENERATE(table<double, double, double>(
        {{0.3, 1.0, 0.2}, {0.6, 0.0, 0.1}, {0.6, pi, 0.7}, {0.9, 2.5, 0.02}, {0.1, -2.0, 0.0}}));
    const double r = 3.0 * constants::au_m;
    const double p = r * (1 + e * std::cos(f));
    const double x = r * std::cos(f), y = r * std::sin(f);
    const double vx = -std::sqrt(gm_sun / p) * std::sin(f);
    const double vy = std::sqrt(gm_sun / p) * (e + std::cos(f));
    const double mu = (1.0 - beta_value) * gm_sun;
    const double energy = 0.5 * (vx * vx + vy * vy) - mu / r;
    const double h = x * vy - y * vx;
    // Eccentricity vector e = (v x h) / mu - r_hat.
    const double ex = vy * h / mu - x / r, ey = -vx * h / mu - y / r;
    const double ecc = std::hypot(ex, ey);

    const ReleasedOrbit o = released_orbit(sun_mass, beta_value, {e, f}, metres(r));
    REQUIRE(o.bound == (energy < 0));
    REQUIRE(o.bound);
    const double a = -mu / (2 * energy);
    CHECK(rel(o.semi_major_axis->value(), a) < 1e-11);
    CHECK(std::abs(*o.eccentricity - ecc) < 1e-11);
    CHECK(rel(o.pericentre->value(), a * (1 - ecc)) < 1e-10);
    CHECK(rel(o.apocentre->value(), a * (1 + ecc)) < 1e-11);
    // The release point lies on the new orbit: q <= r <= Q (rounding allowance 1e-12).
    CHECK(o.pericentre->value() <= r * (1 + 1e-12));
    CHECK(o.apocentre->value() >= r * (1 - 1e-12));
    if (beta_value == 0.0) { // no radiation: the parent's own orbit (identity)
        CHECK(rel(o.semi_major_axis->value(), p / (1 - e * e)) < 1e-12);
        CHECK(std::abs(*o.eccentricity - e) < 1e-12);
    }
}

TEST_CASE("unbound grains leave with the speed the energy allows", "[grain][orbit]") {
    // Analytic: v_inf^2 = 2 E = v^2 - 2 (1 - beta) G M / r (energy conservation).
    const auto [e, f, beta_value] = GENERATE(table<double, double, double>({{0.0, 0.0, 0.5000001},
                                                                            {0.0, 0.0, 0.9},
                                                                            {0.0, 0.0, 1.0},
                                                                            {0.0, 0.0, 3.0},
                                                                            {0.5, 0.0, 0.3},
                                                                            {0.5, pi, 0.8}}));
    const double r = constants::au_m;
    const double a_parent = r * (1 + e * std::cos(f)) / (1 - e * e);
    const double v2 = gm_sun * (2 / r - 1 / a_parent);
    const double v_inf = std::sqrt(v2 - 2 * (1 - beta_value) * gm_sun / r);
    const ReleasedOrbit o = released_orbit(sun_mass, beta_value, {e, f}, metres(r));
    REQUIRE_FALSE(o.bound);
    REQUIRE(o.speed_at_infinity);
    CHECK_FALSE(o.semi_major_axis);
    // 1e-6 relative for the case just above beta_crit, where v_inf^2 is a small difference
    // of large numbers in the test's own formula (cancellation ~1e-16 / 1e-7); else rounding.
    CHECK(rel(o.speed_at_infinity->value(), v_inf) < 1e-6);
    CHECK(std::isfinite(o.speed_at_infinity->value()));
    // beta = 1 from a circular orbit: gravity is cancelled, the grain keeps its orbital speed
    // sqrt(G M / r) (analytic).
    if (e == 0.0 && beta_value == 1.0)
        CHECK(rel(o.speed_at_infinity->value(), std::sqrt(gm_sun / r)) < 1e-14);
}

TEST_CASE("Poynting-Robertson time", "[grain][drag]") {
    // Burns, Lamy & Soter (1979) eq. 50 (after Wyatt & Whipple 1950): t = 400 (r/au)^2 / beta
    // yr for the Sun. We get 400.5; tolerance 1% because their coefficient is rounded to 400.
    const Time t1 = poynting_robertson_time(sun_mass, astronomical_units(1.0), 1.0);
    REQUIRE(std::isfinite(t1.value()));
    CHECK(rel(in_julian_years(t1), 400.0) < 0.01);
    // Scaling with r^2 / (beta M): analytic, tolerance rounding.
    const Time t2 = poynting_robertson_time(solar_masses(2.0), astronomical_units(3.0), 0.1);
    CHECK(rel(t2.value(), t1.value() * 9.0 / 0.2) < 1e-12);
    CHECK_THROWS_AS(poynting_robertson_time(sun_mass, astronomical_units(1.0), 0.0), InputError);
    CHECK_THROWS_AS(poynting_robertson_time(sun_mass, metres(-1.0), 0.1), InputError);
}

namespace {
struct Scan {
    std::vector<double> radii_um, beta;
};
Scan scan(const std::function<double(double)>& f, double lo, double hi, int n) {
    Scan s;
    s.radii_um = log_spaced(lo, hi, n);
    for (double r : s.radii_um)
        s.beta.push_back(f(r));
    return s;
}
} // namespace

TEST_CASE("blow-out radius for a constant efficiency", "[grain][blowout]") {
    // Analytic: with <Q_pr> = 1, beta = C / (rho s), so beta = beta_crit at s = C/(rho beta_crit).
    const BetaModel model(sun_luminosity, sun_mass, g_per_cm3(2.5), [](double) { return 1.0; });
    const std::function<double(double)> f = [&](double s) { return model.beta_at_um(s); };
    const auto e = GENERATE(0.0, 0.5);
    const double bc = critical_beta({e, 0.0});
    const double expected_um = model.beta_at_um(1.0) / bc; // beta proportional to 1/s
    const Scan s = scan(f, 0.01, 1000.0, 200);
    const BlowoutSearch b = search_beta_curve(f, s.radii_um, s.beta, bc);
    REQUIRE(b.blowout_radii_um.size() == 1);
    // The search's tolerance is 1e-6 in radius; allow 2e-6.
    CHECK(rel(b.blowout_radii_um[0], expected_um) < 2e-6);
    // The largest beta is at the smallest radius, at the edge of the range (analytic).
    CHECK(b.peak_at_range_edge);
    CHECK(b.radius_at_beta_max_um == 0.01);
    CHECK(rel(b.beta_max, model.beta_at_um(0.01)) < 1e-14);
    CHECK(b.beta_crit == bc);
}

TEST_CASE("blow-out search on a peaked curve", "[grain][blowout]") {
    // A curve with a known peak: beta = 4 t / (1 + t^2), t = s / s0, maximum 2 at t = 1; it
    // crosses 1/2 where t^2 - 8 t + 1 = 0, t = 4 -+ sqrt(15) (analytic).
    const double s0 = 0.2;
    const std::function<double(double)> f = [&](double s) {
        const double t = s / s0;
        return 4 * t / (1 + t * t);
    };
    const auto points = GENERATE(20, 200, 1000);
    const Scan s = scan(f, 1e-3, 100.0, points);
    const BlowoutSearch b = search_beta_curve(f, s.radii_um, s.beta, 0.5);
    REQUIRE(b.blowout_radii_um.size() == 2);
    // Tolerance: the search's 1e-6 relative in radius, allowance 2e-6.
    CHECK(rel(b.blowout_radii_um[0], s0 * (4 - std::sqrt(15.0))) < 2e-6);
    CHECK(rel(b.blowout_radii_um[1], s0 * (4 + std::sqrt(15.0))) < 2e-6);
    CHECK_FALSE(b.peak_at_range_edge);
    // At a smooth maximum beta is flat to second order: beta_max to 1e-10, its radius to 1e-5
    // (Brent stops at 1e-6 in ln s; the flat top makes the position the weaker number).
    CHECK(rel(b.beta_max, 2.0) < 1e-10);
    CHECK(rel(b.radius_at_beta_max_um, s0) < 1e-5);

    // No crossing when the critical value is above the peak (cool stars): an empty answer.
    const BlowoutSearch none = search_beta_curve(f, s.radii_um, s.beta, 2.5);
    CHECK(none.blowout_radii_um.empty());
    CHECK(rel(none.beta_max, 2.0) < 1e-10);
}

TEST_CASE("an exception from beta during the peak refinement reaches the caller as itself",
          "[grain][blowout]") {
    // The sweep's stop request is an exception thrown from inside beta. GSL's Brent minimiser
    // evaluates beta once while it is set up; that first call must not turn the exception
    // into a "bad function" error (a sweep stopped at that instant used to fail).
    struct Interrupt {};
    const double s0 = 0.2;
    const std::function<double(double)> smooth = [&](double s) {
        const double t = s / s0;
        return 4 * t / (1 + t * t);
    };
    const Scan s = scan(smooth, 1e-3, 100.0, 40);
    int calls = 0;
    const int throw_at = GENERATE(1, 2, 3); // the first call is the set-up's, then iterations
    const std::function<double(double)> f = [&](double r) {
        if (++calls == throw_at) throw Interrupt{};
        return smooth(r);
    };
    // 3 above the peak (2): no blow-out root search, so the minimiser makes the first calls.
    CHECK_THROWS_AS(search_beta_curve(f, s.radii_um, s.beta, 3.0), Interrupt);
}

TEST_CASE("blow-out search edge cases", "[grain][blowout]") {
    const std::function<double(double)> f = [](double s) { return 1.0 / s; };
    // A crossing exactly on a scan radius is reported once (analytic: 1/s = 0.5 at s = 2).
    const std::vector<double> radii{0.5, 1.0, 2.0, 4.0};
    const std::vector<double> betas{2.0, 1.0, 0.5, 0.25};
    const BlowoutSearch b = search_beta_curve(f, radii, betas, 0.5);
    REQUIRE(b.blowout_radii_um.size() == 1);
    CHECK(b.blowout_radii_um[0] == 2.0);
    // Bad grids are refused.
    const std::vector<double> one{1.0};
    CHECK_THROWS_AS(search_beta_curve(f, one, one, 0.5), InputError);
    const std::vector<double> down{2.0, 1.0};
    const std::vector<double> bd{0.5, 1.0};
    CHECK_THROWS_AS(search_beta_curve(f, down, bd, 0.5), InputError);
    const std::vector<double> nanbeta{2.0, std::nan("")};
    CHECK_THROWS_AS(search_beta_curve(f, std::vector<double>{1.0, 2.0}, nanbeta, 0.5),
                    NumericalError);
    // An exception inside the refinement crosses GSL's C code safely and reaches the caller.
    const std::function<double(double)> throws = [](double) -> double {
        throw NumericalError("quadrature failed (test)");
    };
    CHECK_THROWS_AS(search_beta_curve(throws, radii, betas, 0.7), NumericalError);
}

TEST_CASE("blackbody grain temperature", "[grain][temperature]") {
    const PlanckMean one = [](double) { return 1.0; };
    // Analytic: a blackbody (Q_abs = 1) far from the star has T = T_eff sqrt(R / (2 r)).
    // The IAU 2015 nominal L, R and T_eff obey L = 4 pi R^2 sigma T^4 only to 3e-5, i.e.
    // 8e-6 in T; the finite-disc correction is (R/r)^2 / 16 = 1.4e-6 at 1 au: tolerance 2e-5.
    for (double r_au : {0.3, 1.0, 10.0, 100.0}) {
        const Temperature t =
            equilibrium_temperature(sun_luminosity, sun_radius, astronomical_units(r_au), 1.0, one);
        REQUIRE(std::isfinite(t.value()));
        const double expected = constants::solar_teff_K *
                                std::sqrt(constants::solar_radius_m / (2 * r_au * constants::au_m));
        CHECK(rel(t.value(), expected) < 2e-5);
    }
    // About 278 K at 1 au for the Sun (from memory, standard textbook value); 0.5 K.
    const Temperature t1 =
        equilibrium_temperature(sun_luminosity, sun_radius, astronomical_units(1.0), 1.0, one);
    CHECK(std::abs(t1.value() - 278.0) < 0.5);
    // A grey grain (any constant Q_abs) has the blackbody temperature (analytic: Q cancels).
    const PlanckMean grey = [](double) { return 0.3; };
    CHECK(
        rel(equilibrium_temperature(sun_luminosity, sun_radius, astronomical_units(1.0), 0.3, grey)
                .value(),
            t1.value()) < 1e-8);
    // On the stellar surface the grain sees half its sky at T_eff: T = T_eff / 2^(1/4)
    // (analytic, uniform disc). Stefan-Boltzmann luminosity so that no IAU rounding enters.
    const double l_sb = 4 * pi * std::pow(constants::solar_radius_m, 2) *
                        constants::stefan_boltzmann_SI * std::pow(constants::solar_teff_K, 4);
    const Temperature ts = equilibrium_temperature(watts(l_sb), sun_radius, sun_radius, 1.0, one);
    CHECK(rel(ts.value(), constants::solar_teff_K / std::pow(2.0, 0.25)) < 1e-8);
    CHECK(finite_disc_factor(sun_radius, sun_radius) == 2.0);
    // Far away the factor is 1 + u/4 + u^2/8 + O(u^3), u = (R/r)^2 (series of the exact form;
    // the u^3 term is 1e-16 at 1 au, so the tolerance is rounding).
    const double d = finite_disc_factor(astronomical_units(1.0), sun_radius);
    const double u = std::pow(constants::solar_radius_m / constants::au_m, 2);
    CHECK(std::abs(d - (1 + u / 4 + u * u / 8)) < 1e-15);
    CHECK_THROWS_AS(finite_disc_factor(metres(1.0), sun_radius), InputError);
}

TEST_CASE("temperature of a grain whose emission efficiency depends on T", "[grain][temperature]") {
    // Small grains emit inefficiently: with <Q_abs>_T = T / T0 the balance T^4 (T/T0) = A gives
    // T = (A T0)^(1/5) (analytic). Tolerance 1e-8: the solver stops at 1e-9 in ln T.
    const double t0 = 1.0e4;
    const PlanckMean q = [&](double t) { return t / t0; };
    const double r = 2.0 * constants::au_m;
    const double qstar = 0.8;
    const double big_a = constants::solar_luminosity_W * qstar *
                         finite_disc_factor(metres(r), sun_radius) /
                         (16 * pi * constants::stefan_boltzmann_SI * r * r);
    const Temperature t = equilibrium_temperature(sun_luminosity, sun_radius, metres(r), qstar, q);
    CHECK(rel(t.value(), std::pow(big_a * t0, 0.2)) < 1e-8);
    // Such grains are hotter than a blackbody at the same place (their emission is weaker).
    const Temperature tbb = equilibrium_temperature(sun_luminosity, sun_radius, metres(r), 1.0,
                                                    [](double) { return 1.0; });
    CHECK(t.value() > tbb.value());
    // No balance inside the search range: a clear NumericalError, not a wrong number.
    TemperatureSettings narrow;
    narrow.highest_K = 10.0;
    CHECK_THROWS_AS(
        equilibrium_temperature(sun_luminosity, sun_radius, metres(r), qstar, q, narrow),
        NumericalError);
    CHECK_THROWS_AS(equilibrium_temperature(sun_luminosity, sun_radius, metres(r), 0.0, q),
                    InputError);
}

TEST_CASE("sublimation distance", "[grain][temperature]") {
    const PlanckMean one = [](double) { return 1.0; };
    // Analytic (far field): a blackbody reaches T at r = (R / 2) (T_eff / T)^2.
    const double l_sb = 4 * pi * std::pow(constants::solar_radius_m, 2) *
                        constants::stefan_boltzmann_SI * std::pow(constants::solar_teff_K, 4);
    const auto r = sublimation_distance(watts(l_sb), sun_radius, 1.0, kelvin(1500.0), 1.0);
    REQUIRE(r);
    const double expected =
        0.5 * constants::solar_radius_m * std::pow(constants::solar_teff_K / 1500.0, 2);
    // The exact finite-disc answer differs from the far-field one by about (R/r)^2 / 8 = 2e-3
    // here (r = 7.4 R): tolerance 3e-3.
    CHECK(rel(r->value(), expected) < 3e-3);
    // Round trip: the temperature at the sublimation distance is the sublimation temperature.
    const Temperature back = equilibrium_temperature(watts(l_sb), sun_radius, *r, 1.0, one);
    CHECK(rel(back.value(), 1500.0) < 1e-8);
    // A non-grey grain: round trip again (T-dependent Planck mean).
    const PlanckMean q = [](double t) { return t / 3000.0; };
    const auto r2 =
        sublimation_distance(sun_luminosity, sun_radius, 0.5, kelvin(1200.0), q(1200.0));
    REQUIRE(r2);
    CHECK(rel(equilibrium_temperature(sun_luminosity, sun_radius, *r2, 0.5, q).value(), 1200.0) <
          1e-8);
    // A blackbody never gets hotter than T_eff / 2^(1/4) outside the star: no answer then.
    CHECK_FALSE(sublimation_distance(watts(l_sb), sun_radius, 1.0, kelvin(5000.0), 1.0));
    CHECK(sublimation_distance(watts(l_sb), sun_radius, 1.0, kelvin(4800.0), 1.0));
}

TEST_CASE("blackbody grain law 278.3 K (L/Lsun)^(1/4) (r/au)^(-1/2)", "[grain][temperature]") {
    // Wyatt (2008, ARA&A 46, 339; recalled from memory) quotes T = 278.3 K (L/Lsun)^(1/4)
    // (r/au)^(-1/2) for a blackbody grain. Derivation (grain.cpp at equilibrium_temperature):
    // pi s^2 L / (4 pi r^2) = 4 pi s^2 sigma T^4, so T = (L / (16 pi sigma r^2))^(1/4).
    const double coefficient_K =
        std::pow(constants::solar_luminosity_W / (16.0 * pi * constants::stefan_boltzmann_SI *
                                                  constants::au_m * constants::au_m),
                 0.25);
    // 278.3 is given to 4 digits: half a unit of the last is 1.8e-4 relative.
    CHECK(rel(coefficient_K, 278.3) < 1.8e-4);
    // A star that is not the Sun, so both the L^(1/4) and r^(-1/2) scalings are exercised:
    // L = 20 Lsun, R = 1.7 Rsun (a hot A-type star; its radius enters only through D).
    const Power lum = watts(20.0 * constants::solar_luminosity_W);
    const Length radius = metres(1.7 * constants::solar_radius_m);
    const PlanckMean one = [](double) { return 1.0; };
    const GrainTemperatureModel model(lum, radius, 1.0, one);
    for (double r_au : {0.3, 2.0, 15.0, 130.0}) {
        const Length r = astronomical_units(r_au);
        const double t = model.temperature(r).value();
        REQUIRE(std::isfinite(t));
        // The law with its quoted coefficient: 1.8e-4 for the coefficient's rounding plus the
        // finite-disc excess D^(1/4) - 1 = (R/r)^2 / 16 (at most 4e-6 at 0.3 au).
        CHECK(rel(t, 278.3 * std::pow(20.0, 0.25) / std::sqrt(r_au)) < 1.9e-4);
        // The same law with the exact coefficient and D: 1e-8, the solver's tolerance (1e-9 in
        // ln T) with a margin.
        const double d = finite_disc_factor(r, radius);
        CHECK(rel(t, coefficient_K * std::pow(20.0 * d, 0.25) / std::sqrt(r_au)) < 1e-8);
    }
}

TEST_CASE("a temperature curve solves the energy balance at every distance",
          "[grain][temperature]") {
    // A grain whose Planck mean rises steeply with T (Q ~ T^2, a small-grain-like emitter,
    // capped at 1) and one whose Planck mean falls (Q ~ T^-1): the curve must match
    // equilibrium_temperature at each distance and balance absorbed and emitted power.
    const auto [name, planck] = GENERATE(table<const char*, PlanckMean>(
        {{"rising", [](double t) { return std::min(1.0, std::pow(t / 2000.0, 2)); }},
         {"falling", [](double t) { return std::min(1.0, 50.0 / t); }}}));
    INFO(name);
    const double q_star = 0.6;
    const GrainTemperatureModel model(sun_luminosity, sun_radius, q_star, planck);
    std::vector<Length> distances;
    for (int i = 0; i <= 40; ++i)
        distances.push_back(astronomical_units(0.01 * std::pow(10.0, i * 0.1)));
    const std::vector<Temperature> curve = model.temperatures(distances);
    REQUIRE(curve.size() == distances.size());
    for (std::size_t i = 0; i < distances.size(); ++i) {
        const double t = curve[i].value();
        REQUIRE(std::isfinite(t));
        // Independently of the library: absorbed L <Q_abs>_* D / (16 pi sigma r^2) against
        // emitted T^4 <Q_abs>_T (the balance per unit 4 pi s^2 sigma). The issue asks for a
        // residual below 1e-8 relative.
        const double r = distances[i].value();
        const double absorbed = constants::solar_luminosity_W * q_star *
                                finite_disc_factor(distances[i], sun_radius) /
                                (16.0 * pi * constants::stefan_boltzmann_SI * r * r);
        const double emitted = t * t * t * t * planck(t);
        CHECK(std::abs(emitted / absorbed - 1.0) < 1e-8);
        CHECK(std::abs(model.balance_residual(distances[i], curve[i])) < 1e-8);
        CHECK(model.absorbed_K4(distances[i]) == Approx(absorbed).epsilon(1e-14));
        // The warm-started curve and the cold start agree to the solver's tolerance (1e-9 in
        // ln T each; 3e-9 allows for both).
        CHECK(
            rel(t, equilibrium_temperature(sun_luminosity, sun_radius, distances[i], q_star, planck)
                       .value()) < 3e-9);
    }
    // solve() reports the residual of the Planck mean it evaluated at each solution: the same
    // as a fresh evaluation (identical calls, so to rounding of 1 + residual: 1e-14).
    const std::vector<TemperatureSolution> solved = model.solve(distances);
    for (std::size_t i = 0; i < distances.size(); ++i) {
        CHECK(solved[i].temperature.value() == curve[i].value());
        CHECK(std::abs(solved[i].balance_residual) < 1e-8);
        CHECK(std::abs(solved[i].balance_residual -
                       model.balance_residual(distances[i], solved[i].temperature)) < 1e-14);
    }
    // Distances in any order give the same temperatures (warm starts also go inwards).
    std::vector<Length> reversed(distances.rbegin(), distances.rend());
    const std::vector<Temperature> back = model.temperatures(reversed);
    for (std::size_t i = 0; i < distances.size(); ++i)
        CHECK(rel(back[distances.size() - 1 - i].value(), curve[i].value()) < 3e-9);
}

TEST_CASE("temperature model refuses bad input", "[grain][temperature]") {
    const PlanckMean one = [](double) { return 1.0; };
    CHECK_THROWS_AS(GrainTemperatureModel(watts(0.0), sun_radius, 1.0, one), InputError);
    CHECK_THROWS_AS(GrainTemperatureModel(sun_luminosity, metres(-1.0), 1.0, one), InputError);
    CHECK_THROWS_AS(GrainTemperatureModel(sun_luminosity, sun_radius, 0.0, one), InputError);
    CHECK_THROWS_AS(GrainTemperatureModel(sun_luminosity, sun_radius, std::nan(""), one),
                    InputError);
    TemperatureSettings backwards;
    backwards.lowest_K = 100.0;
    backwards.highest_K = 10.0;
    CHECK_THROWS_AS(GrainTemperatureModel(sun_luminosity, sun_radius, 1.0, one, backwards),
                    InputError);
    CHECK_THROWS_AS(equilibrium_temperature(sun_luminosity, sun_radius, astronomical_units(1.0),
                                            1.0, one, backwards),
                    InputError);
    const GrainTemperatureModel model(sun_luminosity, sun_radius, 1.0, one);
    CHECK_THROWS_AS(model.temperature(metres(0.0)), InputError);
    CHECK_THROWS_AS(model.temperature(metres(0.5 * constants::solar_radius_m)), InputError);
    const std::vector<Length> with_bad{astronomical_units(1.0), metres(-3.0)};
    CHECK_THROWS_AS(model.temperatures(with_bad), InputError);
    // A Planck mean that returns NaN is a numerical failure, not a temperature.
    const GrainTemperatureModel broken(sun_luminosity, sun_radius, 1.0,
                                       [](double) { return std::nan(""); });
    CHECK_THROWS_AS(broken.temperature(astronomical_units(1.0)), NumericalError);
}

TEST_CASE("sublimation margin and the radii that sublimate", "[grain][temperature]") {
    // The margin is zero exactly at the sublimation distance (round trip), positive inside it.
    const PlanckMean q = [](double t) { return t / 3000.0; };
    const GrainTemperatureModel model(sun_luminosity, sun_radius, 0.5, q);
    const auto r_sub = model.sublimation_distance(kelvin(1200.0));
    REQUIRE(r_sub);
    CHECK(std::abs(sublimation_margin(sun_luminosity, sun_radius, *r_sub, 0.5, kelvin(1200.0),
                                      q(1200.0))) < 1e-12);
    CHECK(sublimation_margin(sun_luminosity, sun_radius, *r_sub * 0.9, 0.5, kelvin(1200.0),
                             q(1200.0)) > 0.0);
    CHECK(model.temperature(*r_sub * 0.9).value() > 1200.0);
    CHECK(sublimation_margin(sun_luminosity, sun_radius, *r_sub * 1.1, 0.5, kelvin(1200.0),
                             q(1200.0)) < 0.0);
    CHECK(model.temperature(*r_sub * 1.1).value() < 1200.0);
    CHECK_THROWS_AS(sublimation_margin(sun_luminosity, sun_radius, *r_sub, 0.5, kelvin(0.0), 1.0),
                    InputError);

    // Intervals of an analytic margin (ln s)^2 - 1 over 0.01..1000 um: positive below 1/e and
    // above e (analytic roots); the ends are refined to 1e-6 relative in radius (the default
    // tolerance), checked at 2e-6.
    const std::function<double(double)> two_sided = [](double s) {
        return std::pow(std::log(s), 2) - 1.0;
    };
    const std::vector<double> grid = log_spaced(0.01, 1000.0, 41);
    std::vector<double> values;
    for (double s : grid)
        values.push_back(two_sided(s));
    const RadiusIntervals two = positive_radius_intervals(two_sided, grid, values);
    REQUIRE(two.from_um.size() == 2);
    REQUIRE(two.to_um.size() == 2);
    CHECK(two.includes_smallest);
    CHECK(two.includes_largest);
    CHECK(two.from_um[0] == 0.01);
    CHECK(rel(two.to_um[0], std::exp(-1.0)) < 2e-6);
    CHECK(rel(two.from_um[1], std::exp(1.0)) < 2e-6);
    CHECK(two.to_um[1] == 1000.0);
    // One inner interval, 0.3..3 um; and a margin that is zero on a grid point (s = 1 um on a
    // 0.1..10 grid of 3 points) counts as sublimating there.
    const std::function<double(double)> inner = [](double s) {
        return std::log(s / 0.3) * std::log(3.0 / s);
    };
    values.clear();
    for (double s : grid)
        values.push_back(inner(s));
    const RadiusIntervals one_interval = positive_radius_intervals(inner, grid, values);
    REQUIRE(one_interval.from_um.size() == 1);
    CHECK_FALSE(one_interval.includes_smallest);
    CHECK_FALSE(one_interval.includes_largest);
    CHECK(rel(one_interval.from_um[0], 0.3) < 2e-6);
    CHECK(rel(one_interval.to_um[0], 3.0) < 2e-6);
    const std::function<double(double)> touch = [](double s) { return std::log(s); };
    const std::vector<double> coarse{0.1, 1.0, 10.0};
    const std::vector<double> touch_values{touch(0.1), 0.0, touch(10.0)};
    const RadiusIntervals t = positive_radius_intervals(touch, coarse, touch_values);
    REQUIRE(t.from_um.size() == 1);
    CHECK(t.from_um[0] == 1.0);
    CHECK(t.to_um[0] == 10.0);
    // Nothing positive: no interval.
    const std::vector<double> negative{-1.0, -2.0, -3.0};
    CHECK(positive_radius_intervals(touch, coarse, negative).from_um.empty());
    // Bad grids and values are refused.
    const std::vector<double> one_radius{1.0};
    const std::vector<double> one_value{1.0};
    CHECK_THROWS_AS(positive_radius_intervals(touch, one_radius, one_value), InputError);
    const std::vector<double> unsorted{1.0, 0.5, 2.0};
    CHECK_THROWS_AS(positive_radius_intervals(touch, unsorted, negative), InputError);
    const std::vector<double> with_nan{-1.0, std::nan(""), 1.0};
    CHECK_THROWS_AS(positive_radius_intervals(touch, coarse, with_nan), NumericalError);
}
