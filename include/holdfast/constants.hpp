#pragma once
// Physical and astronomical constants, SI, each with its edition and source.
// CODATA 2018: E. Tiesinga et al., Rev. Mod. Phys. 93, 025010 (2021); NIST SP 961 (2019).
// IAU 2012 Resolution B2 (astronomical unit); IAU 2015 Resolution B2 (parsec via the au);
// IAU 2015 Resolution B3 (nominal solar values).
// Boost.Units' bundled constants (CODATA 2006) and GSL's gsl_const_* are deliberately not
// used: both are out of date. tests/constants_test checks every value below against
// astropy (Debian python3-astropy), which ships CODATA 2018 and IAU 2015.
#include <numbers>

namespace holdfast::constants {

// ---- CODATA 2018 -------------------------------------------------------------------------
inline constexpr double speed_of_light_m_s = 299792458.0;        // exact
inline constexpr double gravitational_constant_SI = 6.67430e-11; // m^3 kg^-1 s^-2, u_r 2.2e-5
inline constexpr double planck_J_s = 6.62607015e-34;             // exact
inline constexpr double boltzmann_J_K = 1.380649e-23;            // exact
inline constexpr double stefan_boltzmann_SI = 5.670374419e-8; // W m^-2 K^-4, exact to digits shown
inline constexpr double proton_mass_kg = 1.67262192369e-27;   // u_r 3.1e-10
inline constexpr double electron_mass_kg = 9.1093837015e-31;  // u_r 3.0e-10
inline constexpr double atomic_mass_unit_kg = 1.66053906660e-27;     // u_r 3.0e-10
inline constexpr double thomson_cross_section_m2 = 6.6524587321e-29; // u_r 9.1e-10

// ---- IAU ------------------------------------------------------------------------------------
inline constexpr double au_m = 149597870700.0; // IAU 2012 B2, exact by definition
// IAU 2015 B2: 1 pc = (648000 / pi) au.
inline constexpr double parsec_m = au_m * 648000.0 / std::numbers::pi;
// IAU 2015 B3 nominal solar values.
inline constexpr double solar_luminosity_W = 3.828e26;
inline constexpr double solar_radius_m = 6.957e8;
inline constexpr double solar_teff_K = 5772.0;
inline constexpr double solar_gm_m3_s2 = 1.3271244e20;
// The solar mass is GM_sun / G: its precision is that of G (u_r 2.2e-5), not of GM_sun.
inline constexpr double solar_mass_kg = solar_gm_m3_s2 / gravitational_constant_SI;

// ---- cosmology --------------------------------------------------------------------------------
// Temperature of the cosmic microwave background today: Fixsen, D. J. 2009, ApJ 707, 916
// (abstract: 2.72548 +- 0.00057 K). No grain far from a star is colder than this.
inline constexpr double cmb_temperature_K = 2.72548;

// ---- time and cgs units (definitions) --------------------------------------------------------
inline constexpr double julian_year_s = 365.25 * 86400.0; // IAU: the Julian year, exact
inline constexpr double erg_J = 1e-7;                     // exact

} // namespace holdfast::constants
