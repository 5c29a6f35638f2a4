#pragma once
// Test-only reference: the Mie series of a homogeneous sphere evaluated in 50-digit
// arithmetic, written independently of src/core/mie.cpp and as plainly as possible:
// Bohren & Huffman (1983), "Absorption and Scattering of Light by Small Particles", Wiley,
// eq. (4.88) for a_n, b_n with D_n(mx) from the downward recurrence (4.89) started far above
// |mx| at D = 0, psi_n and chi_n by their upward recurrence (4.89 neighbours), and the sums
// (4.61), (4.62), (4.74); Q_abs = Q_ext - Q_sca. It uses more terms than the fast code
// (x + 6 x^(1/3) + 20) and a much higher start for D_n, so both truncation and start errors of
// the fast code show up in a comparison. Slow (microseconds per operation): tests only.
#include <boost/multiprecision/cpp_bin_float.hpp>
#include <boost/multiprecision/cpp_complex.hpp>

#include <algorithm>
#include <cmath>
#include <vector>

namespace holdfast::test {

struct ReferenceEfficiencies {
    double q_ext, q_sca, q_abs, q_back, g, q_pr;
};

inline ReferenceEfficiencies reference_mie(double n_real, double k_imag, double x_double) {
    namespace bmp = boost::multiprecision;
    using Real = bmp::cpp_bin_float_50;
    using Cx = bmp::cpp_complex_50;
    const Real x(x_double);
    const Cx m{Real(n_real), Real(k_imag)};
    const Cx z = m * x;
    const int n_max = static_cast<int>(x_double + 6.0 * std::cbrt(x_double) + 20.0);
    const double abs_z = std::hypot(n_real, k_imag) * x_double;
    const int top =
        std::max(n_max, static_cast<int>(abs_z)) + 100 + static_cast<int>(20.0 * std::cbrt(abs_z));
    std::vector<Cx> d(static_cast<std::size_t>(top) + 1, Cx(0));
    for (int n = top; n >= 1; --n) {
        const Cx nz = Real(n) / z;
        d[static_cast<std::size_t>(n - 1)] = nz - Real(1) / (d[static_cast<std::size_t>(n)] + nz);
    }
    using std::cos;
    using std::sin;
    Real psi0 = sin(x), chi0 = cos(x);
    Real psi1 = psi0 / x - chi0, chi1 = chi0 / x + psi0;
    const Cx i_unit{Real(0), Real(1)};
    Real s_ext = 0, s_sca = 0, s_asym = 0;
    Cx s_back(0);
    Cx a_prev(0), b_prev(0);
    for (int n = 1; n <= n_max; ++n) {
        const Real rn(n);
        const Cx xi = Cx(psi1) - i_unit * chi1;
        const Cx xi0 = Cx(psi0) - i_unit * chi0;
        const Cx dn = d[static_cast<std::size_t>(n)];
        const Cx ga = dn / m + rn / x;
        const Cx gb = m * dn + rn / x;
        const Cx a = (ga * psi1 - psi0) / (ga * xi - xi0);
        const Cx b = (gb * psi1 - psi0) / (gb * xi - xi0);
        const Real w = 2 * rn + 1;
        s_ext += w * (a.real() + b.real());
        s_sca += w * (norm(a) + norm(b));
        if (n > 1) {
            const Real k = rn - 1;
            s_asym += k * (k + 2) / (k + 1) * (a_prev * conj(a) + b_prev * conj(b)).real();
        }
        s_asym += w / (rn * (rn + 1)) * (a * conj(b)).real();
        s_back += (n % 2 == 0 ? w : -w) * (a - b);
        a_prev = a;
        b_prev = b;
        const Real psi2 = w / x * psi1 - psi0;
        const Real chi2 = w / x * chi1 - chi0;
        psi0 = psi1;
        psi1 = psi2;
        chi0 = chi1;
        chi1 = chi2;
    }
    const Real f = 2 / (x * x);
    const Real q_ext = f * s_ext, q_sca = f * s_sca, gq = 2 * f * s_asym;
    ReferenceEfficiencies r{};
    r.q_ext = static_cast<double>(q_ext);
    r.q_sca = static_cast<double>(q_sca);
    r.q_abs = static_cast<double>(q_ext - q_sca);
    r.q_back = static_cast<double>(norm(s_back) / (x * x));
    r.g = static_cast<double>(gq / q_sca);
    r.q_pr = static_cast<double>(q_ext - gq);
    return r;
}

} // namespace holdfast::test
