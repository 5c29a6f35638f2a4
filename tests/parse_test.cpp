// Quantity parsing: grammar, dimension checks and refusals. Conversion factors themselves
// are cross-checked against astropy in tests/cli/test_parse_astropy.py.
#include <catch2/catch.hpp>

#include <cmath>
#include <string>

#include "holdfast/errors.hpp"
#include "holdfast/parse.hpp"

using namespace holdfast;
using Catch::Matchers::Contains;

TEST_CASE("typed parsing returns SI quantities", "[parse]") {
    // Identities of the unit definitions (IAU 2015 B3, CODATA 2018): tolerance is rounding.
    CHECK(parse_quantity<Mass>("1.4 Msun", "--mass").value() ==
          Approx(1.4 * constants::solar_mass_kg).epsilon(1e-15));
    CHECK(parse_quantity<Power>("3e38 erg/s", "--luminosity").value() ==
          Approx(3e31).epsilon(1e-15));
    CHECK(parse_quantity<EnergyFlux>("2.1e-9 erg/s/cm2", "--flux").value() ==
          Approx(2.1e-12).epsilon(1e-14));
    CHECK(parse_quantity<MassOpacity>("0.34 cm2/g", "--opacity").value() ==
          Approx(0.034).epsilon(1e-14));
    CHECK(parse_quantity<MassRate>("1e-8 Msun/yr", "--rate").value() ==
          Approx(1e-8 * constants::solar_mass_kg / constants::julian_year_s).epsilon(1e-14));
    CHECK(parse_quantity<MassDensity>("3.3 g/cm3", "--density").value() ==
          Approx(3300.0).epsilon(1e-14));
    CHECK(parse_quantity<Temperature>("1e8 K", "--t").value() == 1e8);
    CHECK(parse_quantity<Length>("12 km", "--r").value() == 12000.0);
}

TEST_CASE("spellings of the same unit agree", "[parse]") {
    const double a = parse_si_value("3.3 g/cm3", dims::mass_density, "--density");
    CHECK(parse_si_value("3.3 g cm^-3", dims::mass_density, "--density") == Approx(a));
    CHECK(parse_si_value("3.3 g*cm**-3", dims::mass_density, "--density") == Approx(a));
    CHECK(parse_si_value("3.3g/cm^3", dims::mass_density, "--density") == Approx(a));
    CHECK(parse_si_value("3.3 g/(cm cm2)", dims::mass_density, "--density") == Approx(a));
    const double f = parse_si_value("1 erg/s/cm2", dims::flux, "--flux");
    CHECK(parse_si_value("1 erg s^-1 cm^-2", dims::flux, "--flux") == Approx(f));
    CHECK(parse_si_value("1 erg s-1 cm-2", dims::flux, "--flux") == Approx(f));
    CHECK(parse_si_value("1 erg/(s cm2)", dims::flux, "--flux") == Approx(f));
    CHECK(parse_si_value("+2", dims::none, "--x", Sign::any) == 2.0);
    CHECK(parse_si_value("1 \xC2\xB5m", dims::length, "--r") == Approx(1e-6));
}

TEST_CASE("refusals name the option, the text and what is accepted", "[parse]") {
    auto message = [](auto&& f) {
        try {
            f();
        } catch (const InputError& e) {
            return std::string(e.what());
        }
        return std::string("(no error)");
    };
    SECTION("wrong dimension") {
        const auto m = message([] { parse_quantity<Mass>("1.4 km", "--mass"); });
        CHECK_THAT(m, Contains("--mass") && Contains("1.4 km") && Contains("length") &&
                          Contains("Msun"));
    }
    SECTION("unknown unit") {
        const auto m = message([] { parse_quantity<Mass>("1.4 Msol", "--mass"); });
        CHECK_THAT(m, Contains("--mass") && Contains("unknown unit 'Msol'"));
    }
    SECTION("missing number") {
        const auto m = message([] { parse_quantity<Mass>("Msun", "--mass"); });
        CHECK_THAT(m, Contains("no number"));
    }
    SECTION("missing unit") {
        const auto m = message([] { parse_quantity<Mass>("1.4", "--mass"); });
        CHECK_THAT(m, Contains("unit is missing") && Contains("kg"));
    }
    SECTION("NaN and infinity") {
        CHECK_THAT(message([] { parse_quantity<Mass>("nan Msun", "--mass"); }),
                   Contains("not finite"));
        CHECK_THAT(message([] { parse_quantity<Mass>("inf Msun", "--mass"); }),
                   Contains("not finite"));
        CHECK_THAT(message([] { parse_quantity<Mass>("-inf Msun", "--mass"); }),
                   Contains("not finite"));
    }
    SECTION("negative and zero where impossible") {
        CHECK_THAT(message([] { parse_quantity<Mass>("-1 Msun", "--mass"); }),
                   Contains("greater than zero"));
        CHECK_THAT(message([] { parse_quantity<Mass>("0 Msun", "--mass"); }),
                   Contains("greater than zero"));
        CHECK_THAT(message([] { parse_quantity<Mass>("-1 Msun", "--m", Sign::non_negative); }),
                   Contains("must not be negative"));
        CHECK(parse_quantity<Mass>("0 kg", "--m", Sign::non_negative).value() == 0.0);
    }
    SECTION("syntax") {
        CHECK_THAT(message([] { parse_quantity<Power>("1 erg//s", "--l"); }),
                   Contains("missing") || Contains("expected"));
        CHECK_THAT(message([] { parse_quantity<Power>("1 erg/(s", "--l"); }), Contains("')'"));
        CHECK_THAT(message([] { parse_quantity<Power>("1 erg/s^0", "--l"); }),
                   Contains("non-zero"));
        CHECK_THAT(message([] { parse_quantity<Mass>("1e400 kg", "--m"); }), Contains("range"));
    }
}

TEST_CASE("ranges and lists", "[parse]") {
    const auto v = parse_values_si("0.01um..1mm", dims::length, "--radii", 6);
    REQUIRE(v.size() == 6);
    CHECK(v.front() == Approx(1e-8));
    CHECK(v.back() == Approx(1e-3));
    // log spacing: constant ratio (identity)
    for (std::size_t i = 1; i + 1 < v.size(); ++i)
        CHECK(v[i + 1] / v[i] == Approx(v[1] / v[0]).epsilon(1e-12));
    const auto w = parse_values_si("0.1..10 um", dims::length, "--radii", 3);
    REQUIRE(w.size() == 3);
    CHECK(w[1] == Approx(1e-6));
    const auto l = parse_values_si("1 um, 2 um,3um", dims::length, "--radii", 0);
    REQUIRE(l.size() == 3);
    CHECK(l[2] == Approx(3e-6));
    CHECK_THROWS_AS(parse_values_si("1mm..1um", dims::length, "--radii", 5), InputError);
    CHECK_THROWS_AS(parse_values_si("1um..1mm", dims::length, "--radii", 1), InputError);
    CHECK_THROWS_AS(parse_values_si("1um..1 Msun", dims::length, "--radii", 5), InputError);
}

TEST_CASE("refractive index text", "[parse]") {
    CHECK(parse_refractive_index("1.7+0.03i", "--index") == std::complex<double>(1.7, 0.03));
    CHECK(parse_refractive_index("1.7,0.03", "--index") == std::complex<double>(1.7, 0.03));
    CHECK(parse_refractive_index(" 1.33 ", "--index") == std::complex<double>(1.33, 0.0));
    CHECK(parse_refractive_index("2+1e-3j", "--index") == std::complex<double>(2.0, 1e-3));
    CHECK_THROWS_AS(parse_refractive_index("1.7-0.03i", "--index"), InputError);
    CHECK_THROWS_AS(parse_refractive_index("1.7,-0.03", "--index"), InputError);
    CHECK_THROWS_AS(parse_refractive_index("-1.7", "--index"), InputError);
    CHECK_THROWS_AS(parse_refractive_index("0", "--index"), InputError);
    CHECK_THROWS_AS(parse_refractive_index("1.7+0.03", "--index"), InputError);
    CHECK_THROWS_AS(parse_refractive_index("abc", "--index"), InputError);
    CHECK_THROWS_AS(parse_refractive_index("nan", "--index"), InputError);
}
