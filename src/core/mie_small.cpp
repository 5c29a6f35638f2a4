// Efficiencies of spheres much smaller than the wavelength, below the series' range
// (x < MieRange::x_min = 1e-6): the small-particle (Rayleigh) limit.
//
// References
//  - C. F. Bohren & D. R. Huffman (1983), "Absorption and Scattering of Light by Small
//    Particles", Wiley (BH), sec. 5.2: Q_abs = 4 x Im K, Q_sca = (8/3) x^4 |K|^2,
//    K = (m^2 - 1)/(m^2 + 2) (eqs. 5.7-5.9), with the next term of the expansion in x for
//    Q_abs (eq. 5.11); sec. 5.4, eq. 5.36: the polarizability of a coated sphere (equation
//    numbers recalled from memory; every formula here is checked against the series).
//
// Why more than the leading terms. 4 x Im K is all of Q_abs to O(x^2) for a dielectric, but
// for a metal (|m| ~ 100-1000, within MieRange) Im K ~ 3 Im(m^2)/|m|^4 is so small that the
// magnetic-dipole absorption (2/15) x^3 Im(m^2), which BH eq. 5.11's x^2 term carries, can
// match it even at x = 1e-6, and its own next term (relative (m x)^2 / 10.5) still shows at
// 2e-9. So the magnetic dipole coefficient is taken to (m x)^4: b_1 = -(2i/3) x^3 M with
// M = F(m x) - F(x), F(z) = -(1/2) [1 - 3/z^2 + 3 cot(z)/z] = z^2/30 + z^4/315 + z^6/3150 +
// ..., the small-x form of b_1 (BH eq. 4.53 with the Riccati-Bessel functions of x expanded;
// derived here, checked against the series in tests/mie_small_test.cpp). What is left is
// O(x^2) relative (below 1e-12 for x < 1e-6) and O((|m| x)^4 / 100) <= 4e-14 for every index
// in MieRange (|m| x <= 1.42e-3 below x = 1e-6). Scattering: a_1 = -(2i/3) x^3 K and b_1, so
// Q_sca = (6/x^2)(|a_1|^2 + |b_1|^2) (BH eq. 4.61), g Q_sca = (6/x^2) Re(a_1 b_1*) (eq. 4.74; g
// is O(x^2) for a dielectric but -(m x)^2/30 ~ 3e-8 for a metal), Q_back = (9/x^2)|a_1 - b_1|^2
// (eq. 4.82). The a_1 correction (3/5) x^2 (m^2 - 2)/(m^2 + 2) and a_2 are O(x^2) relative.
//
// Coated spheres use eq. 5.36 at leading order (the mantle and core polarizability) without
// the magnetic dipole, which has no short closed form there: for dielectric and carbon-like
// components its share is O(x^2) ~ 1e-12; for a metal component (|m| in the hundreds) it can
// reach a few per cent of Q_abs (as for the homogeneous metal sphere above), so coated grains
// with a metal component below x = 1e-6 are only good to that (README, "Grain temperatures").
#include <cmath>
#include <complex>
#include <string>

#include "holdfast/errors.hpp"
#include "holdfast/mie.hpp"
#include "mie_series.hpp"
#include "text_table.hpp"

namespace holdfast {
namespace {

using cplx = std::complex<double>;

void check_small_x(double x, const char* what) {
    if (!(x > 0.0 && x <= MieRange::x_min))
        throw InputError(std::string(what) + ": size parameter " + detail::num(x) +
                         " is outside the small-particle limit's range (0, 1e-6]");
}

// Efficiencies from the dipole coefficients a_1 = -(2i/3) x^3 k (electric, k = alpha / 4 pi a^3)
// and b_1 = -(2i/3) x^3 mag (magnetic), with the absorption efficiency already computed.
MieEfficiencies from_dipoles(cplx k, cplx mag, double x, double q_abs) {
    MieEfficiencies e;
    const double x2 = x * x, x4 = x2 * x2;
    // (6/x^2)|a_1|^2 = (8/3) x^4 |k|^2 (BH eq. 5.8), likewise for b_1.
    e.q_abs = q_abs;
    e.q_sca = 8.0 / 3.0 * x4 * (std::norm(k) + std::norm(mag));
    e.q_ext = e.q_abs + e.q_sca;
    // g Q_sca = (6/x^2) Re(a_1 b_1*) = (8/3) x^4 Re(k mag*) (BH eq. 4.74, n = 1 terms).
    e.g = e.q_sca > 0.0 ? 8.0 / 3.0 * x4 * (k * std::conj(mag)).real() / e.q_sca : 0.0;
    e.q_pr = e.q_ext - e.g * e.q_sca;
    e.q_back = 4.0 * x4 * std::norm(k - mag); // (9/x^2)|a_1 - b_1|^2 (BH eq. 4.82)
    return e;
}

// F(z) = -(1/2)[1 - 3/z^2 + 3 cot(z)/z] by its series (|z| <= 1.42e-3 here: z^8 terms are
// below 1e-23 of the first).
cplx magnetic_f(cplx z) {
    const cplx z2 = z * z;
    return z2 * (1.0 / 30.0 + z2 * (1.0 / 315.0 + z2 / 3150.0));
}

} // namespace

MieEfficiencies mie_small_sphere(std::complex<double> m, double x) {
    detail::check_index(m, "mie_small_sphere");
    check_small_x(x, "mie_small_sphere");
    const cplx m2 = m * m;
    const cplx k = (m2 - 1.0) / (m2 + 2.0); // BH eq. 5.7
    // BH eq. 5.11: Q_abs = 4 x Im{K [1 + (x^2/15) K (m^4 + 27 m^2 + 38) / (2 m^2 + 3)]}.
    const cplx corr = 1.0 + x * x / 15.0 * k * (m2 * m2 + 27.0 * m2 + 38.0) / (2.0 * m2 + 3.0);
    // The magnetic dipole's next term (see above): (6/x^2) Re(b_1) beyond eq. 5.11's
    // (2/15) x^3 Im(m^2) is (4/315) x^5 Im(m^4).
    const double x2 = x * x;
    const double q_abs = 4.0 * x * (k * corr).imag() + 4.0 / 315.0 * x2 * x2 * x * (m2 * m2).imag();
    const cplx mag = magnetic_f(m * x) - magnetic_f(cplx(x, 0.0));
    return from_dipoles(k, mag, x, q_abs);
}

MieEfficiencies mie_small_coated_sphere(std::complex<double> m_core, std::complex<double> m_mantle,
                                        double x_core, double x_outer) {
    detail::check_index(m_core, "mie_small_coated_sphere (core)");
    detail::check_index(m_mantle, "mie_small_coated_sphere (mantle)");
    check_small_x(x_outer, "mie_small_coated_sphere (outer)");
    if (!(x_core >= 0.0 && x_core <= x_outer))
        throw InputError(
            "mie_small_coated_sphere: the core size parameter must be in [0, x_outer]");
    const cplx e1 = m_core * m_core, e2 = m_mantle * m_mantle;
    const double f = std::pow(x_core / x_outer, 3); // core volume fraction
    // BH eq. 5.36 in vacuum (epsilon_m = 1), divided by 4 pi a^3.
    const cplx k = ((e2 - 1.0) * (e1 + 2.0 * e2) + f * (e1 - e2) * (1.0 + 2.0 * e2)) /
                   ((e2 + 2.0) * (e1 + 2.0 * e2) + f * (2.0 * e2 - 2.0) * (e1 - e2));
    return from_dipoles(k, 0.0, x_outer, 4.0 * x_outer * k.imag()); // BH eq. 5.9
}

MieEfficiencies mie_coated_sphere_any_size(std::complex<double> m_core,
                                           std::complex<double> m_mantle, double x_core,
                                           double x_outer) {
    if (x_outer > 0.0 && x_outer < MieRange::x_min)
        return mie_small_coated_sphere(m_core, m_mantle, x_core, x_outer);
    return mie_coated_sphere(m_core, m_mantle, x_core, x_outer);
}

} // namespace holdfast
