#pragma once
// Boost.Units SI quantities for the public API, and the astronomers' units as named
// conversions. Inside hot kernels the library works on plain doubles; a double that leaves
// the unit system carries its unit in its name (radius_um, flux_cgs).
#include <boost/units/cmath.hpp>
#include <boost/units/quantity.hpp>
#include <boost/units/systems/si.hpp>

#include "holdfast/constants.hpp"

namespace holdfast {

namespace bu = boost::units;
namespace si = boost::units::si;

using Dimensionless = bu::quantity<si::dimensionless>;
using Length = bu::quantity<si::length>;
using Mass = bu::quantity<si::mass>;
using Time = bu::quantity<si::time>;
using Temperature = bu::quantity<si::temperature>;
using Power = bu::quantity<si::power>; // luminosity
using Energy = bu::quantity<si::energy>;
using Velocity = bu::quantity<si::velocity>;
using MassDensity = bu::quantity<si::mass_density>;
using Area = bu::quantity<si::area>;

namespace unit_dims {
using flux = bu::derived_dimension<bu::mass_base_dimension, 1, bu::time_base_dimension, -3>::type;
using mass_opacity =
    bu::derived_dimension<bu::length_base_dimension, 2, bu::mass_base_dimension, -1>::type;
using mass_rate =
    bu::derived_dimension<bu::mass_base_dimension, 1, bu::time_base_dimension, -1>::type;
using grav_parameter =
    bu::derived_dimension<bu::length_base_dimension, 3, bu::time_base_dimension, -2>::type;
} // namespace unit_dims

using EnergyFlux = bu::quantity<bu::unit<unit_dims::flux, si::system>>;              // W m^-2
using MassOpacity = bu::quantity<bu::unit<unit_dims::mass_opacity, si::system>>;     // m^2 kg^-1
using MassRate = bu::quantity<bu::unit<unit_dims::mass_rate, si::system>>;           // kg s^-1
using GravParameter = bu::quantity<bu::unit<unit_dims::grav_parameter, si::system>>; // m^3 s^-2

// ---- construction from plain numbers in a named unit ---------------------------------------
template <class Q> constexpr Q from_si(double v) { return Q::from_value(v); }

inline Length metres(double v) { return from_si<Length>(v); }
inline Length centimetres(double v) { return from_si<Length>(v * 1e-2); }
inline Length micrometres(double v) { return from_si<Length>(v * 1e-6); }
inline Length kilometres(double v) { return from_si<Length>(v * 1e3); }
inline Length astronomical_units(double v) { return from_si<Length>(v * constants::au_m); }
inline Length parsecs(double v) { return from_si<Length>(v * constants::parsec_m); }
inline Length solar_radii(double v) { return from_si<Length>(v * constants::solar_radius_m); }
inline Mass kilograms(double v) { return from_si<Mass>(v); }
inline Mass grams(double v) { return from_si<Mass>(v * 1e-3); }
inline Mass solar_masses(double v) { return from_si<Mass>(v * constants::solar_mass_kg); }
inline Time seconds(double v) { return from_si<Time>(v); }
inline Time julian_years(double v) { return from_si<Time>(v * constants::julian_year_s); }
inline Temperature kelvin(double v) { return from_si<Temperature>(v); }
inline Power watts(double v) { return from_si<Power>(v); }
inline Power erg_per_second(double v) { return from_si<Power>(v * constants::erg_J); }
inline Power solar_luminosities(double v) {
    return from_si<Power>(v * constants::solar_luminosity_W);
}
inline MassDensity kg_per_m3(double v) { return from_si<MassDensity>(v); }
inline MassDensity g_per_cm3(double v) { return from_si<MassDensity>(v * 1e3); }
inline MassOpacity m2_per_kg(double v) { return from_si<MassOpacity>(v); }
inline MassOpacity cm2_per_g(double v) { return from_si<MassOpacity>(v * 0.1); }
inline MassRate kg_per_second(double v) { return from_si<MassRate>(v); }
inline MassRate solar_masses_per_year(double v) {
    return from_si<MassRate>(v * constants::solar_mass_kg / constants::julian_year_s);
}
inline EnergyFlux watts_per_m2(double v) { return from_si<EnergyFlux>(v); }

// ---- reading a quantity out in a named unit ------------------------------------------------
inline double in_micrometres(Length l) { return l.value() * 1e6; }
inline double in_centimetres(Length l) { return l.value() * 1e2; }
inline double in_astronomical_units(Length l) { return l.value() / constants::au_m; }
inline double in_solar_radii(Length l) { return l.value() / constants::solar_radius_m; }
inline double in_grams(Mass m) { return m.value() * 1e3; }
inline double in_solar_masses(Mass m) { return m.value() / constants::solar_mass_kg; }
inline double in_julian_years(Time t) { return t.value() / constants::julian_year_s; }
inline double in_erg_per_second(Power p) { return p.value() / constants::erg_J; }
inline double in_solar_luminosities(Power p) { return p.value() / constants::solar_luminosity_W; }
inline double in_g_per_cm3(MassDensity d) { return d.value() * 1e-3; }
inline double in_cm2_per_g(MassOpacity k) { return k.value() * 10.0; }
inline double in_grams_per_second(MassRate r) { return r.value() * 1e3; }
inline double in_solar_masses_per_year(MassRate r) {
    return r.value() * constants::julian_year_s / constants::solar_mass_kg;
}

} // namespace holdfast
