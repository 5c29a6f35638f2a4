#pragma once
// The Eddington limit of a spherically accreting or radiating object: opacity, Eddington
// luminosity, Eddington ratio, accretion rates and the time an accretor needs to grow.
//
// Conventions (stated once, used everywhere):
// - L_Edd = 4 pi G M c / kappa: outward radiation force on the gas equals gravity, for a
//   spherically symmetric source and a gray opacity kappa.
// - Accretion: L = eta Mdot c^2, with Mdot the rest mass flowing in and eta the fraction of
//   it radiated. The accretor keeps the rest, so dM/dt = (1 - eta) Mdot.
// - Mdot_Edd = L_Edd / (eta c^2): the inflow that radiates exactly L_Edd (some authors
//   leave eta out, or use 10 L_Edd / c^2; holdfast does not).
// - Growth at a fixed Eddington ratio lambda: Mdot = lambda L_Edd / (eta c^2), so
//   dM/dt = M / t_e with t_e = eta / (1 - eta) * kappa c / (4 pi G lambda) (the Salpeter
//   e-folding time; Salpeter 1964, ApJ 140, 796, for kappa = sigma_T / m_p).
//
// Pure numbers (hydrogen mass fraction, spin, efficiency, beaming, Eddington ratio) are
// plain doubles; every dimensional value is a Boost.Units quantity.
#include <optional>
#include <string>

#include "holdfast/units.hpp"

namespace holdfast {

// ---- opacity ---------------------------------------------------------------------------------

// Thomson electron-scattering opacity of a fully ionised gas of hydrogen mass fraction X
// (helium and metals supply one electron per two nucleon masses):
// kappa_es = sigma_T (1 + X) / (2 m_p). Throws InputError unless 0 <= X <= 1.
MassOpacity electron_scattering_opacity(double hydrogen_mass_fraction);

// Paczynski (1983, ApJ 267, 315) fit for the reduction of the electron-scattering opacity by
// Klein-Nishina and degeneracy effects: kappa / kappa_es =
// 1 / ([1 + 2.7e11 rho/T^2] [1 + (T / 4.5e8 K)^0.86]), rho in g/cm3, T in K.
// A density of zero gives the low-density limit (Klein-Nishina term only).
// Throws InputError unless T > 0 and rho >= 0.
double paczynski_opacity_factor(Temperature gas_temperature, MassDensity gas_density);

// ---- Eddington luminosity and ratio -----------------------------------------------------------

// L_Edd = 4 pi G M c / kappa. Throws InputError unless M > 0 and kappa > 0.
Power eddington_luminosity(Mass mass, MassOpacity opacity);

// The mass whose Eddington luminosity equals L: M = L kappa / (4 pi G c); any heavier object
// radiates L below its Eddington limit.
Mass eddington_minimum_mass(Power luminosity, MassOpacity opacity);

// Luminosity from a flux at a distance: L = 4 pi d^2 F b, where b in (0, 1] is the fraction of
// the sphere the source shines into (1: isotropic).
Power luminosity_from_flux(EnergyFlux flux, Length distance, double beaming);

// ---- accretion efficiency ---------------------------------------------------------------------

// Radius of the innermost stable circular orbit in units of GM/c^2 for a Kerr black hole of
// dimensionless spin a in [-1, 1] (negative: orbit retrograde to the hole's spin);
// Bardeen, Press & Teukolsky (1972, ApJ 178, 347), eq. 2.21. 6 at a = 0, 1 at a = 1, 9 at
// a = -1.
double isco_radius(double spin);

// Radiative efficiency of a thin disc ending at the ISCO: eta = 1 - E_isco, with the specific
// energy at the ISCO E = sqrt(1 - 2 / (3 r_isco)) (r in GM/c^2; BPT 1972).
double efficiency_from_spin(double spin);

// Schwarzschild radius 2 G M / c^2.
Length schwarzschild_radius(Mass mass);

// Efficiency of accretion onto a surface at radius R: eta = G M / (R c^2) (Newtonian
// potential energy per unit rest energy). Throws InputError unless R is greater than the
// Schwarzschild radius.
double efficiency_from_surface(Mass mass, Length radius);

// ---- accretion rate and growth ---------------------------------------------------------------

// Mdot = L / (eta c^2): the rest-mass inflow that radiates L at efficiency eta in (0, 1).
MassRate accretion_rate(Power luminosity, double efficiency);

// e-folding time of growth at Eddington ratio lambda > 0:
// t_e = eta / (1 - eta) * kappa c / (4 pi G lambda).
Time efolding_time(MassOpacity opacity, double efficiency, double eddington_ratio);

// Time to grow from `mass` to `final_mass` at a fixed Eddington ratio and efficiency:
// ln(final_mass / mass) t_e. Throws InputError if final_mass < mass.
Time growth_time(Mass mass, Mass final_mass, MassOpacity opacity, double efficiency,
                 double eddington_ratio);

// ---- everything at once, for the command line --------------------------------------------------

enum class OpacitySource { electron_scattering, given };
enum class EfficiencySource { given, spin, star_radius };

struct EddingtonInput {
    Mass mass;
    // Opacity: a given mass opacity, or electron scattering for hydrogen mass fraction X,
    // optionally reduced by Paczynski's fit when a gas temperature (and density) is given.
    std::optional<MassOpacity> opacity;
    double hydrogen_mass_fraction = 1.0;
    std::optional<Temperature> gas_temperature;
    std::optional<MassDensity> gas_density; // needs gas_temperature
    // A luminosity, or a flux and a distance (with beaming fraction), or neither.
    std::optional<Power> luminosity;
    std::optional<EnergyFlux> flux;
    std::optional<Length> distance;
    double beaming = 1.0;
    // At most one of efficiency, spin, star radius; none means the default efficiency.
    std::optional<double> efficiency;
    std::optional<double> spin;
    std::optional<Length> star_radius;
    double eddington_ratio = 1.0; // for the growth times
    std::optional<Mass> final_mass;
};

// The efficiency assumed when no efficiency, spin or star radius is given: 0.1, common
// practice for radiatively efficient accretion discs.
inline constexpr double default_efficiency = 0.1;

struct EddingtonResult {
    OpacitySource opacity_source = OpacitySource::electron_scattering;
    MassOpacity opacity;                        // the one used
    std::optional<MassOpacity> thomson_opacity; // kappa_es before the Paczynski reduction
    std::optional<double> opacity_factor;       // kappa / kappa_es from the Paczynski fit
    Power eddington_luminosity;

    std::optional<Power> luminosity; // given, or from flux and distance
    bool luminosity_from_flux = false;
    std::optional<double> eddington_ratio;
    std::optional<Mass> minimum_mass;
    std::optional<MassRate> required_accretion_rate;

    std::optional<EfficiencySource> efficiency_source; // empty: the default was used
    double efficiency = default_efficiency;
    std::optional<double> isco_radius_gravitational; // r_isco in GM/c^2, when from spin
    std::optional<Length> isco_radius;
    std::optional<Length> schwarzschild_radius; // when from a star radius
    MassRate eddington_accretion_rate;

    double growth_eddington_ratio = 1.0;
    Time efolding_time;
    std::optional<Time> growth_time;
};

// Validates the whole input (InputError naming the quantity) and computes every result that
// the input allows. Throws InputError if a result overflows double precision.
EddingtonResult eddington(const EddingtonInput& input);

} // namespace holdfast
