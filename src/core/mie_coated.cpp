// Mie efficiencies of a coated (core-mantle) sphere.
//
// References
//  - A. L. Aden & M. Kerker (1951), J. Appl. Phys. 22, 1242: the coated-sphere solution.
//  - O. B. Toon & T. P. Ackerman (1981), Appl. Opt. 20, 3657: a formulation that stays
//    stable for thick absorbing mantles, where the direct form (Bohren & Huffman 1983,
//    BHCOAT, eqs. 8.2-8.4) overflows through psi_n and chi_n of complex argument.
//  - P. Yang (2003), Appl. Opt. 42, 1710, "Improved recursive algorithm for light scattering
//    by a multilayered sphere": the same stabilisation written with D_n^(1) = psi_n'/psi_n,
//    D_n^(3) = xi_n'/xi_n and the ratio Q_n = [psi_n/xi_n](m2 x1) / [psi_n/xi_n](m2 x2);
//    that is the form implemented here, for two layers (eqs. 13-20 of that paper).
//
// With z1 = m2 x1, z2 = m2 x2 (mantle index at the inner and outer radius) and the core's
// D_n(m1 x1), the mantle carries the core's effect out to x2 as
//   H^a_n = [G2 D1_n(z2) - Q_n G1 D3_n(z2)] / [G2 - Q_n G1],
//   G1 = m2 D1_n(m1 x1) - m1 D1_n(z1),  G2 = m2 D1_n(m1 x1) - m1 D3_n(z1),
// and H^b_n the same with m1 and m2 swapped in G1, G2. Then a_n, b_n are BH eq. (4.88) at
// x2 with D_n(m x)/m -> H^a_n / m2 and m D_n(m x) -> m2 H^b_n.
// Recurrences: D1 downward (as ratios r_n = psi_{n+1}/psi_n, D1_n = (n+1)/z - r_n); D3 upward
// through psi_n xi_n = psi_{n-1} xi_{n-1} r_{n-1} (n/z - D3_{n-1}), D3_n = D1_n + i/(psi_n xi_n),
// psi_0 xi_0 = (1 - e^{2iz})/2, D3_0 = i (Yang 2003, eqs. 18-19); Q_n upward from
// Q_0 = (e^{2i z2} - e^{2i(z2 - z1)}) / (e^{2i z2} - 1), bounded for Im z2 >= Im z1 >= 0,
// times the ratio [psi_n/xi_n] / [psi_{n-1}/xi_{n-1}] = r_{n-1} / (n/z - D3_{n-1}) at z1 over
// the same at z2.
#include <algorithm>
#include <array>
#include <cmath>
#include <complex>
#include <vector>

#include "holdfast/errors.hpp"
#include "holdfast/mie.hpp"
#include "mie_series.hpp"

namespace holdfast {
namespace {

using detail::cplx;

constexpr cplx imag_unit(0.0, 1.0);

// Upward D3_n(z) = xi_n'/xi_n and psi_n xi_n(z), one order at a time, from the downward
// ratios r_n = psi_{n+1}/psi_n. Every factor is formed as a ratio (psi_n/psi_{n-1} = r_{n-1},
// xi_n/xi_{n-1} = n/z - D3_{n-1}) rather than as n/z - D1_{n-1}, which for |z| << n cancels
// to psi_n/psi_{n-1} ~ z/(2n+1) and loses ~1/|z|^2 of the digits (a tiny core).
class XiLogDerivative {
  public:
    XiLogDerivative(cplx z, const cplx* psi_ratio) : inv_z_(1.0 / z), r_(psi_ratio) {
        psi_xi_ = 0.5 * (1.0 - std::exp(2.0 * imag_unit * z)); // psi_0 xi_0
        d3_ = imag_unit;                                       // D3_0
    }
    // From order n-1 to order n.
    void advance(int n) {
        const cplx nz = static_cast<double>(n) * inv_z_;
        const cplx xi_step = nz - d3_;   // xi_n / xi_{n-1}
        const cplx psi_step = r_[n - 1]; // psi_n / psi_{n-1}
        psi_xi_ *= psi_step * xi_step;
        d1_ = static_cast<double>(n + 1) * inv_z_ - r_[n];
        d3_ = d1_ + imag_unit / psi_xi_;
        step_ = psi_step / xi_step; // [psi_n/xi_n] / [psi_{n-1}/xi_{n-1}]
    }
    cplx d1() const { return d1_; }
    cplx d3() const { return d3_; }
    cplx ratio_step() const { return step_; }

  private:
    cplx inv_z_;
    const cplx* r_;
    cplx psi_xi_;
    cplx d1_{0.0, 0.0};
    cplx d3_;
    cplx step_{1.0, 0.0};
};

} // namespace

MieEfficiencies mie_coated_sphere(std::complex<double> m_core, std::complex<double> m_mantle,
                                  double x_core, double x_outer) {
    detail::check_index(m_core, "mie_coated_sphere (core)");
    detail::check_index(m_mantle, "mie_coated_sphere (mantle)");
    detail::check_size_parameter(x_outer, MieRange::x_max_series, "mie_coated_sphere (outer)");
    if (!(x_core >= 0.0 && x_core <= x_outer))
        throw InputError("mie_coated_sphere: the core size parameter must be in [0, x_outer]");
    detail::check_mx(m_mantle, x_outer, "mie_coated_sphere (mantle)");
    detail::check_mx(m_core, x_core, "mie_coated_sphere (core)");
    // A core below 1e-6 of the outer radius holds less than 1e-18 of the volume: the grain is
    // the mantle alone to within rounding (and n/z1 would overflow as x_core -> 0).
    if (x_core < 1e-6 * x_outer) return mie_sphere(m_mantle, x_outer);

    const int n_terms = mie_series_terms(x_outer);
    const auto size = static_cast<std::size_t>(n_terms) + 1;
    thread_local std::vector<cplx> buffer;
    if (buffer.size() < 3 * size) buffer.resize(3 * size);
    cplx* d_core = buffer.data();             // D1_n(m1 x1)
    cplx* r_inner = buffer.data() + size;     // psi_{n+1}/psi_n at m2 x1
    cplx* r_outer = buffer.data() + 2 * size; // psi_{n+1}/psi_n at m2 x2
    const cplx z_core = m_core * x_core;
    const cplx z1 = m_mantle * x_core;
    const cplx z2 = m_mantle * x_outer;
    detail::log_derivative_downward(z_core, n_terms, d_core);
    detail::psi_ratio_downward(z1, n_terms, r_inner);
    detail::psi_ratio_downward(z2, n_terms, r_outer);

    XiLogDerivative inner(z1, r_inner);
    XiLogDerivative outer(z2, r_outer);
    const cplx e2 = std::exp(2.0 * imag_unit * z2);
    cplx q_ratio = (e2 - std::exp(2.0 * imag_unit * (z2 - z1))) / (e2 - 1.0);

    // Riccati-Bessel functions of the real outer size parameter, as for the homogeneous sphere.
    detail::RiccatiUpward rb(x_outer, n_terms);
    const cplx inv_m2 = 1.0 / m_mantle;

    detail::MieSums sums;
    for (int n = 1; n <= n_terms; ++n) {
        inner.advance(n);
        outer.advance(n);
        q_ratio *= inner.ratio_step() / outer.ratio_step();
        const cplx d1_inner = inner.d1();
        const cplx d3_inner = inner.d3();
        const cplx d1_outer = outer.d1();
        const cplx d3_outer = outer.d3();

        const cplx g1a = m_mantle * d_core[n] - m_core * d1_inner;
        const cplx g2a = m_mantle * d_core[n] - m_core * d3_inner;
        const cplx ha = (g2a * d1_outer - q_ratio * g1a * d3_outer) / (g2a - q_ratio * g1a);
        const cplx g1b = m_core * d_core[n] - m_mantle * d1_inner;
        const cplx g2b = m_core * d_core[n] - m_mantle * d3_inner;
        const cplx hb = (g2b * d1_outer - q_ratio * g1b * d3_outer) / (g2b - q_ratio * g1b);

        const double nx = n * rb.inv_x;
        const cplx ga = ha * inv_m2 + nx;
        const cplx gb = m_mantle * hb + nx;
        sums.add(n, detail::coefficient(ga, ga * rb.psi - rb.psi_prev, rb.chi, rb.chi_prev),
                 detail::coefficient(gb, gb * rb.psi - rb.psi_prev, rb.chi, rb.chi_prev));
        rb.advance(n);
    }
    const MieEfficiencies q = sums.finish(x_outer);
    if (!std::isfinite(q.q_ext) || !std::isfinite(q.q_sca) || !std::isfinite(q.q_abs) ||
        !std::isfinite(q.q_back) || !std::isfinite(q.g) || !std::isfinite(q.q_pr))
        throw NumericalError("coated-sphere Mie series gave a non-finite result for core " +
                             detail::format_index(m_core) + ", mantle " +
                             detail::format_index(m_mantle));
    return q;
}

} // namespace holdfast
