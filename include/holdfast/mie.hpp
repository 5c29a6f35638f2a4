#pragma once
// Mie theory for spheres: extinction, scattering, absorption and radiation-pressure
// efficiencies of a homogeneous sphere and of a coated (core-mantle) sphere.
// Convention: relative refractive index m = n + ik with k >= 0 (absorbing), size parameter
// x = 2 pi s / lambda for a sphere of radius s (always the radius, never the diameter).
#include <complex>

#include "holdfast/units.hpp"

namespace holdfast {

struct MieEfficiencies {
    double q_ext = 0.0;  // extinction
    double q_sca = 0.0;  // scattering
    double q_abs = 0.0;  // absorption, q_ext - q_sca
    double q_back = 0.0; // backscattering
    double g = 0.0;      // asymmetry parameter <cos theta>
    double q_pr = 0.0;   // radiation pressure, q_ext - g q_sca
};

// Homogeneous sphere. Plain doubles: this is the hot kernel. Throws InputError outside the
// documented range (see mie.cpp header comment and README).
MieEfficiencies mie_sphere(std::complex<double> m, double x);

// The same, from a grain radius and a wavelength in vacuum (or in the surrounding medium).
MieEfficiencies mie_sphere(std::complex<double> m, Length radius, Length wavelength);

// Coated sphere: core of index m_core and size parameter x_core inside a mantle of index
// m_mantle whose outer size parameter is x_outer (x_core <= x_outer). Toon & Ackerman (1981).
MieEfficiencies mie_coated_sphere(std::complex<double> m_core, std::complex<double> m_mantle,
                                  double x_core, double x_outer);

} // namespace holdfast
