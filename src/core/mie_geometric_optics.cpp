// Large-particle approximation to the Mie efficiencies (x >> 1): diffraction plus
// geometric optics.
//
// References
//  - H. C. van de Hulst (1957), "Light Scattering by Small Particles", Wiley; Dover 1981:
//    extinction paradox Q_ext -> 2 (section 8.22), geometric-optics rays of order p with
//    Fresnel coefficients and deviation angles (chapter 12, sections 12.2-12.3).
//  - C. F. Bohren & D. R. Huffman (1983), Wiley, section 4.4: Q_ext -> 2; Fresnel
//    coefficients of an absorbing medium written with w = sqrt(m^2 - sin^2 theta_i).
//  - H. M. Nussenzveig & W. J. Wiscombe (1980), Phys. Rev. Lett. 45, 1490: the edge
//    (surface-wave) correction Q_ext = 2 + 1.9923861 x^(-2/3) + ... (coefficient from
//    memory; its effect is measured against the series in tests/mie_test.cpp).
//
// Model. Of the light falling on the geometric cross-section, half the extinction is
// diffraction (Q = 1, sent exactly forward: no momentum); the other half meets the sphere.
// A ray with incidence angle theta_i (impact parameter s sin theta_i) is reflected with the
// Fresnel reflectance R(theta_i) (unpolarised: mean of s and p) and deviated by
// pi - 2 theta_i; the refracted part leaves after p = 1, 2, ... chords with weight
// (1 - R)^2 R^(p-1) tau^p and deviation 2(theta_i - theta_t) + (p-1)(pi - 2 theta_t),
// tau = exp(-4 k x cos theta_t) being the attenuation along one chord 2 s cos theta_t. The
// sums over p are geometric series, summed in closed form. What is not reflected or
// transmitted is absorbed. Integrating over the projected disc (weight d(sin^2 theta_i)):
//   Q_abs = int (1 - R - T), Q_pr = int (1 - R cos D_0 - sum_p f_p cos D_p),
//   Q_ext = 2 + 1.9923861 x^(-2/3) (edge term, light scattered near the forward direction:
//   it adds to Q_ext and Q_sca but not to Q_pr), Q_sca = Q_ext - Q_abs,
//   g = (Q_ext - Q_pr) / Q_sca, Q_back = R(0) (specular only).
// Refraction uses the real part n for the ray direction inside (adequate for k << n; for
// large k the transmitted rays are absorbed within one chord anyway).
#include <algorithm>
#include <array>
#include <cmath>
#include <complex>
#include <cstdio>
#include <numbers>

#include "holdfast/errors.hpp"
#include "holdfast/mie.hpp"
#include "mie_series.hpp"

namespace holdfast {
namespace {

using detail::cplx;

// Nussenzveig & Wiscombe (1980), leading edge term of Q_ext (from memory, see header).
constexpr double edge_coefficient = 1.9923861;
constexpr int gauss_points = 8;
constexpr int panels = 64;

struct GaussRule {
    std::array<double, gauss_points> node{};
    std::array<double, gauss_points> weight{};
};

// Gauss-Legendre nodes on [-1, 1] by Newton's method on P_n (Abramowitz & Stegun 25.4.29).
GaussRule make_gauss_rule() {
    GaussRule rule;
    constexpr int n = gauss_points;
    for (int i = 0; i < n; ++i) {
        double t = std::cos(std::numbers::pi * (i + 0.75) / (n + 0.5));
        double dp = 1.0;
        for (int iter = 0; iter < 100; ++iter) {
            double p0 = 1.0;
            double p1 = t;
            for (int j = 2; j <= n; ++j) {
                const double p2 = ((2.0 * j - 1.0) * t * p1 - (j - 1.0) * p0) / j;
                p0 = p1;
                p1 = p2;
            }
            dp = n * (t * p1 - p0) / (t * t - 1.0);
            const double step = p1 / dp;
            t -= step;
            if (std::abs(step) < 1e-16) break;
        }
        rule.node[static_cast<std::size_t>(i)] = t;
        rule.weight[static_cast<std::size_t>(i)] = 2.0 / ((1.0 - t * t) * dp * dp);
    }
    return rule;
}

struct RayIntegrand {
    double absorbed = 0.0;
    double momentum = 0.0;
};

// Everything at one incidence angle, cos theta_i = c.
RayIntegrand rays_at(cplx m, double x, double c) {
    const double s2 = std::max(0.0, 1.0 - c * c); // sin^2 theta_i
    const cplx m2 = m * m;
    const cplx w = std::sqrt(m2 - s2); // m cos theta_t, Im w >= 0: the wave decays inward
    const double rs = std::norm((c - w) / (c + w));
    const double rp = std::norm((m2 * c - w) / (m2 * c + w));
    const double r = 0.5 * (rs + rp);
    const double cos_2i = 2.0 * c * c - 1.0;
    RayIntegrand out;
    // p = 0: specular reflection, deviation pi - 2 theta_i, cos D_0 = -cos 2 theta_i.
    out.momentum = 1.0 + r * cos_2i;
    const double n = m.real();
    const double sin_t2 = s2 / (n * n);
    if (sin_t2 >= 1.0) { // total reflection for n < 1 (if k > 0, the rest is absorbed)
        out.absorbed = 1.0 - r;
        return out;
    }
    const double cos_t = std::sqrt(1.0 - sin_t2);
    const double theta_i = std::acos(c);
    const double theta_t = std::acos(cos_t);
    const double tau = std::exp(-4.0 * m.imag() * x * cos_t);
    const double d1 = 2.0 * (theta_i - theta_t);           // deviation of p = 1
    const double delta = std::numbers::pi - 2.0 * theta_t; // added by each internal reflection
    const double t_sum = (1.0 - r) * (1.0 - r) * tau / (1.0 - r * tau);
    const cplx p_sum = (1.0 - r) * (1.0 - r) * tau * std::polar(1.0, d1) /
                       (1.0 - r * tau * std::polar(1.0, delta));
    out.absorbed = 1.0 - r - t_sum;
    out.momentum -= p_sum.real();
    return out;
}

} // namespace

MieEfficiencies mie_geometric_optics(std::complex<double> m, double x) {
    detail::check_index(m, "mie_geometric_optics");
    if (!(x >= MieRange::x_min_geometric && x <= MieRange::x_max_geometric)) {
        char buf[160];
        std::snprintf(buf, sizeof buf,
                      "mie_geometric_optics: size parameter %g is outside [%g, %g]", x,
                      MieRange::x_min_geometric, MieRange::x_max_geometric);
        throw InputError(buf);
    }
    static const GaussRule rule = make_gauss_rule();
    // Integrate over c = cos theta_i in [0, 1] with weight 2c dc (= d sin^2 theta_i). For
    // n < 1, the edge of total reflection at c_crit = sqrt(1 - n^2) is a square-root kink:
    // c = c_lo + (1 - c_lo) u^2 on each side smooths it (and the grazing end for n > 1).
    const double n = m.real();
    const double c_crit = n < 1.0 ? std::sqrt(1.0 - n * n) : 0.0;
    double q_abs = 0.0;
    double q_pr = 0.0;
    auto integrate = [&](double lo, double hi, bool square) {
        for (int p = 0; p < panels; ++p) {
            const double u0 = static_cast<double>(p) / panels;
            const double u1 = static_cast<double>(p + 1) / panels;
            for (int i = 0; i < gauss_points; ++i) {
                const auto idx = static_cast<std::size_t>(i);
                const double u = 0.5 * (u0 + u1) + 0.5 * (u1 - u0) * rule.node[idx];
                const double du = 0.5 * (u1 - u0) * rule.weight[idx];
                const double c = square ? lo + (hi - lo) * u * u : lo + (hi - lo) * u;
                const double dc = square ? 2.0 * (hi - lo) * u * du : (hi - lo) * du;
                const RayIntegrand f = rays_at(m, x, c);
                q_abs += f.absorbed * 2.0 * c * dc;
                q_pr += f.momentum * 2.0 * c * dc;
            }
        }
    };
    if (c_crit > 0.0) integrate(0.0, c_crit, false);
    integrate(c_crit, 1.0, true);

    MieEfficiencies q;
    q.q_ext = 2.0 + edge_coefficient * std::pow(x, -2.0 / 3.0);
    q.q_abs = std::max(0.0, q_abs); // 1 - R - T rounds to ~-1e-20 for k = 0 and large n
    q.q_sca = q.q_ext - q_abs;
    q.q_pr = q_pr;
    q.g = (q.q_ext - q.q_pr) / q.q_sca;
    q.q_back = std::norm((m - 1.0) / (m + 1.0));
    return q;
}

} // namespace holdfast
