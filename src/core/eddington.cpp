// Eddington limit, accretion efficiency and growth.
// References:
//   Eddington luminosity and electron scattering: Rybicki & Lightman (1979), Radiative
//     Processes in Astrophysics (Thomson scattering; the Eddington limit); Frank, King &
//     Raine (2002), Accretion Power in Astrophysics, 3rd ed., section 1.2. Section and
//     equation references to these books are from memory.
//   Klein-Nishina and degeneracy reduction: Paczynski (1983), ApJ 267, 315, the fit to the
//     electron-scattering opacity used in his X-ray burster models. The form and coefficients
//     are from memory (they match the form widely quoted from that paper); the paper's
//     equation number was not checked.
//   ISCO and binding energy: Bardeen, Press & Teukolsky (1972), ApJ 178, 347, eq. 2.21.
//   Spin-limited efficiency: Thorne (1974), ApJ 191, 507.
//   Growth time: Salpeter (1964), ApJ 140, 796.
#include "holdfast/eddington.hpp"

#include <cmath>
#include <numbers>
#include <sstream>

#include "holdfast/constants.hpp"
#include "holdfast/errors.hpp"

namespace holdfast {
namespace {

using constants::gravitational_constant_SI;
using constants::speed_of_light_m_s;
constexpr double pi = std::numbers::pi;

std::string number_text(double v) {
    std::ostringstream os;
    os.precision(10);
    os << v;
    return os.str();
}

[[noreturn]] void refuse(const std::string& what, double value, const std::string& accepted) {
    throw InputError(what + " = " + number_text(value) + " is not accepted; it must be " +
                     accepted);
}

void require_positive(const std::string& what, double value, const std::string& unit) {
    if (!(value > 0.0) || !std::isfinite(value))
        refuse(what, value, "a finite value greater than zero" + (unit.empty() ? "" : " " + unit));
}

void require_efficiency(double eta) {
    if (!(eta > 0.0 && eta < 1.0)) refuse("efficiency", eta, "in (0, 1)");
}

// A result that overflowed or underflowed to zero means the inputs lie outside what double
// precision can carry; that is the input's fault, not a failed computation.
double checked(const std::string& what, double value) {
    if (!std::isfinite(value) || !(value > 0.0))
        throw InputError(what + " came out as " + number_text(value) +
                         ": the inputs are outside the range double precision can represent");
    return value;
}

} // namespace

MassOpacity electron_scattering_opacity(double hydrogen_mass_fraction) {
    const double x = hydrogen_mass_fraction;
    if (!(x >= 0.0 && x <= 1.0)) refuse("hydrogen mass fraction X", x, "in [0, 1]");
    // Electrons per nucleon mass: X from hydrogen, (1 - X)/2 from helium and fully ionised
    // metals, so n_e = rho (1 + X) / (2 m_p), kappa = n_e sigma_T / rho.
    return m2_per_kg(constants::thomson_cross_section_m2 * (1.0 + x) /
                     (2.0 * constants::proton_mass_kg));
}

double paczynski_opacity_factor(Temperature gas_temperature, MassDensity gas_density) {
    const double t_K = gas_temperature.value();
    const double rho_cgs = in_g_per_cm3(gas_density);
    require_positive("gas temperature", t_K, "K");
    if (!(rho_cgs >= 0.0) || !std::isfinite(rho_cgs))
        refuse("gas density", gas_density.value(), "zero or a positive finite value in kg/m3");
    // Paczynski (1983): kappa = kappa_es / {[1 + 2.7e11 rho/T^2][1 + (T/4.5e8 K)^0.86]},
    // cgs. The first bracket is the degeneracy term, the second the Klein-Nishina term.
    const double degeneracy = 1.0 + 2.7e11 * rho_cgs / (t_K * t_K);
    const double klein_nishina = 1.0 + std::pow(t_K / 4.5e8, 0.86);
    return 1.0 / (degeneracy * klein_nishina);
}

Power eddington_luminosity(Mass mass, MassOpacity opacity) {
    require_positive("mass", mass.value(), "kg");
    require_positive("opacity", opacity.value(), "m2/kg");
    // L_Edd = 4 pi G M c / kappa (FKR 2002, section 1.2, there with kappa = sigma_T / m_p).
    return watts(checked("Eddington luminosity", 4.0 * pi * gravitational_constant_SI *
                                                     mass.value() * speed_of_light_m_s /
                                                     opacity.value()));
}

Mass eddington_minimum_mass(Power luminosity, MassOpacity opacity) {
    require_positive("luminosity", luminosity.value(), "W");
    require_positive("opacity", opacity.value(), "m2/kg");
    // L = 4 pi G M c / kappa solved for M.
    return kilograms(
        checked("minimum mass", luminosity.value() * opacity.value() /
                                    (4.0 * pi * gravitational_constant_SI * speed_of_light_m_s)));
}

Power luminosity_from_flux(EnergyFlux flux, Length distance, double beaming) {
    require_positive("flux", flux.value(), "W/m2");
    require_positive("distance", distance.value(), "m");
    if (!(beaming > 0.0 && beaming <= 1.0)) refuse("beaming fraction", beaming, "in (0, 1]");
    const double d = distance.value();
    return watts(checked("luminosity from flux", 4.0 * pi * d * d * flux.value() * beaming));
}

double isco_radius(double spin) {
    const double a = spin;
    if (!(a >= -1.0 && a <= 1.0)) refuse("spin a", a, "in [-1, 1]");
    // Bardeen, Press & Teukolsky (1972), eq. 2.21, r in units of GM/c^2:
    //   Z1 = 1 + (1 - a^2)^(1/3) [(1 + a)^(1/3) + (1 - a)^(1/3)]
    //   Z2 = (3 a^2 + Z1^2)^(1/2)
    //   r_ms = 3 + Z2 -+ [(3 - Z1)(3 + Z1 + 2 Z2)]^(1/2), upper sign for prograde orbits.
    // With a signed spin (a < 0 retrograde) the sign in front of the root is sign(a).
    const double z1 = 1.0 + std::cbrt(1.0 - a * a) * (std::cbrt(1.0 + a) + std::cbrt(1.0 - a));
    const double z2 = std::sqrt(3.0 * a * a + z1 * z1);
    // (3 - Z1) >= 0 for |a| <= 1; max() keeps rounding at a = 0 from giving sqrt(-tiny).
    const double root = std::sqrt(std::max(0.0, (3.0 - z1) * (3.0 + z1 + 2.0 * z2)));
    return a >= 0.0 ? 3.0 + z2 - root : 3.0 + z2 + root;
}

double efficiency_from_spin(double spin) {
    const double r = isco_radius(spin);
    // Specific energy of the circular orbit at r_ms, E = (1 - 2/(3 r_ms))^(1/2)
    // (BPT 1972, with eq. 2.21); the disc radiates 1 - E of the rest mass before the gas
    // plunges.
    return 1.0 - std::sqrt(1.0 - 2.0 / (3.0 * r));
}

Length schwarzschild_radius(Mass mass) {
    require_positive("mass", mass.value(), "kg");
    return metres(checked("Schwarzschild radius", 2.0 * gravitational_constant_SI * mass.value() /
                                                      (speed_of_light_m_s * speed_of_light_m_s)));
}

double efficiency_from_surface(Mass mass, Length radius) {
    require_positive("star radius", radius.value(), "m");
    const Length rs = schwarzschild_radius(mass);
    if (!(radius > rs))
        throw InputError("star radius " + number_text(radius.value()) +
                         " m is not outside the Schwarzschild radius " + number_text(rs.value()) +
                         " m of this mass; an object with a surface must be larger");
    // Newtonian potential energy released per unit rest energy, G M / (R c^2)
    // (FKR 2002, section 1.2). Below 1/2 because R > 2 G M / c^2.
    return gravitational_constant_SI * mass.value() /
           (radius.value() * speed_of_light_m_s * speed_of_light_m_s);
}

MassRate accretion_rate(Power luminosity, double efficiency) {
    require_positive("luminosity", luminosity.value(), "W");
    require_efficiency(efficiency);
    // L = eta Mdot c^2.
    return kg_per_second(
        checked("accretion rate",
                luminosity.value() / (efficiency * speed_of_light_m_s * speed_of_light_m_s)));
}

Time efolding_time(MassOpacity opacity, double efficiency, double eddington_ratio) {
    require_positive("opacity", opacity.value(), "m2/kg");
    require_efficiency(efficiency);
    require_positive("Eddington ratio", eddington_ratio, "");
    // dM/dt = (1 - eta) Mdot with Mdot = lambda L_Edd / (eta c^2) = lambda 4 pi G M /
    // (kappa eta c), so M grows as exp(t / t_e) with
    // t_e = eta / (1 - eta) * kappa c / (4 pi G lambda) (Salpeter 1964 for kappa = sigma_T/m_p).
    return seconds(checked("e-folding time",
                           efficiency / (1.0 - efficiency) * opacity.value() * speed_of_light_m_s /
                               (4.0 * pi * gravitational_constant_SI * eddington_ratio)));
}

Time growth_time(Mass mass, Mass final_mass, MassOpacity opacity, double efficiency,
                 double eddington_ratio) {
    require_positive("mass", mass.value(), "kg");
    require_positive("final mass", final_mass.value(), "kg");
    if (final_mass < mass)
        throw InputError("final mass " + number_text(final_mass.value()) +
                         " kg is below the mass " + number_text(mass.value()) +
                         " kg; growth cannot make an object lighter");
    const Time te = efolding_time(opacity, efficiency, eddington_ratio);
    // Exponential growth: M(t) = M exp(t / t_e).
    return std::log(final_mass.value() / mass.value()) * te;
}

EddingtonResult eddington(const EddingtonInput& in) {
    require_positive("mass", in.mass.value(), "kg");
    EddingtonResult out;

    // ---- opacity
    if (in.opacity) {
        if (in.gas_temperature || in.gas_density)
            throw InputError("the Paczynski reduction (gas temperature and density) applies to "
                             "electron scattering only, not to a given opacity");
        require_positive("opacity", in.opacity->value(), "m2/kg");
        out.opacity_source = OpacitySource::given;
        out.opacity = *in.opacity;
    } else {
        const MassOpacity kes = electron_scattering_opacity(in.hydrogen_mass_fraction);
        out.opacity_source = OpacitySource::electron_scattering;
        out.opacity = kes;
        if (in.gas_density && !in.gas_temperature)
            throw InputError("a gas density needs a gas temperature for the Paczynski "
                             "reduction of the opacity");
        if (in.gas_temperature) {
            const double f = paczynski_opacity_factor(
                *in.gas_temperature, in.gas_density ? *in.gas_density : kg_per_m3(0.0));
            out.thomson_opacity = kes;
            out.opacity_factor = f;
            out.opacity = f * kes;
        }
    }
    checked("opacity", out.opacity.value());
    out.eddington_luminosity = eddington_luminosity(in.mass, out.opacity);

    // ---- efficiency
    const int n_eff = (in.efficiency ? 1 : 0) + (in.spin ? 1 : 0) + (in.star_radius ? 1 : 0);
    if (n_eff > 1)
        throw InputError("give at most one of efficiency, spin and star radius; they all set "
                         "the efficiency");
    if (in.efficiency) {
        require_efficiency(*in.efficiency);
        out.efficiency_source = EfficiencySource::given;
        out.efficiency = *in.efficiency;
    } else if (in.spin) {
        out.efficiency_source = EfficiencySource::spin;
        out.efficiency = efficiency_from_spin(*in.spin);
        const double r = isco_radius(*in.spin);
        out.isco_radius_gravitational = r;
        out.isco_radius = metres(r * gravitational_constant_SI * in.mass.value() /
                                 (speed_of_light_m_s * speed_of_light_m_s));
    } else if (in.star_radius) {
        out.efficiency_source = EfficiencySource::star_radius;
        out.efficiency = efficiency_from_surface(in.mass, *in.star_radius);
        out.schwarzschild_radius = schwarzschild_radius(in.mass);
    } else {
        out.efficiency = default_efficiency;
    }
    out.eddington_accretion_rate = accretion_rate(out.eddington_luminosity, out.efficiency);

    // ---- observed luminosity
    if (in.luminosity && in.flux)
        throw InputError("give a luminosity or a flux with a distance, not both");
    if (in.flux && !in.distance) throw InputError("a flux needs a distance");
    if (in.distance && !in.flux) throw InputError("a distance is used only with a flux");
    if (!(in.beaming > 0.0 && in.beaming <= 1.0))
        refuse("beaming fraction", in.beaming, "in (0, 1]");
    if (in.luminosity) {
        require_positive("luminosity", in.luminosity->value(), "W");
        out.luminosity = *in.luminosity;
    } else if (in.flux) {
        out.luminosity = luminosity_from_flux(*in.flux, *in.distance, in.beaming);
        out.luminosity_from_flux = true;
    }
    if (out.luminosity) {
        out.eddington_ratio =
            checked("Eddington ratio", *out.luminosity / out.eddington_luminosity);
        out.minimum_mass = eddington_minimum_mass(*out.luminosity, out.opacity);
        out.required_accretion_rate = accretion_rate(*out.luminosity, out.efficiency);
    }

    // ---- growth
    out.growth_eddington_ratio = in.eddington_ratio;
    out.efolding_time = efolding_time(out.opacity, out.efficiency, in.eddington_ratio);
    if (in.final_mass)
        out.growth_time =
            growth_time(in.mass, *in.final_mass, out.opacity, out.efficiency, in.eddington_ratio);
    return out;
}

} // namespace holdfast
