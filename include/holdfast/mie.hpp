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

// The documented range of the exact series (mie_sphere, mie_coated_sphere). Inside it the
// efficiencies Q_ext, Q_sca, Q_abs (where above 1e-6), g and Q_pr agree with a 50-digit
// evaluation of the same series to a relative 1e-9 or better (tests/mie_reference_test.cpp,
// which also states the accuracy of Q_back); outside it the functions throw InputError.
// The index range covers published optical constants of grain materials: metals in the far
// infrared (iron: n, k of a few hundred), graphite and amorphous carbon (n, k ~ 10-20), and
// oxides near their reststrahlen bands (n down to ~0.02 with k ~ 1).
// Non-absorbing spheres of large n (k = 0, n >~ 100) are ill-conditioned near their sharp
// resonances: one unit in the last place of n or x changes Q_ext by up to ~5e-10 (Q_back by
// ~2e-7) there, so no double-precision evaluation can do better; the tests hold them to 1e-9
// or four times that one-ulp change, whichever is larger.
// Q_back, the square of a sum whose terms (~2n+1) cancel to ~x, is ill-conditioned for large
// transparent spheres of any index as well: at x ~ 6e3 (k = 0, n = 1.33-3.4) one ulp of n or
// x changes it by up to ~8e-10 relative, and the series keeps it within 1e-9 or four times
// that change, whichever is larger (measured: at most 2.2 times the change, 1.7e-9 relative
// at n = 2.606, x = 6014.77; tests/mie_reference_test.cpp). Absorbing spheres in the tests
// get 1e-9 for Q_back too.
struct MieRange {
    static constexpr double x_min = 1e-6;       // size parameter, inclusive
    static constexpr double x_max_series = 1e5; // size parameter, inclusive
    static constexpr double n_min = 0.01;       // real part of m, inclusive
    static constexpr double n_max = 1000.0;     // real part of m, inclusive
    static constexpr double k_max = 1000.0;     // imaginary part of m, 0 <= k <= k_max
    // |m| x, inclusive. The downward D_n(mx) recurrence starts above |m| x, so its cost (not
    // its memory: only N = mie_series_terms(x) values are kept) grows with |m| x: about 3 ms
    // per call at the cap. Above it mie_sphere refuses and mie_sphere_any_size uses geometric
    // optics; the cap keeps x >= 1414 there (> x_min_geometric) for every index in range.
    static constexpr double mx_max_series = 2e6;
    // The geometric-optics approximation (mie_geometric_optics) accepts x from here up to
    // x_max_geometric; its error against the series is stated in README and mie.cpp.
    static constexpr double x_min_geometric = 100.0;
    static constexpr double x_max_geometric = 1e12;
};

// Number of series terms used for size parameter x: ceil(x + 6 x^(1/3) + 2). This is the
// form of Wiscombe's truncation (1980, Appl. Opt. 19, 1505: x + 4.05 x^(1/3) + 2) with a
// wider margin: the absorption terms beyond Wiscombe's N still carry up to ~7e-9 of Q_abs
// when Q_abs << Q_ext (measured against a 50-digit sum); with 6 x^(1/3) that drops below
// 1e-12 for a few per cent more terms.
int mie_series_terms(double x);

// Homogeneous sphere. Plain doubles: this is the hot kernel. Throws InputError outside
// MieRange (x in [x_min, x_max_series], n in [n_min, n_max], k in [0, k_max],
// |m| x <= mx_max_series).
MieEfficiencies mie_sphere(std::complex<double> m, double x);

// The same, from a grain radius and a wavelength in vacuum (or in the surrounding medium).
MieEfficiencies mie_sphere(std::complex<double> m, Length radius, Length wavelength);

// Coated sphere: core of index m_core and size parameter x_core inside a mantle of index
// m_mantle whose outer size parameter is x_outer (x_core <= x_outer). Toon & Ackerman (1981).
// Same range as mie_sphere for both indices and x_outer (|m_mantle| x_outer and
// |m_core| x_core each at most mx_max_series); 0 <= x_core <= x_outer.
MieEfficiencies mie_coated_sphere(std::complex<double> m_core, std::complex<double> m_mantle,
                                  double x_core, double x_outer);

// Perfectly conducting sphere (the limit |m| -> infinity), x in [x_min, x_max_series].
MieEfficiencies mie_perfect_conductor(double x);

// Large-particle approximation for x >= MieRange::x_min_geometric: extinction paradox
// (q_ext = 2: geometric cross-section plus diffraction), Fresnel reflection and refracted
// rays of every order attenuated along their chords (geometric optics), diffraction taken
// as exactly forward. q_back is the specular back-reflection |(m-1)/(m+1)|^2 only (no glory
// or axial focusing). Its error against the exact series is measured in tests/mie_test.cpp
// and quoted in README ("The Mie series").
MieEfficiencies mie_geometric_optics(std::complex<double> m, double x);

// The exact series up to MieRange::x_max_series and |m| x <= MieRange::mx_max_series, the
// geometric-optics approximation beyond either (up to x_max_geometric), and the small-particle
// limit (mie_small_sphere) for 0 < x < x_min. `used_series` (if given) tells whether the
// series ran.
MieEfficiencies mie_sphere_any_size(std::complex<double> m, double x, bool* used_series = nullptr);

// Small-particle (Rayleigh) limit for 0 < x < MieRange::x_min, where the series is not used
// (Bohren & Huffman 1983, sec. 5.2): Q_abs = 4 x Im K with its next term in x (eq. 5.11),
// Q_sca = (8/3) x^4 |K|^2, K = (m^2 - 1)/(m^2 + 2), g = 0, Q_pr = Q_ext. Relative corrections
// are O(x^2) ~ 1e-12 (with the x^2 term, O((|m| x)^4) for metals); at x = 1e-6 it agrees with
// the series to 1e-9 (tests/mie_small_test.cpp). Same index range as mie_sphere; InputError
// for x outside (0, x_min] (x_min itself is taken, for comparisons with the series).
MieEfficiencies mie_small_sphere(std::complex<double> m, double x);
// The coated sphere's limit from its polarizability (Bohren & Huffman 1983, eq. 5.36), leading
// order (see mie_small.cpp for what that leaves out for metal components). 0 <= x_core <=
// x_outer <= x_min.
MieEfficiencies mie_small_coated_sphere(std::complex<double> m_core, std::complex<double> m_mantle,
                                        double x_core, double x_outer);
// mie_coated_sphere, or mie_small_coated_sphere for x_outer below x_min.
MieEfficiencies mie_coated_sphere_any_size(std::complex<double> m_core,
                                           std::complex<double> m_mantle, double x_core,
                                           double x_outer);

} // namespace holdfast
