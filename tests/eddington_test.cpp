// Eddington limit, accretion efficiency and growth: published values, analytic limits and
// identities. Values for a spread of masses and opacities are cross-checked against
// astropy in tests/cli/test_eddington.py.
#include <catch2/catch.hpp>

#include <cmath>
#include <functional>
#include <limits>
#include <numbers>
#include <string>

#include "holdfast/constants.hpp"
#include "holdfast/eddington.hpp"
#include "holdfast/errors.hpp"

using namespace holdfast;
using Catch::Matchers::Contains;

namespace {

// The opacity sigma_T / m_p of pure hydrogen, which the textbook numbers assume.
MassOpacity thomson_hydrogen() {
    return m2_per_kg(constants::thomson_cross_section_m2 / constants::proton_mass_kg);
}

// Specific energy of a prograde (a > 0) or retrograde (a < 0) circular equatorial orbit at
// radius r (units of GM/c^2) in the Kerr metric; Bardeen, Press & Teukolsky (1972), eq. 2.12
// (equation number from memory), written with a signed spin. Independent of the code under test.
double kerr_circular_orbit_energy(double r, double a) {
    const double sr = std::sqrt(r);
    return (r * sr - 2.0 * sr + a) / (std::pow(r, 0.75) * std::sqrt(r * sr - 3.0 * sr + 2.0 * a));
}

std::string message_of(const std::function<void()>& f) {
    try {
        f();
    } catch (const InputError& e) {
        return e.what();
    }
    return "(no error)";
}

} // namespace

TEST_CASE("electron-scattering opacity", "[eddington]") {
    for (double x : {0.0, 0.25, 0.7, 1.0}) {
        const double k = in_cm2_per_g(electron_scattering_opacity(x));
        REQUIRE(std::isfinite(k));
        // Textbook kappa_es = 0.2 (1 + X) cm2/g (Rybicki & Lightman 1979; Kippenhahn,
        // Weigert & Weiss, ch. 17; from memory). The exact coefficient sigma_T / (2 m_p) with
        // CODATA 2018 is 0.19886 cm2/g, so 1% covers the textbook's rounding (0.57%).
        CHECK(k == Approx(0.2 * (1.0 + x)).epsilon(0.01));
        // Identity: sigma_T (1 + X) / (2 m_p) with the CODATA 2018 constants; rounding only.
        CHECK(electron_scattering_opacity(x).value() ==
              Approx(constants::thomson_cross_section_m2 * (1.0 + x) /
                     (2.0 * constants::proton_mass_kg))
                  .epsilon(1e-14));
    }
    // X = 1 is sigma_T / m_p exactly (analytic identity); rounding only.
    CHECK(electron_scattering_opacity(1.0).value() ==
          Approx(thomson_hydrogen().value()).epsilon(1e-14));
    CHECK_THROWS_AS(electron_scattering_opacity(-0.01), InputError);
    CHECK_THROWS_AS(electron_scattering_opacity(1.01), InputError);
    CHECK_THROWS_AS(electron_scattering_opacity(std::numeric_limits<double>::quiet_NaN()),
                    InputError);
}

TEST_CASE("Paczynski reduction of the electron-scattering opacity", "[eddington]") {
    SECTION("low temperature and density: no reduction (analytic limit)") {
        // 1e3 K, 1e-15 g/cm3: degeneracy term 2.7e-10, Klein-Nishina term
        // (1e3/4.5e8)^0.86 = 1.4e-5, so the factor is 1 to within 2e-5.
        const double f = paczynski_opacity_factor(kelvin(1e3), g_per_cm3(1e-15));
        REQUIRE(std::isfinite(f));
        CHECK(f == Approx(1.0).epsilon(2e-5));
        CHECK(f < 1.0);
        // Zero density: the degeneracy term vanishes exactly (analytic limit).
        CHECK(paczynski_opacity_factor(kelvin(4.5e8), g_per_cm3(0.0)) ==
              Approx(0.5).epsilon(1e-15));
    }
    SECTION("hand-computed values of the fit") {
        // Paczynski (1983), the fit kappa_es / {[1 + 2.7e11 rho/T^2][1 + (T/4.5e8)^0.86]}.
        // T = 4.5e8 K makes the Klein-Nishina bracket 2; rho = T^2 / 2.7e11 = 7.5e5 g/cm3
        // makes the degeneracy bracket 2: factor 1/4 exactly (by hand). Rounding only.
        CHECK(paczynski_opacity_factor(kelvin(4.5e8), g_per_cm3(7.5e5)) ==
              Approx(0.25).epsilon(1e-13));
        // T = 4.5e9 K, rho = 0: 1 / (1 + 10^0.86) = 1 / 8.24436 = 0.121295 (by hand,
        // 10^0.86 = 7.24436); 1e-5 covers the six digits written.
        CHECK(paczynski_opacity_factor(kelvin(4.5e9), g_per_cm3(0.0)) ==
              Approx(0.121295).epsilon(1e-5));
    }
    SECTION("the reduction carries into the Eddington luminosity") {
        EddingtonInput in;
        in.mass = solar_masses(1.0);
        in.gas_temperature = kelvin(4.5e8);
        in.gas_density = g_per_cm3(7.5e5);
        const auto r = eddington(in);
        REQUIRE(r.opacity_factor.has_value());
        // Identity: kappa = factor * kappa_es, so L_Edd is 4 times the Thomson value.
        CHECK(r.opacity.value() ==
              Approx(0.25 * electron_scattering_opacity(1.0).value()).epsilon(1e-13));
        CHECK(
            r.eddington_luminosity.value() ==
            Approx(4.0 * eddington_luminosity(in.mass, thomson_hydrogen()).value()).epsilon(1e-13));
    }
    CHECK_THROWS_AS(paczynski_opacity_factor(kelvin(0.0), g_per_cm3(1.0)), InputError);
    CHECK_THROWS_AS(paczynski_opacity_factor(kelvin(1e7), g_per_cm3(-1.0)), InputError);
}

TEST_CASE("Eddington luminosity", "[eddington]") {
    const Power l = eddington_luminosity(solar_masses(1.0), thomson_hydrogen());
    REQUIRE(std::isfinite(l.value()));
    // 1.26e38 erg/s per solar mass for kappa = sigma_T / m_p (Rybicki & Lightman 1979;
    // Frank, King & Raine 2002, section 1.2: "1.3e38"; from memory). 1.26 is rounded to
    // three digits, so 0.5% covers it (the exact value with CODATA 2018 and IAU 2015 is
    // 1.25707e38).
    CHECK(in_erg_per_second(l) == Approx(1.26e38).epsilon(0.005));
    // 1.2571e38 erg/s: the same, to five digits, computed with astropy 5.2 constants
    // (sigma_T, m_p, G, M_sun, c); 1e-4 is the rounding of five digits.
    CHECK(in_erg_per_second(l) == Approx(1.2571e38).epsilon(1e-4));
    // Linear in M and in 1/kappa (identity).
    CHECK(eddington_luminosity(solar_masses(10.0), thomson_hydrogen()).value() ==
          Approx(10.0 * l.value()).epsilon(1e-14));
    CHECK(eddington_luminosity(solar_masses(1.0), electron_scattering_opacity(0.0)).value() ==
          Approx(2.0 * l.value()).epsilon(1e-14));
    // Round trip: the minimum mass for L_Edd(M) is M.
    CHECK(in_solar_masses(eddington_minimum_mass(l, thomson_hydrogen())) ==
          Approx(1.0).epsilon(1e-14));
    CHECK_THROWS_AS(eddington_luminosity(kilograms(0.0), thomson_hydrogen()), InputError);
    CHECK_THROWS_AS(eddington_luminosity(kilograms(1.0), m2_per_kg(-1.0)), InputError);
}

TEST_CASE("luminosity from a flux and a distance", "[eddington]") {
    // 4 pi d^2 F: 1e-12 W/m2 at 1 pc (analytic; IAU 2015 parsec), rounding only.
    const double d = constants::parsec_m;
    const Power l = luminosity_from_flux(watts_per_m2(1e-12), parsecs(1.0), 1.0);
    CHECK(l.value() == Approx(4.0 * std::numbers::pi * d * d * 1e-12).epsilon(1e-14));
    // Beaming b scales it linearly (definition).
    CHECK(luminosity_from_flux(watts_per_m2(1e-12), parsecs(1.0), 0.1).value() ==
          Approx(0.1 * l.value()).epsilon(1e-14));
    CHECK_THROWS_AS(luminosity_from_flux(watts_per_m2(1e-12), parsecs(1.0), 0.0), InputError);
    CHECK_THROWS_AS(luminosity_from_flux(watts_per_m2(1e-12), parsecs(1.0), 1.5), InputError);
    // Overflow is refused, not returned as infinity.
    CHECK_THROWS_AS(luminosity_from_flux(watts_per_m2(1e300), metres(1e200), 1.0), InputError);
}

TEST_CASE("ISCO radius and efficiency from spin", "[eddington]") {
    // Schwarzschild: r_isco = 6 GM/c^2, eta = 1 - sqrt(8/9) = 0.0572 (BPT 1972; analytic).
    CHECK(isco_radius(0.0) == Approx(6.0).epsilon(1e-14));
    CHECK(efficiency_from_spin(0.0) == Approx(1.0 - std::sqrt(8.0 / 9.0)).epsilon(1e-13));
    CHECK(efficiency_from_spin(0.0) == Approx(0.0572).epsilon(5e-4)); // 3 digits quoted
    // Maximal prograde: r = 1, eta = 1 - 1/sqrt(3) (BPT 1972; analytic). The cube roots at
    // a = 1 are exact in floating point, so only rounding remains.
    CHECK(isco_radius(1.0) == Approx(1.0).epsilon(1e-13));
    CHECK(efficiency_from_spin(1.0) == Approx(1.0 - 1.0 / std::sqrt(3.0)).epsilon(1e-13));
    // Maximal retrograde: r = 9, eta = 1 - sqrt(25/27) = 0.0377 (BPT 1972; analytic).
    CHECK(isco_radius(-1.0) == Approx(9.0).epsilon(1e-14));
    CHECK(efficiency_from_spin(-1.0) == Approx(1.0 - std::sqrt(25.0 / 27.0)).epsilon(1e-13));
    // Thorne (1974), ApJ 191, 507 (from memory): the spin-up limit a = 0.998 gives a thin-disc
    // eta of about 0.32 (two digits, so an absolute tolerance of 0.005).
    CHECK(efficiency_from_spin(0.998) == Approx(0.32).margin(0.005));

    SECTION("identities of the Kerr circular orbits across spins") {
        const double a = GENERATE(-1.0, -0.9, -0.5, -0.1, 0.0, 0.1, 0.5, 0.9, 0.99, 0.998);
        const double r = isco_radius(a);
        REQUIRE(std::isfinite(r));
        // Between the extremes and decreasing with a (analytic property of eq. 2.21).
        CHECK(r >= 1.0 - 1e-12);
        CHECK(r <= 9.0 + 1e-12);
        if (a > -1.0) CHECK(isco_radius(a - 0.01) > r);
        // E_isco = sqrt(1 - 2/(3 r)) equals the circular-orbit energy of BPT eq. 2.12 at
        // r_isco (identity); 1e-12 for rounding near the square roots.
        const double e = 1.0 - efficiency_from_spin(a);
        CHECK(kerr_circular_orbit_energy(r, a) == Approx(e).epsilon(1e-12));
        // The ISCO is where the circular-orbit energy is smallest (marginal stability):
        // orbits 1% inside or outside have higher energy.
        if (a < 0.99) { // for a -> 1 the orbits inside crowd the horizon; skip there
            CHECK(kerr_circular_orbit_energy(1.01 * r, a) > e);
            CHECK(kerr_circular_orbit_energy(0.99 * r, a) > e);
        }
    }
    CHECK_THROWS_AS(isco_radius(1.0001), InputError);
    CHECK_THROWS_AS(isco_radius(-1.0001), InputError);
    CHECK_THROWS_AS(efficiency_from_spin(std::numeric_limits<double>::quiet_NaN()), InputError);
}

TEST_CASE("efficiency of accretion onto a surface", "[eddington]") {
    // Neutron star, M = 1 Msun, R = 10 km: G M / (R c^2) about 0.15 (Frank, King & Raine
    // 2002, section 1.2, from memory); two digits, so 0.005 absolute.
    CHECK(efficiency_from_surface(solar_masses(1.0), kilometres(10.0)) ==
          Approx(0.15).margin(0.005));
    // Worked example: 1.4 Msun, 10 km, X = 1: eta about 0.21 and L_Edd about 1.8e38 erg/s
    // (the usual neutron-star numbers, e.g. FKR 2002 section 1.2 scaled to 1.4 Msun; from
    // memory). Two digits quoted: absolute 0.005 on eta, 0.05e38 on L_Edd.
    EddingtonInput in;
    in.mass = solar_masses(1.4);
    in.star_radius = kilometres(10.0);
    in.luminosity = erg_per_second(1e37);
    const auto r = eddington(in);
    CHECK(r.efficiency == Approx(0.21).margin(0.005));
    CHECK(in_erg_per_second(r.eddington_luminosity) == Approx(1.8e38).margin(0.05e38));
    REQUIRE(r.schwarzschild_radius.has_value());
    // 2 G M / c^2 = 2.95 km per solar mass (common practice; IAU GM_sun): 4.135 km.
    CHECK(r.schwarzschild_radius->value() == Approx(1.4 * 2953.25).epsilon(1e-4));
    // Identity: Mdot = L / (eta c^2) for the given luminosity.
    const double c2 = constants::speed_of_light_m_s * constants::speed_of_light_m_s;
    REQUIRE(r.required_accretion_rate.has_value());
    CHECK(r.required_accretion_rate->value() == Approx(1e30 / (r.efficiency * c2)).epsilon(1e-14));

    // At or inside the Schwarzschild radius there is no surface to accrete onto.
    const Length rs = schwarzschild_radius(solar_masses(1.0));
    CHECK_THROWS_AS(efficiency_from_surface(solar_masses(1.0), rs), InputError);
    CHECK_THROWS_AS(efficiency_from_surface(solar_masses(1.0), 0.5 * rs), InputError);
    CHECK(efficiency_from_surface(solar_masses(1.0), 1.000001 * rs) < 0.5);
}

TEST_CASE("accretion rate and growth", "[eddington]") {
    SECTION("Salpeter time") {
        // sigma_T c / (4 pi G m_p) = 0.45 Gyr (Salpeter 1964; e.g. FKR 2002; from memory):
        // eta / (1 - eta) = 1 at eta = 1/2. Two digits quoted: 0.005 Gyr absolute.
        const Time t = efolding_time(thomson_hydrogen(), 0.5, 1.0);
        REQUIRE(std::isfinite(t.value()));
        CHECK(in_julian_years(t) / 1e9 == Approx(0.45).margin(0.005));
        // Inverse in the Eddington ratio, proportional to eta / (1 - eta) (identity).
        CHECK(efolding_time(thomson_hydrogen(), 0.5, 2.0).value() ==
              Approx(0.5 * t.value()).epsilon(1e-14));
        CHECK(efolding_time(thomson_hydrogen(), 0.1, 1.0).value() ==
              Approx(t.value() / 9.0).epsilon(1e-14));
    }
    SECTION("growth time is ln(Mf/M) e-folding times") {
        const Time te = efolding_time(thomson_hydrogen(), 0.1, 1.0);
        const Time tg =
            growth_time(solar_masses(10.0), solar_masses(1e9), thomson_hydrogen(), 0.1, 1.0);
        CHECK(tg.value() == Approx(std::log(1e8) * te.value()).epsilon(1e-13));
        CHECK(growth_time(solar_masses(10.0), solar_masses(10.0), thomson_hydrogen(), 0.1, 1.0)
                  .value() == 0.0);
        // Integrating dM/dt = (1 - eta) lambda L_Edd(M) / (eta c^2) by steps from M to Mf
        // reaches Mf in the growth time (invariant; RK4 with 2000 steps, error ~1e-12).
        const double eta = 0.1;
        const double c2 = constants::speed_of_light_m_s * constants::speed_of_light_m_s;
        auto dmdt = [&](double m_kg) {
            return (1.0 - eta) * eddington_luminosity(kilograms(m_kg), thomson_hydrogen()).value() /
                   (eta * c2);
        };
        const double m0 = solar_masses(10.0).value();
        const double t_end =
            growth_time(solar_masses(10.0), solar_masses(1e3), thomson_hydrogen(), eta, 1.0)
                .value();
        const int steps = 2000;
        const double h = t_end / steps;
        double m = m0;
        for (int i = 0; i < steps; ++i) {
            const double k1 = dmdt(m);
            const double k2 = dmdt(m + 0.5 * h * k1);
            const double k3 = dmdt(m + 0.5 * h * k2);
            const double k4 = dmdt(m + h * k3);
            m += h * (k1 + 2.0 * k2 + 2.0 * k3 + k4) / 6.0;
        }
        CHECK(m / m0 == Approx(100.0).epsilon(1e-9));
    }
    SECTION("Eddington accretion rate") {
        // Mdot_Edd = L_Edd / (eta c^2): at eta = 0.1, 1 Msun, kappa = sigma_T/m_p, the
        // textbook 1.26e38 erg/s (above) divided by 0.1 c^2 is 1.40e18 g/s (by hand).
        // Three digits: 1% covers them and the 0.2% between 1.26 and 1.2571.
        EddingtonInput in;
        in.mass = solar_masses(1.0);
        in.efficiency = 0.1;
        const auto r = eddington(in);
        CHECK(in_grams_per_second(r.eddington_accretion_rate) == Approx(1.40e18).epsilon(0.01));
    }
    CHECK_THROWS_AS(
        growth_time(solar_masses(10.0), solar_masses(9.0), thomson_hydrogen(), 0.1, 1.0),
        InputError);
    CHECK_THROWS_AS(efolding_time(thomson_hydrogen(), 0.0, 1.0), InputError);
    CHECK_THROWS_AS(efolding_time(thomson_hydrogen(), 1.0, 1.0), InputError);
    CHECK_THROWS_AS(efolding_time(thomson_hydrogen(), 0.1, 0.0), InputError);
    CHECK_THROWS_AS(accretion_rate(watts(1.0), 1.0), InputError);
}

TEST_CASE("the combined calculation", "[eddington]") {
    SECTION("defaults: electron scattering X = 1, default efficiency") {
        EddingtonInput in;
        in.mass = solar_masses(10.0);
        in.luminosity = erg_per_second(1e38);
        const auto r = eddington(in);
        CHECK(r.opacity_source == OpacitySource::electron_scattering);
        CHECK_FALSE(r.efficiency_source.has_value());
        CHECK(r.efficiency == default_efficiency);
        REQUIRE(r.eddington_ratio.has_value());
        REQUIRE(std::isfinite(*r.eddington_ratio));
        // Identity: ratio = L / L_Edd, minimum mass = M * ratio.
        CHECK(*r.eddington_ratio ==
              Approx(1e31 / eddington_luminosity(in.mass, thomson_hydrogen()).value())
                  .epsilon(1e-13));
        REQUIRE(r.minimum_mass.has_value());
        CHECK(in_solar_masses(*r.minimum_mass) == Approx(10.0 * *r.eddington_ratio).epsilon(1e-13));
    }
    SECTION("flux, distance and beaming") {
        EddingtonInput in;
        in.mass = solar_masses(1.4);
        in.flux = watts_per_m2(1e-12);
        in.distance = parsecs(8000.0);
        in.beaming = 0.5;
        const auto r = eddington(in);
        REQUIRE(r.luminosity.has_value());
        CHECK(r.luminosity_from_flux);
        CHECK(r.luminosity->value() ==
              Approx(luminosity_from_flux(*in.flux, *in.distance, 0.5).value()).epsilon(1e-15));
    }
    SECTION("given opacity") {
        EddingtonInput in;
        in.mass = solar_masses(1.0);
        in.opacity = cm2_per_g(1.0);
        const auto r = eddington(in);
        CHECK(r.opacity_source == OpacitySource::given);
        CHECK(r.opacity.value() == Approx(0.1).epsilon(1e-15));
    }
    SECTION("refusals name the quantity") {
        EddingtonInput in;
        in.mass = solar_masses(1.0);
        auto with = [&](auto change) {
            EddingtonInput copy = in;
            change(copy);
            return message_of([&] { eddington(copy); });
        };
        CHECK_THAT(with([](EddingtonInput& i) { i.hydrogen_mass_fraction = 2.0; }),
                   Contains("hydrogen mass fraction"));
        CHECK_THAT(with([](EddingtonInput& i) {
                       i.luminosity = watts(1.0);
                       i.flux = watts_per_m2(1.0);
                       i.distance = metres(1.0);
                   }),
                   Contains("not both"));
        CHECK_THAT(with([](EddingtonInput& i) { i.flux = watts_per_m2(1.0); }),
                   Contains("needs a distance"));
        CHECK_THAT(with([](EddingtonInput& i) { i.distance = metres(1.0); }),
                   Contains("only with a flux"));
        CHECK_THAT(with([](EddingtonInput& i) {
                       i.efficiency = 0.1;
                       i.spin = 0.5;
                   }),
                   Contains("at most one"));
        CHECK_THAT(with([](EddingtonInput& i) { i.efficiency = 1.0; }), Contains("efficiency"));
        CHECK_THAT(with([](EddingtonInput& i) { i.spin = -1.5; }), Contains("spin"));
        CHECK_THAT(with([](EddingtonInput& i) { i.star_radius = metres(1.0); }),
                   Contains("Schwarzschild"));
        CHECK_THAT(with([](EddingtonInput& i) { i.final_mass = solar_masses(0.5); }),
                   Contains("below the mass"));
        CHECK_THAT(with([](EddingtonInput& i) { i.beaming = 0.0; }), Contains("beaming"));
        CHECK_THAT(with([](EddingtonInput& i) { i.gas_density = g_per_cm3(1.0); }),
                   Contains("gas temperature"));
        CHECK_THAT(with([](EddingtonInput& i) {
                       i.opacity = cm2_per_g(1.0);
                       i.gas_temperature = kelvin(1e8);
                   }),
                   Contains("given opacity"));
        CHECK_THAT(with([](EddingtonInput& i) { i.eddington_ratio = -1.0; }),
                   Contains("Eddington ratio"));
        CHECK_THAT(with([](EddingtonInput& i) {
                       i.mass = kilograms(std::numeric_limits<double>::quiet_NaN());
                   }),
                   Contains("mass"));
    }
}
