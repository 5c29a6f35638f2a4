// Mie efficiencies of a homogeneous sphere (and of a perfectly conducting one).
//
// References
//  - G. Mie (1908), Ann. Phys. 330, 377: the series.
//  - C. F. Bohren & D. R. Huffman (1983), "Absorption and Scattering of Light by Small
//    Particles", Wiley (BH): coefficients through the logarithmic derivative D_n(mx)
//    (eqs. 4.88, 4.89), efficiency sums (4.61, 4.62, 4.74).
//  - W. J. Wiscombe (1980), Appl. Opt. 19, 1505, "Improved Mie scattering algorithms":
//    truncation N = x + 4.05 x^(1/3) + 2 (used here with 6 x^(1/3), see mie_series_terms),
//    downward recurrence for D_n, upward recurrence for psi_n(x), chi_n(x).
//  - G. W. Kattawar & G. N. Plass (1967), Appl. Opt. 6, 1377: D_n upward is unstable for
//    absorbing spheres; downward is stable.
//
// Range (MieRange in mie.hpp): 1e-6 <= x <= 1e5, 0.1 <= n <= 10, 0 <= k <= 10. Inside it the
// results agree with a 50-digit evaluation of the series to a relative 1e-9
// (tests/mie_reference_test.cpp).
//
// Small spheres. Wiscombe (1979, NCAR/TN-140) switches to truncated small-particle
// expansions where the plain series loses digits. Here the series itself is rearranged
// instead, so it stays exact (no truncation of the expansion) at every x >= 1e-6:
//  - below x = 2.5 psi_n(x) comes from downward ratios (riccati_psi_small), not from the
//    cancelling upward start sin x / x - cos x;
//  - the numerators are written with r_n = psi_{n+1}/psi_n, D_n(z) = (n+1)/z - r_n(z), so the
//    b_n numerator psi_n (m D_n(mx) - D_n(x)) = psi_n (r_n(x) - m r_n(mx)) has no cancelling
//    (n+1)/x terms;
//  - Q_abs is summed from the Wronskian form (see detail::coefficient), never as
//    Q_ext - Q_sca.
#include "holdfast/mie.hpp"

#include <algorithm>
#include <array>
#include <cmath>
#include <cstdio>
#include <numbers>
#include <vector>

#include "holdfast/errors.hpp"
#include "mie_series.hpp"

namespace holdfast {
namespace detail {

std::string format_index(cplx m) {
    char buf[64];
    std::snprintf(buf, sizeof buf, "%.6g%+.6gi", m.real(), m.imag());
    return buf;
}

void check_index(cplx m, std::string_view what) {
    const bool ok = std::isfinite(m.real()) && std::isfinite(m.imag()) &&
                    m.real() >= MieRange::n_min && m.real() <= MieRange::n_max && m.imag() >= 0.0 &&
                    m.imag() <= MieRange::k_max;
    if (!ok) {
        char buf[160];
        std::snprintf(buf, sizeof buf,
                      ": refractive index %s is outside the range of the Mie series: "
                      "n in [%g, %g], k in [0, %g]",
                      format_index(m).c_str(), MieRange::n_min, MieRange::n_max, MieRange::k_max);
        throw InputError(std::string(what) + buf);
    }
}

void check_size_parameter(double x, double x_max, std::string_view what) {
    if (!(x >= MieRange::x_min && x <= x_max)) {
        char buf[160];
        std::snprintf(buf, sizeof buf, ": size parameter %g is outside [%g, %g]", x,
                      MieRange::x_min, x_max);
        throw InputError(std::string(what) + buf);
    }
}

void log_derivative_downward(cplx z, int n_terms, cplx* d) {
    const cplx inv_z = 1.0 / z;
    // Unnormalised psi_{n+1}, psi_n; the start psi_{top+1} = 0 is the usual arbitrary one
    // (its error decays before n = max(N, |z|)).
    constexpr double big = 1e150;
    constexpr double shrink = 1e-150;
    cplx upper(0.0, 0.0);
    cplx current(1.0, 0.0);
    int n = downward_start(std::abs(z), n_terms);
    for (; n > n_terms + 1; --n) {
        const cplx lower = static_cast<double>(2 * n + 1) * inv_z * current - upper;
        upper = current;
        current = lower;
        if (std::abs(current.real()) + std::abs(current.imag()) > big) {
            upper *= shrink;
            current *= shrink;
        }
    }
    // Now current = psi_{N+1}, upper = psi_{N+2} (up to one common factor).
    for (; n >= 1; --n) {
        const cplx lower = static_cast<double>(2 * n + 1) * inv_z * current - upper; // psi_{n-1}
        // psi_{n-1}' = (n/z) psi_{n-1} - psi_n, so D_{n-1} = n/z - psi_n / psi_{n-1}.
        d[n - 1] = static_cast<double>(n) * inv_z - current / lower;
        upper = current;
        current = lower;
        if (std::abs(current.real()) + std::abs(current.imag()) > big) {
            upper *= shrink;
            current *= shrink;
        }
    }
}

void psi_ratio_downward(cplx z, int n_terms, cplx* r) {
    const cplx inv_z = 1.0 / z;
    cplx rn(0.0, 0.0); // arbitrary start, as for D_n
    for (int n = downward_start(std::abs(z), n_terms); n > 0; --n) {
        rn = 1.0 / (static_cast<double>(2 * n + 1) * inv_z - rn); // r_{n-1}
        if (n - 1 <= n_terms) r[n - 1] = rn;
    }
}

void riccati_psi_small(double x, int n_terms, double* psi, double* ratio) {
    // r_n -> x / (2n + 3) for n >> x; 20 steps down from there reduce the start error by
    // (x / 2n)^40, far below rounding for x < 2.5.
    const int top = n_terms + 20;
    double r = x / (2.0 * top + 3.0);
    for (int n = top; n > 0; --n) {
        r = 1.0 / ((2.0 * n + 1.0) / x - r); // r_{n-1}
        if (n - 1 <= n_terms) ratio[n - 1] = r;
    }
    psi[0] = std::sin(x);
    for (int n = 1; n <= n_terms; ++n)
        psi[n] = psi[n - 1] * ratio[n - 1];
}

} // namespace detail

namespace {

using detail::cplx;

// 0 < x < small_x_limit: the rearranged, cancellation-free form (see file header).
MieEfficiencies sphere_small(cplx m, double x, int n_terms) {
    if (n_terms > detail::small_x_max_terms)
        throw InternalError("Mie small-x path asked for more terms than it holds");
    std::array<double, detail::small_x_max_terms + 1> psi{};
    std::array<double, detail::small_x_max_terms + 1> rx{};
    std::array<cplx, detail::small_x_max_terms + 1> rz{};
    detail::riccati_psi_small(x, n_terms, psi.data(), rx.data());

    // r_n(mx) downward, as for r_n(x) but from above |mx| (|mx| <= 36 here).
    detail::psi_ratio_downward(m * x, n_terms, rz.data());

    const cplx m2 = m * m;
    const cplx inv_m = 1.0 / m;
    const cplx inv_m2 = 1.0 / m2;
    const cplx c = (1.0 - m2) * inv_m2; // 1/m^2 - 1 without cancellation near m = 1
    const double inv_x = 1.0 / x;
    double chi_prev = std::cos(x);          // chi_0
    double chi = chi_prev * inv_x + psi[0]; // chi_1 = cos x / x + sin x
    detail::MieSums sums;
    for (int n = 1; n <= n_terms; ++n) {
        const double dn = n;
        // G_a = D_n(mx)/m + n/x with D_n(z) = (n+1)/z - r_n(z); P_a = psi_n (D_n(mx)/m - D_n(x))
        const cplx ga = (dn + 1.0) * inv_x * inv_m2 - rz[n] * inv_m + dn * inv_x;
        const cplx pa = psi[n] * ((dn + 1.0) * inv_x * c + rx[n] - rz[n] * inv_m);
        // G_b = m D_n(mx) + n/x; P_b = psi_n (m D_n(mx) - D_n(x)) = psi_n (r_n(x) - m r_n(mx))
        const cplx gb = (2.0 * dn + 1.0) * inv_x - m * rz[n];
        const cplx pb = psi[n] * (rx[n] - m * rz[n]);
        sums.add(n, detail::coefficient(ga, pa, chi, chi_prev),
                 detail::coefficient(gb, pb, chi, chi_prev));
        const double chi_next = (2.0 * dn + 1.0) * inv_x * chi - chi_prev;
        chi_prev = chi;
        chi = chi_next;
    }
    return sums.finish(x);
}

// ---- x >= small_x_limit: BH eq. (4.88) with D_n(mx) downward, psi_n and chi_n upward -------
//
// The kernel runs in passes over buffers instead of one loop over n, so that most of the
// work has no dependency from one n to the next and vectorises:
//  1. D_n(mx), n = 0..N, by the downward recurrence (log_derivative_lanes);
//  2. psi_n(x), chi_n(x), n = 0..N, upward (riccati_upward; a serial chain, but short);
//  3. a_n, b_n and the efficiency sums (coefficient_sums), independent in n;
//  4. the pair sum of g Q_sca, which needs a_{n-1} next to a_n (pair_sums).
// The arithmetic is written on real and imaginary parts (structure of arrays) because the
// vectoriser does not see through std::complex, and the reductions use `omp simd` (with
// -fopenmp-simd: no OpenMP runtime) because without -ffast-math the compiler must not
// reorder a sum by itself; the reordered partial sums differ from the serial ones by
// rounding only.

// Built for the baseline x86-64 and again for x86-64-v3 (AVX2 and FMA); the loader picks
// the version the CPU can run (GCC function multiversioning through an ifunc), so the
// binary stays portable. FMA rounds a*b+c once instead of twice: the results change in the
// last bits only (tests/mie_reference_test.cpp holds both versions to the same 1e-9).
#if defined(__GNUC__) && !defined(__clang__) && defined(__x86_64__) && defined(__ELF__)
#define HOLDFAST_MIE_MULTIVERSION __attribute__((target_clones("arch=x86-64-v3", "default")))
#else
#define HOLDFAST_MIE_MULTIVERSION
#endif
#define HOLDFAST_MIE_INLINE [[gnu::always_inline]] inline

// Downward recurrence in lanes. The linear form psi_{n-1} = a_n psi_n - psi_{n+1},
// a_n = (2n+1)/z (see detail::log_derivative_downward) is one long dependency chain, and
// its latency (two dependent multiply-adds per step, about 3 ns) would dominate the whole
// series. Being linear, it can be cut into `lanes` segments that run side by side:
//  A. every segment's 2x2 transfer matrix, from the two unit start vectors (lanes in
//     parallel);
//  B. the true start vector of each segment, by applying the matrices from the top down
//     (a handful of serial matrix-vector products);
//  C. each segment again from its true start, now forming D_{n-1} = n/z - psi_n/psi_{n-1}
//     (lanes in parallel).
// In exact arithmetic this is the same recurrence from the same start; in floating point
// each step still rounds relative to the size of the dominant (downward growing) solution,
// which is what keeps the plain recurrence stable. Common factors are irrelevant to D_n, so
// each lane is rescaled by an exact power of two when it grows (checked every
// `rescale_every` steps: a step grows a vector by at most |a_n| + 1 < 400 here, so 8 steps
// from below `big` stay far from overflow, also when squared in |psi_{n-1}|^2).
constexpr int lanes = 8;
constexpr int rescale_every = 8;
constexpr double big = 0x1p+300;   // ~2e90
constexpr double shrink = 0x1p-300; // exact inverse of big

// Vectors of one complex 2-vector (psi_{n+1}, psi_n) per lane.
struct LaneVectors {
    double up_re[lanes], up_im[lanes], cur_re[lanes], cur_im[lanes];
};

// Transfer matrix of each lane: psi vector at the bottom = T (psi_{top+1}, psi_top).
// Column 1 is the image of (1, 0), column 2 that of (0, 1).
struct LaneMatrices {
    LaneVectors col1, col2;
};

// Lane j covers the steps n = n_lo + (j+1) steps - 1 down to n_lo + j steps.
HOLDFAST_MIE_INLINE void transfer_matrices(double iz_re, double iz_im, int n_lo, int steps,
                                           LaneMatrices& t) {
    double nd[lanes];
    for (int j = 0; j < lanes; ++j) {
        nd[j] = n_lo + (j + 1) * steps - 1;
        t.col1.up_re[j] = 1.0;
        t.col1.up_im[j] = 0.0;
        t.col1.cur_re[j] = 0.0;
        t.col1.cur_im[j] = 0.0;
        t.col2.up_re[j] = 0.0;
        t.col2.up_im[j] = 0.0;
        t.col2.cur_re[j] = 1.0;
        t.col2.cur_im[j] = 0.0;
    }
    for (int s = 0; s < steps; ++s) {
        for (int j = 0; j < lanes; ++j) {
            const double f = 2.0 * nd[j] + 1.0;
            const double a_re = f * iz_re;
            const double a_im = f * iz_im;
            const double l1_re = a_re * t.col1.cur_re[j] - a_im * t.col1.cur_im[j] - t.col1.up_re[j];
            const double l1_im = a_re * t.col1.cur_im[j] + a_im * t.col1.cur_re[j] - t.col1.up_im[j];
            const double l2_re = a_re * t.col2.cur_re[j] - a_im * t.col2.cur_im[j] - t.col2.up_re[j];
            const double l2_im = a_re * t.col2.cur_im[j] + a_im * t.col2.cur_re[j] - t.col2.up_im[j];
            t.col1.up_re[j] = t.col1.cur_re[j];
            t.col1.up_im[j] = t.col1.cur_im[j];
            t.col2.up_re[j] = t.col2.cur_re[j];
            t.col2.up_im[j] = t.col2.cur_im[j];
            t.col1.cur_re[j] = l1_re;
            t.col1.cur_im[j] = l1_im;
            t.col2.cur_re[j] = l2_re;
            t.col2.cur_im[j] = l2_im;
            nd[j] -= 1.0;
        }
        if (s % rescale_every == rescale_every - 1) {
            for (int j = 0; j < lanes; ++j) {
                const double size = std::max(
                    std::max(std::max(std::abs(t.col1.up_re[j]), std::abs(t.col1.up_im[j])),
                             std::max(std::abs(t.col1.cur_re[j]), std::abs(t.col1.cur_im[j]))),
                    std::max(std::max(std::abs(t.col2.up_re[j]), std::abs(t.col2.up_im[j])),
                             std::max(std::abs(t.col2.cur_re[j]), std::abs(t.col2.cur_im[j]))));
                const double g = size > big ? shrink : 1.0;
                t.col1.up_re[j] *= g;
                t.col1.up_im[j] *= g;
                t.col1.cur_re[j] *= g;
                t.col1.cur_im[j] *= g;
                t.col2.up_re[j] *= g;
                t.col2.up_im[j] *= g;
                t.col2.cur_re[j] *= g;
                t.col2.cur_im[j] *= g;
            }
        }
    }
}

// v <- T_j v for lane j's matrix, then scaled to a largest component of 1 (only the
// direction matters).
HOLDFAST_MIE_INLINE void apply_transfer(const LaneMatrices& t, int j, cplx& up, cplx& cur) {
    const cplx c1_up(t.col1.up_re[j], t.col1.up_im[j]);
    const cplx c1_cur(t.col1.cur_re[j], t.col1.cur_im[j]);
    const cplx c2_up(t.col2.up_re[j], t.col2.up_im[j]);
    const cplx c2_cur(t.col2.cur_re[j], t.col2.cur_im[j]);
    const cplx new_up = c1_up * up + c2_up * cur;
    const cplx new_cur = c1_cur * up + c2_cur * cur;
    const double size = std::max(std::max(std::abs(new_up.real()), std::abs(new_up.imag())),
                                 std::max(std::abs(new_cur.real()), std::abs(new_cur.imag())));
    up = new_up / size;
    cur = new_cur / size;
}

// D_n(z) for n = 0..lanes*steps - 1 into d_re, d_im (the caller needs n = 0..n_terms, so
// lanes*steps > n_terms), from the start n_start >= downward_start(|z|, n_terms) with the
// usual arbitrary psi_{n_start+1} = 0, psi_{n_start} = 1.
HOLDFAST_MIE_INLINE void log_derivative_lanes(cplx z, int n_terms, double* d_re, double* d_im) {
    const cplx inv_z = 1.0 / z;
    const double iz_re = inv_z.real();
    const double iz_im = inv_z.imag();
    const int stored_steps = (n_terms + 1 + lanes - 1) / lanes; // steps n = 1..lanes*stored
    const int stored_top = lanes * stored_steps;
    const int start = detail::downward_start(std::abs(z), n_terms);
    const int free_steps = std::max(1, (start - stored_top + lanes - 1) / lanes);

    // A and B above the stored range: only the vector at its top is needed.
    LaneMatrices t;
    transfer_matrices(iz_re, iz_im, stored_top + 1, free_steps, t);
    cplx up(0.0, 0.0);
    cplx cur(1.0, 0.0);
    for (int j = lanes - 1; j >= 0; --j)
        apply_transfer(t, j, up, cur);

    // A and B over the stored range: the start vector of every lane.
    transfer_matrices(iz_re, iz_im, 1, stored_steps, t);
    LaneVectors v;
    for (int j = lanes - 1; j >= 0; --j) {
        v.up_re[j] = up.real();
        v.up_im[j] = up.imag();
        v.cur_re[j] = cur.real();
        v.cur_im[j] = cur.imag();
        if (j > 0) apply_transfer(t, j, up, cur);
    }

    // C: D_{n-1} = n/z - psi_n / psi_{n-1} (psi_{n-1}' = (n/z) psi_{n-1} - psi_n), the division
    // written as multiplication by the conjugate over |psi_{n-1}|^2: one real division.
    double nd[lanes];
    for (int j = 0; j < lanes; ++j)
        nd[j] = (j + 1) * stored_steps;
    for (int s = 0; s < stored_steps; ++s) {
        for (int j = 0; j < lanes; ++j) {
            const double f = 2.0 * nd[j] + 1.0;
            const double a_re = f * iz_re;
            const double a_im = f * iz_im;
            const double lo_re = a_re * v.cur_re[j] - a_im * v.cur_im[j] - v.up_re[j];
            const double lo_im = a_re * v.cur_im[j] + a_im * v.cur_re[j] - v.up_im[j];
            const double inv = 1.0 / (lo_re * lo_re + lo_im * lo_im);
            const double q_re = (v.cur_re[j] * lo_re + v.cur_im[j] * lo_im) * inv;
            const double q_im = (v.cur_im[j] * lo_re - v.cur_re[j] * lo_im) * inv;
            const int n = (j + 1) * stored_steps - s;
            d_re[n - 1] = nd[j] * iz_re - q_re;
            d_im[n - 1] = nd[j] * iz_im - q_im;
            v.up_re[j] = v.cur_re[j];
            v.up_im[j] = v.cur_im[j];
            v.cur_re[j] = lo_re;
            v.cur_im[j] = lo_im;
            nd[j] -= 1.0;
        }
        if (s % rescale_every == rescale_every - 1) {
            for (int j = 0; j < lanes; ++j) {
                const double size =
                    std::max(std::max(std::abs(v.up_re[j]), std::abs(v.up_im[j])),
                             std::max(std::abs(v.cur_re[j]), std::abs(v.cur_im[j])));
                const double g = size > big ? shrink : 1.0;
                v.up_re[j] *= g;
                v.up_im[j] *= g;
                v.cur_re[j] *= g;
                v.cur_im[j] *= g;
            }
        }
    }
}

// psi_n(x), chi_n(x) for n = 0..n_terms, upward (Wiscombe 1980; stable for chi_n, and for
// psi_n as far as the series needs it when x >= small_x_limit).
HOLDFAST_MIE_INLINE void riccati_upward(double x, int n_terms, double* psi, double* chi) {
    const double inv_x = 1.0 / x;
    psi[0] = std::sin(x);
    chi[0] = std::cos(x);
    psi[1] = psi[0] * inv_x - chi[0];
    chi[1] = chi[0] * inv_x + psi[0];
    for (int n = 1; n < n_terms; ++n) {
        const double f = (2.0 * n + 1.0) * inv_x;
        psi[n + 1] = f * psi[n] - psi[n - 1];
        chi[n + 1] = f * chi[n] - chi[n - 1];
    }
}

struct SeriesSums {
    double ext = 0.0, sca = 0.0, abs = 0.0, cross = 0.0, pair = 0.0, back_re = 0.0, back_im = 0.0;
};

// a_n, b_n (BH eq. 4.88 through detail::coefficient, written out on real and imaginary parts)
// into a_re..b_im, and the sums of BH eqs. (4.61), (4.62), (4.74) and section 4.6 except the
// pair term of g Q_sca. Differences from the one-term-at-a-time form, each a rounding-level
// change: the two divisions share one reciprocal 1/(|den_a|^2 |den_b|^2); the weight
// (2n+1)/(n(n+1)) of Re(a_n b_n*) is 1/n + 1/(n+1) from a table.
HOLDFAST_MIE_INLINE void coefficient_sums(cplx m, double x, int n_terms, const double* d_re,
                                          const double* d_im, const double* psi,
                                          const double* chi, const double* inv_n, double* a_re,
                                          double* a_im, double* b_re, double* b_im,
                                          SeriesSums& s) {
    const cplx inv_m = 1.0 / m;
    const double m_re = m.real(), m_im = m.imag();
    const double im_re = inv_m.real(), im_im = inv_m.imag();
    const double inv_x = 1.0 / x;
    double ext = 0.0, sca = 0.0, absorbed = 0.0, cross = 0.0, back_re = 0.0, back_im = 0.0;
#pragma omp simd reduction(+ : ext, sca, absorbed, cross, back_re, back_im)
    for (int n = 1; n <= n_terms; ++n) {
        const double dn = n;
        const double nx = dn * inv_x;
        // G_a = D_n(mx)/m + n/x, G_b = m D_n(mx) + n/x.
        const double ga_re = d_re[n] * im_re - d_im[n] * im_im + nx;
        const double ga_im = d_re[n] * im_im + d_im[n] * im_re;
        const double gb_re = m_re * d_re[n] - m_im * d_im[n] + nx;
        const double gb_im = m_re * d_im[n] + m_im * d_re[n];
        // P = G psi_n - psi_{n-1} (real psi), Q = G chi_n - chi_{n-1}, den = P - iQ.
        const double pa_re = ga_re * psi[n] - psi[n - 1];
        const double pa_im = ga_im * psi[n];
        const double pb_re = gb_re * psi[n] - psi[n - 1];
        const double pb_im = gb_im * psi[n];
        const double da_re = pa_re + ga_im * chi[n];
        const double da_im = pa_im - (ga_re * chi[n] - chi[n - 1]);
        const double db_re = pb_re + gb_im * chi[n];
        const double db_im = pb_im - (gb_re * chi[n] - chi[n - 1]);
        const double sa = da_re * da_re + da_im * da_im;
        const double sb = db_re * db_re + db_im * db_im;
        const double r = 1.0 / (sa * sb);
        const double ia = sb * r; // 1 / |den_a|^2
        const double ib = sa * r; // 1 / |den_b|^2
        const double ar = (pa_re * da_re + pa_im * da_im) * ia;
        const double ai = (pa_im * da_re - pa_re * da_im) * ia;
        const double br = (pb_re * db_re + pb_im * db_im) * ib;
        const double bi = (pb_im * db_re - pb_re * db_im) * ib;
        a_re[n] = ar;
        a_im[n] = ai;
        b_re[n] = br;
        b_im[n] = bi;
        const double w = 2.0 * dn + 1.0;
        ext += w * (ar + br);
        sca += w * (ar * ar + ai * ai + br * br + bi * bi);
        // Re(c) - |c|^2 = -Im(G) / |den|^2 (Wronskian form, see detail::Coefficient).
        absorbed += w * (-ga_im * ia - gb_im * ib);
        cross += (inv_n[n] + inv_n[n + 1]) * (ar * br + ai * bi);
        const double sw = (n & 1) != 0 ? -w : w; // (-1)^n (2n+1)
        back_re += sw * (ar - br);
        back_im += sw * (ai - bi);
    }
    s.ext = ext;
    s.sca = sca;
    s.abs = absorbed;
    s.cross = cross;
    s.back_re = back_re;
    s.back_im = back_im;
}

// sum over n of n(n+2)/(n+1) Re(a_n a*_{n+1} + b_n b*_{n+1}) (BH eq. 4.74), written for the
// pair (n-1, n) with weight (n-1)(n+1)/n = n - 1/n; a_0 = b_0 = 0 are not stored, so n >= 2.
HOLDFAST_MIE_INLINE double pair_sums(int n_terms, const double* inv_n, const double* a_re,
                                     const double* a_im, const double* b_re, const double* b_im) {
    double pair = 0.0;
#pragma omp simd reduction(+ : pair)
    for (int n = 2; n <= n_terms; ++n)
        pair += (n - inv_n[n]) * (a_re[n - 1] * a_re[n] + a_im[n - 1] * a_im[n] +
                                  b_re[n - 1] * b_re[n] + b_im[n - 1] * b_im[n]);
    return pair;
}

// Per-thread buffers, grown to the largest N met so far: no allocation per call. The table
// 1/n is filled once per size.
struct SeriesBuffers {
    std::vector<double> storage;
    std::vector<double> inv_n;
    std::size_t stride = 0;
};

HOLDFAST_MIE_MULTIVERSION
MieEfficiencies sphere_large_kernel(cplx m, double x, int n_terms, double* buf,
                                    std::size_t stride, const double* inv_n) {
    double* d_re = buf;
    double* d_im = buf + stride;
    double* psi = buf + 2 * stride;
    double* chi = buf + 3 * stride;
    double* a_re = buf + 4 * stride;
    double* a_im = buf + 5 * stride;
    double* b_re = buf + 6 * stride;
    double* b_im = buf + 7 * stride;
    log_derivative_lanes(m * x, n_terms, d_re, d_im);
    riccati_upward(x, n_terms, psi, chi);
    SeriesSums s;
    coefficient_sums(m, x, n_terms, d_re, d_im, psi, chi, inv_n, a_re, a_im, b_re, b_im, s);
    s.pair = pair_sums(n_terms, inv_n, a_re, a_im, b_re, b_im);

    // As detail::MieSums::finish.
    MieEfficiencies q;
    const double f = 2.0 / (x * x);
    q.q_ext = f * s.ext;
    q.q_sca = f * s.sca;
    q.q_abs = f * s.abs;
    const double g_q_sca = 2.0 * f * (s.pair + s.cross);
    q.q_back = (s.back_re * s.back_re + s.back_im * s.back_im) / (x * x);
    q.g = q.q_sca > 0.0 ? g_q_sca / q.q_sca : 0.0;
    q.q_pr = q.q_ext - g_q_sca;
    return q;
}

MieEfficiencies sphere_large(cplx m, double x, int n_terms) {
    thread_local SeriesBuffers b;
    // Room for D_n up to lanes * ceil((N+1)/lanes) and psi_n, chi_n, a_n, b_n up to N.
    const std::size_t need = static_cast<std::size_t>(n_terms) + lanes + 2;
    if (b.stride < need) {
        b.stride = need;
        b.storage.assign(8 * need, 0.0);
        b.inv_n.resize(need + 1);
        b.inv_n[0] = 0.0;
        for (std::size_t n = 1; n <= need; ++n)
            b.inv_n[n] = 1.0 / static_cast<double>(n);
    }
    return sphere_large_kernel(m, x, n_terms, b.storage.data(), b.stride, b.inv_n.data());
}

void check_finite(const MieEfficiencies& q, cplx m, double x) {
    if (!std::isfinite(q.q_ext) || !std::isfinite(q.q_sca) || !std::isfinite(q.q_abs) ||
        !std::isfinite(q.q_back) || !std::isfinite(q.g) || !std::isfinite(q.q_pr)) {
        char buf[160];
        std::snprintf(buf, sizeof buf, "Mie series gave a non-finite result for m = %s, x = %.17g",
                      detail::format_index(m).c_str(), x);
        throw NumericalError(buf);
    }
}

} // namespace

int mie_series_terms(double x) {
    return static_cast<int>(std::ceil(x + 6.0 * std::cbrt(x) + 2.0));
}

MieEfficiencies mie_sphere(std::complex<double> m, double x) {
    detail::check_index(m, "mie_sphere");
    detail::check_size_parameter(x, MieRange::x_max_series, "mie_sphere");
    const int n_terms = mie_series_terms(x);
    const MieEfficiencies q =
        x < detail::small_x_limit ? sphere_small(m, x, n_terms) : sphere_large(m, x, n_terms);
    check_finite(q, m, x);
    return q;
}

MieEfficiencies mie_sphere(std::complex<double> m, Length radius, Length wavelength) {
    const double radius_m = radius.value();
    const double wavelength_m = wavelength.value();
    if (!(radius_m > 0.0) || !std::isfinite(radius_m))
        throw InputError("mie_sphere: the grain radius must be positive and finite");
    if (!(wavelength_m > 0.0) || !std::isfinite(wavelength_m))
        throw InputError("mie_sphere: the wavelength must be positive and finite");
    return mie_sphere(m, 2.0 * std::numbers::pi * radius_m / wavelength_m);
}

MieEfficiencies mie_perfect_conductor(double x) {
    detail::check_size_parameter(x, MieRange::x_max_series, "mie_perfect_conductor");
    const int n_terms = mie_series_terms(x);
    // |m| -> infinity in BH eq. (4.88): a_n = psi_n'(x) / xi_n'(x), b_n = psi_n(x) / xi_n(x),
    // i.e. G_a = n/x and b_n = psi_n / (psi_n - i chi_n). Nothing is absorbed.
    std::array<double, detail::small_x_max_terms + 1> psi_small{};
    std::array<double, detail::small_x_max_terms + 1> ratio{};
    const bool small = x < detail::small_x_limit;
    if (small && n_terms > detail::small_x_max_terms)
        throw InternalError("Mie small-x path asked for more terms than it holds");
    if (small) detail::riccati_psi_small(x, n_terms, psi_small.data(), ratio.data());
    const double inv_x = 1.0 / x;
    double psi_prev = std::sin(x);
    double chi_prev = std::cos(x);
    double psi = small ? psi_small[1] : psi_prev * inv_x - chi_prev;
    double chi = chi_prev * inv_x + psi_prev;
    detail::MieSums sums;
    for (int n = 1; n <= n_terms; ++n) {
        const double ga = n * inv_x;
        sums.add(n,
                 detail::coefficient(cplx(ga, 0.0), cplx(ga * psi - psi_prev, 0.0), chi, chi_prev),
                 detail::coefficient_pq(cplx(psi, 0.0), cplx(chi, 0.0), 0.0));
        const double f = (2.0 * n + 1.0) * inv_x;
        const double psi_next = small ? psi_small[std::min(n + 1, n_terms)] : f * psi - psi_prev;
        const double chi_next = f * chi - chi_prev;
        psi_prev = psi;
        psi = psi_next;
        chi_prev = chi;
        chi = chi_next;
    }
    MieEfficiencies q = sums.finish(x);
    check_finite(q, cplx(0.0, 0.0), x);
    return q;
}

MieEfficiencies mie_sphere_any_size(std::complex<double> m, double x, bool* used_series) {
    const bool series = x <= MieRange::x_max_series;
    if (used_series) *used_series = series;
    return series ? mie_sphere(m, x) : mie_geometric_optics(m, x);
}

} // namespace holdfast
