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
//  - W. Gautschi (1967), SIAM Rev. 9, 24: the error of Miller's arbitrary start; with Debye's
//    asymptotic forms (M. Abramowitz & I. A. Stegun 1964, Handbook of Mathematical Functions,
//    eqs. 9.3.7, 9.3.8) it sets the start of the short D_n chain (mie_series.hpp).
//
// Range (MieRange in mie.hpp): 1e-6 <= x <= 1e5, 0.01 <= n <= 1000, 0 <= k <= 1000,
// |m| x <= 2e6. Inside it the results agree with a 50-digit evaluation of the series to a
// relative 1e-9 (tests/mie_reference_test.cpp). Large |m| needs nothing special: D_n is kept
// only for n <= N (its start above |m| x costs time, not memory), the small-x form holds for
// |mx| up to 2.5 |m|, and Q_abs from the Wronskian form keeps full precision where a metal
// absorbs little of what it scatters.
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
#include <cstdint>
#include <cstdio>
#include <cstring>
#include <numbers>
#include <type_traits>
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

bool within_mx_cap(cplx m, double x) {
    // |m| x <= cap, compared squared: no hypot (slow) and no overflow for m checked in range.
    const double mx2 = (m.real() * m.real() + m.imag() * m.imag()) * x * x;
    return mx2 <= MieRange::mx_max_series * MieRange::mx_max_series;
}

void check_mx(cplx m, double x, std::string_view what) {
    if (!within_mx_cap(m, x)) {
        char buf[240];
        std::snprintf(buf, sizeof buf,
                      ": |m| x = %g (m = %s, x = %g) is above the series' limit |m| x <= %g "
                      "(the cost of the D_n recurrence grows with |m| x); larger homogeneous "
                      "spheres take the geometric-optics approximation (mie_sphere_any_size)",
                      std::abs(m) * x, format_index(m).c_str(), x, MieRange::mx_max_series);
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

    // r_n(mx) downward, as for r_n(x) but from above |mx| (|mx| < 2.5 |m| <= 3536 here).
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
//  1. D_n(mx), n = 0..N, by the downward recurrence, serially where its start is not far
//     above N (log_derivative_serial: the bare chain only, on u_n = psi_n(mx)/(mx)^n, whose
//     recurrence has a real coefficient and so one multiply-add of latency per step; started
//     from detail::serial_start where that table takes it, which is lower: only as high as
//     keeps the start's error in the efficiencies far below rounding's, 40 and 42 instead of
//     46 and 51 at x = 10; otherwise from detail::lanes_start, scaled, see long_serial), and
//     cut into parallel lanes where the start lies far above N (log_derivative_lanes);
//  2. psi_n(x), chi_n(x), n = 0..N, upward (UpwardRiccati, the two as one vector of two
//     doubles): a serial chain, interleaved with pass 1 so that its latency is hidden; below
//     x = 128 sin x and cos x without the libm call (detail::sin_cos_moderate) and N from a
//     table (mie_series_terms);
//  3. vector passes (series_sums) over rounds of 64 orders: G_a, G_b from D_n (formed from
//     the stored u_n, or read after the lanes or a rescaled serial chain), then a_n, b_n,
//     then all the sums; the pair term of g Q_sca reads a_{n-1}, b_{n-1} one index lower
//     in the coefficient buffers.
// The arithmetic is written on real and imaginary parts (structure of arrays) because the
// vectoriser does not see through std::complex; pass 3 is written in GCC vector types of 4
// doubles with `width` partial sums per sum (without -ffast-math the compiler must not
// reorder a sum by itself; the partial sums differ from the serial ones by rounding only).
// Divisions are few (one per D_n, one per pair a_n, b_n), and n/x is a multiplication by
// 1/x. Buffers are per thread and reused: no allocation per call.
// Against the single loop over n that this replaced: 4 to 5 times faster for x >= 1e3
// (README, "Performance").

// The kernel is compiled three times: for the baseline x86-64 (SSE2, any x86-64 CPU), for
// x86-64-v3 (AVX2 and FMA) and for x86-64-v4 (AVX-512; used here with 256-bit vectors, which
// avoids the clock reduction that 512-bit instructions cause on many CPUs, but gains 32
// vector registers and so no spills). sphere_large picks the best the CPU has at run time,
// so the binary stays portable. FMA rounds a*b+c once instead of twice: the results change
// in the last bits only (tests/mie_reference_test.cpp holds every version to the same
// 1e-9). Define HOLDFAST_NO_MULTIVERSION to build the baseline version only (to test it on
// a machine that has AVX2).
#if defined(__GNUC__) && !defined(__clang__) && defined(__x86_64__) &&                             \
    !defined(HOLDFAST_NO_MULTIVERSION)
#define HOLDFAST_MIE_MULTIVERSION 1
#else
#define HOLDFAST_MIE_MULTIVERSION 0
#endif
#define HOLDFAST_MIE_INLINE [[gnu::always_inline]] inline
// For the chain's step lambdas: GCC once left them out of line in one instantiation of the
// serial chain, which kept the chain's values in memory (1.5 times slower).
#define HOLDFAST_MIE_LAMBDA_INLINE __attribute__((always_inline))

// psi_n(x), chi_n(x) for n = 0..n_terms into psi, chi, upward (Wiscombe 1980; stable for
// chi_n, and for psi_n as far as the series needs it when x >= small_x_limit). A serial
// chain of one multiply-add per step: two steps per call, each value overwritten in place
// (leapfrog) so that no register moves sit in the chain, and the last values kept in
// locals rather than reloaded through the buffer.
class UpwardRiccati {
    // (psi_n, chi_n) as one vector of two doubles: both follow the same recurrence with the
    // same real coefficient, so one multiply-add steps both (half the arithmetic).
    using Pair = double __attribute__((vector_size(2 * sizeof(double))));

  public:
    UpwardRiccati(double x, double inv_x, int n_terms, double* psi, double* chi)
        : inv_x_(inv_x), pairs_left_((n_terms - 1) / 2), one_left_((n_terms - 1) % 2 != 0),
          psi_(psi), chi_(chi) {
        double s, c;
        if (x < detail::moderate_x_limit) {
            detail::sin_cos_moderate(x, s, c);
        } else {
            s = std::sin(x);
            c = std::cos(x);
        }
        prev_ = Pair{s, c};
        cur_ = prev_ * inv_x_ - Pair{c, -s}; // psi_1 = sin x / x - cos x, chi_1 = cos x / x + sin x
        psi[0] = s;
        chi[0] = c;
        psi[1] = cur_[0];
        chi[1] = cur_[1];
    }
    // From orders (n-1, n) to (n+1, n+2), while n + 2 <= n_terms. 2n + 1 is carried as a
    // double (exact) and the pointers advance: no integer conversion per call.
    HOLDFAST_MIE_INLINE void advance_two() {
        if (pairs_left_ <= 0) return;
        const double f1 = f_ * inv_x_;
        const double f2 = (f_ + 2.0) * inv_x_;
        prev_ = f1 * cur_ - prev_; // order n+1
        cur_ = f2 * prev_ - cur_;  // order n+2
        psi_[2] = prev_[0];
        chi_[2] = prev_[1];
        psi_[3] = cur_[0];
        chi_[3] = cur_[1];
        psi_ += 2;
        chi_ += 2;
        f_ += 4.0;
        --pairs_left_;
    }
    // The rest up to n_terms.
    HOLDFAST_MIE_INLINE void finish() {
        while (pairs_left_ > 0)
            advance_two();
        if (one_left_) { // one step left: order n+1 from n, n-1
            const Pair next = (f_ * inv_x_) * cur_ - prev_;
            psi_[2] = next[0];
            chi_[2] = next[1];
            one_left_ = false;
        }
    }

  private:
    double inv_x_;
    int pairs_left_;
    bool one_left_;
    double* psi_; // psi_ + n - 1 (and chi_) for the current n
    double* chi_;
    double f_ = 3.0;  // 2n + 1 for the current n, from n = 1
    Pair prev_, cur_; // (psi, chi) of orders n - 1 and n
};

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
// which is what keeps the plain recurrence stable (tests/mie_reference_test.cpp compares
// with a 50-digit serial evaluation). Common factors are irrelevant to D_n, so each lane is
// rescaled by an exact power of two when it grows (checked every `rescale_every` steps in A,
// every `width` steps in C: a step grows a vector by at most |a_n| + 1 = (2n + 1)/|mx| + 1.
// The lanes run only where the serial chain's start (detail::serial_start) would pass
// serial_max_steps, i.e. N near 90 or more (x above ~62) or |mx| near 60 or more (and, of
// those, only where the start lies far above N: long_serial);
// with |m| >= n_min = 0.01 that bound peaks at 356 (x ~ 55, |mx| ~ 0.55), so 8 steps from below
// `big` stay below 2e90 * 356^8 ~ 6e110, far from overflow also when squared in
// |psi_{n-1}|^2; the serial form checks every step).
constexpr int rescale_every = 8;
constexpr double big = 0x1p+300;    // ~2e90
constexpr double shrink = 0x1p-300; // exact inverse of big

// Lanes as GCC vector types of 4 doubles (one AVX2 register; two SSE2 ones in the baseline
// version), two groups of them so that two independent chains hide each other's latency:
// 8 lanes. Plain local vector variables, unlike arrays indexed in a loop or structs passed
// around, stay in registers from one step to the next (GCC 12 spills the latter, and splits
// wider vector types badly on AVX2).
constexpr int width = 4;
constexpr int groups = 2;
constexpr int lanes = width * groups;
using LaneVec = double __attribute__((vector_size(width * sizeof(double))));
// The helpers below pass vectors by value but are always inlined: no ABI boundary. GCC
// reports the ABI note at the end of the file, so it is switched off for the rest of it.
#pragma GCC diagnostic ignored "-Wpsabi"

using LaneBits = std::int64_t __attribute__((vector_size(width * sizeof(double))));
// |v| by clearing the sign bits (one instruction, where a compare and select would be three).
HOLDFAST_MIE_INLINE LaneVec lane_abs(LaneVec v) {
    return reinterpret_cast<LaneVec>(reinterpret_cast<LaneBits>(v) & INT64_MAX);
}
HOLDFAST_MIE_INLINE LaneVec lane_max(LaneVec a, LaneVec b) { return a > b ? a : b; }
HOLDFAST_MIE_INLINE LaneVec lane_max4(LaneVec a, LaneVec b, LaneVec c, LaneVec d) {
    return lane_max(lane_max(lane_abs(a), lane_abs(b)), lane_max(lane_abs(c), lane_abs(d)));
}
// shrink in the lanes whose size passed big, 1 elsewhere.
HOLDFAST_MIE_INLINE LaneVec lane_rescale(LaneVec size) {
    const LaneVec one = LaneVec{} + 1.0;
    return size > big ? one * shrink : one;
}

// out[k] = (in[3][k], in[2][k], in[1][k], in[0][k]): the transpose of the rows in[0..3] with
// the row order reversed (unpack pairs, then swap 128-bit halves).
HOLDFAST_MIE_INLINE void transpose_reversed(const LaneVec in[width], LaneVec out[width]) {
    static_assert(width == 4);
#if defined(__clang__)
    const LaneVec t0 = __builtin_shufflevector(in[3], in[2], 0, 4, 2, 6);
    const LaneVec t1 = __builtin_shufflevector(in[3], in[2], 1, 5, 3, 7);
    const LaneVec t2 = __builtin_shufflevector(in[1], in[0], 0, 4, 2, 6);
    const LaneVec t3 = __builtin_shufflevector(in[1], in[0], 1, 5, 3, 7);
    out[0] = __builtin_shufflevector(t0, t2, 0, 1, 4, 5);
    out[1] = __builtin_shufflevector(t1, t3, 0, 1, 4, 5);
    out[2] = __builtin_shufflevector(t0, t2, 2, 3, 6, 7);
    out[3] = __builtin_shufflevector(t1, t3, 2, 3, 6, 7);
#else
    const LaneBits lo{0, 4, 2, 6}, hi{1, 5, 3, 7}, first{0, 1, 4, 5}, second{2, 3, 6, 7};
    const LaneVec t0 = __builtin_shuffle(in[3], in[2], lo);
    const LaneVec t1 = __builtin_shuffle(in[3], in[2], hi);
    const LaneVec t2 = __builtin_shuffle(in[1], in[0], lo);
    const LaneVec t3 = __builtin_shuffle(in[1], in[0], hi);
    out[0] = __builtin_shuffle(t0, t2, first);
    out[1] = __builtin_shuffle(t1, t3, first);
    out[2] = __builtin_shuffle(t0, t2, second);
    out[3] = __builtin_shuffle(t1, t3, second);
#endif
}

// Per lane j, one column of a transfer matrix or one state: (psi_{n+1}, psi_n).
struct LaneArrays {
    double up_re[lanes], up_im[lanes], cur_re[lanes], cur_im[lanes];
};

// Transfer matrices of the lanes, as the images of the unit vectors (1, 0) and (0, 1) of
// (psi_{top+1}, psi_top); lane j covers the steps n = n_lo + (j+1) steps - 1 down to
// n_lo + j steps. Both columns share one rescaling per lane, so the matrix stays one matrix;
// at the end each lane's matrix is scaled to a largest entry of 1.
// `side_work()` is called once per step: independent serial work placed here runs in the
// shadow of the lanes' arithmetic (out-of-order execution overlaps the two).
template <class SideWork>
HOLDFAST_MIE_INLINE void transfer_matrices(double iz_re, double iz_im, int n_lo, int steps,
                                           LaneArrays& col1, LaneArrays& col2,
                                           SideWork&& side_work) {
    LaneVec nd[groups];
    LaneVec u1r[groups], u1i[groups], c1r[groups], c1i[groups];
    LaneVec u2r[groups], u2i[groups], c2r[groups], c2i[groups];
    for (int g = 0; g < groups; ++g) {
        for (int k = 0; k < width; ++k)
            nd[g][k] = n_lo + (g * width + k + 1) * steps - 1;
        u1r[g] = LaneVec{} + 1.0;
        c2r[g] = LaneVec{} + 1.0;
        u1i[g] = c1r[g] = c1i[g] = u2r[g] = u2i[g] = c2i[g] = LaneVec{};
    }
    for (int s = 0; s < steps; ++s) {
        side_work();
        for (int g = 0; g < groups; ++g) {
            // psi_{n-1} = a_n psi_n - psi_{n+1}, a_n = (2n+1)/z, for both columns. The order of
            // the terms puts two multiply-adds in the chain from psi_n, not three operations.
            const LaneVec f = 2.0 * nd[g] + 1.0;
            const LaneVec a_re = f * iz_re;
            const LaneVec a_im = f * iz_im;
            const LaneVec l1r = a_re * c1r[g] - u1r[g] - a_im * c1i[g];
            const LaneVec l1i = a_re * c1i[g] - u1i[g] + a_im * c1r[g];
            const LaneVec l2r = a_re * c2r[g] - u2r[g] - a_im * c2i[g];
            const LaneVec l2i = a_re * c2i[g] - u2i[g] + a_im * c2r[g];
            u1r[g] = c1r[g];
            u1i[g] = c1i[g];
            c1r[g] = l1r;
            c1i[g] = l1i;
            u2r[g] = c2r[g];
            u2i[g] = c2i[g];
            c2r[g] = l2r;
            c2i[g] = l2i;
            nd[g] -= 1.0;
        }
        if (s % rescale_every == rescale_every - 1) {
            for (int g = 0; g < groups; ++g) {
                const LaneVec h = lane_rescale(lane_max(lane_max4(u1r[g], u1i[g], c1r[g], c1i[g]),
                                                        lane_max4(u2r[g], u2i[g], c2r[g], c2i[g])));
                u1r[g] *= h;
                u1i[g] *= h;
                c1r[g] *= h;
                c1i[g] *= h;
                u2r[g] *= h;
                u2i[g] *= h;
                c2r[g] *= h;
                c2i[g] *= h;
            }
        }
    }
    for (int g = 0; g < groups; ++g) {
        const LaneVec h = 1.0 / lane_max(lane_max4(u1r[g], u1i[g], c1r[g], c1i[g]),
                                         lane_max4(u2r[g], u2i[g], c2r[g], c2i[g]));
        for (int k = 0; k < width; ++k) {
            const int j = g * width + k;
            col1.up_re[j] = u1r[g][k] * h[k];
            col1.up_im[j] = u1i[g][k] * h[k];
            col1.cur_re[j] = c1r[g][k] * h[k];
            col1.cur_im[j] = c1i[g][k] * h[k];
            col2.up_re[j] = u2r[g][k] * h[k];
            col2.up_im[j] = u2i[g][k] * h[k];
            col2.cur_re[j] = c2r[g][k] * h[k];
            col2.cur_im[j] = c2i[g][k] * h[k];
        }
    }
}

// v <- T_j v for lane j's matrix (entries at most 1 in size). Only the direction of v
// matters. |T v| <= 4 |v|, so the 2 lanes products of B cannot overflow; nor does T shrink v
// towards underflow, since v is the solution that dominates downward (T's largest entry is
// its growth). Phase C normalises each lane's start.
HOLDFAST_MIE_INLINE void apply_transfer(const LaneArrays& col1, const LaneArrays& col2, int j,
                                        cplx& up, cplx& cur) {
    const cplx c1_up(col1.up_re[j], col1.up_im[j]);
    const cplx c1_cur(col1.cur_re[j], col1.cur_im[j]);
    const cplx c2_up(col2.up_re[j], col2.up_im[j]);
    const cplx c2_cur(col2.cur_re[j], col2.cur_im[j]);
    const cplx new_up = c1_up * up + c2_up * cur;
    cur = c1_cur * up + c2_cur * cur;
    up = new_up;
}

// D_n(z) for n = 0..lanes*steps - 1 into d_re, d_im (the caller needs n = 0..n_terms, so
// lanes*steps > n_terms), from a start at or above `start` (= detail::lanes_start)
// with the usual arbitrary psi_{n_start+1} = 0, psi_{n_start} = 1.
// The serial psi_n(x), chi_n(x) recurrence rides along (`riccati`).
HOLDFAST_MIE_INLINE void log_derivative_lanes(cplx inv_z, int start, int n_terms, double* d_re,
                                              double* d_im, UpwardRiccati& riccati) {
    const double iz_re = inv_z.real();
    const double iz_im = inv_z.imag();
    const int stored_steps = (n_terms + lanes) / lanes; // steps n = 1..lanes*stored_steps

    const int stored_top = lanes * stored_steps;
    const int free_steps = std::max(1, (start - stored_top + lanes - 1) / lanes);

    // A and B above the stored range: only the vector at its top is needed.
    LaneArrays col1;
    LaneArrays col2;
    transfer_matrices(iz_re, iz_im, stored_top + 1, free_steps, col1, col2, [] {});
    cplx up(0.0, 0.0);
    cplx cur(1.0, 0.0);
    for (int j = lanes - 1; j >= 0; --j)
        apply_transfer(col1, col2, j, up, cur);

    // A and B over the stored range: the start vector of every lane.
    // lanes * stored_steps > n_terms steps of the upward recurrence fit in here.
    transfer_matrices(iz_re, iz_im, 1, stored_steps, col1, col2, [&riccati] {
        for (int i = 0; i < lanes / 2; ++i)
            riccati.advance_two();
    });
    LaneArrays start_of;
    for (int j = lanes - 1; j >= 0; --j) {
        start_of.up_re[j] = up.real();
        start_of.up_im[j] = up.imag();
        start_of.cur_re[j] = cur.real();
        start_of.cur_im[j] = cur.imag();
        if (j > 0) apply_transfer(col1, col2, j, up, cur);
    }

    // C: D_{n-1} = n/z - psi_n / psi_{n-1} (psi_{n-1}' = (n/z) psi_{n-1} - psi_n), the division
    // written as multiplication by the conjugate over |psi_{n-1}|^2: one real division.
    LaneVec nd[groups], ur[groups], ui[groups], cr[groups], ci[groups];
    for (int g = 0; g < groups; ++g) {
        for (int k = 0; k < width; ++k) {
            const int j = g * width + k;
            nd[g][k] = (j + 1) * stored_steps;
            ur[g][k] = start_of.up_re[j];
            ui[g][k] = start_of.up_im[j];
            cr[g][k] = start_of.cur_re[j];
            ci[g][k] = start_of.cur_im[j];
        }
        // Each lane to a largest component of 1 (they differ by the growth between them).
        const LaneVec h = 1.0 / lane_max4(ur[g], ui[g], cr[g], ci[g]);
        ur[g] *= h;
        ui[g] *= h;
        cr[g] *= h;
        ci[g] *= h;
    }
    // One step in the lanes of group g: D_{n-1} into out_re, out_im.
    const auto step = [&](int g, LaneVec& out_re, LaneVec& out_im) {
        const LaneVec f = 2.0 * nd[g] + 1.0;
        const LaneVec a_re = f * iz_re;
        const LaneVec a_im = f * iz_im;
        const LaneVec lo_re = a_re * cr[g] - ur[g] - a_im * ci[g];
        const LaneVec lo_im = a_re * ci[g] - ui[g] + a_im * cr[g];
        const LaneVec inv = 1.0 / (lo_re * lo_re + lo_im * lo_im);
        const LaneVec q_re = (cr[g] * lo_re + ci[g] * lo_im) * inv;
        const LaneVec q_im = (ci[g] * lo_re - cr[g] * lo_im) * inv;
        out_re = nd[g] * iz_re - q_re;
        out_im = nd[g] * iz_im - q_im;
        ur[g] = cr[g];
        ui[g] = ci[g];
        cr[g] = lo_re;
        ci[g] = lo_im;
        nd[g] -= 1.0;
    };
    // Lane j = g width + k at step s holds D_{n-1}, n - 1 = (j+1) stored_steps - 1 - s.
    // The first stored_steps % width steps one at a time, with a scalar store per value.
    const int head = stored_steps % width;
    for (int s = 0; s < head; ++s) {
        for (int g = 0; g < groups; ++g) {
            LaneVec dd_re, dd_im;
            step(g, dd_re, dd_im);
            for (int k = 0; k < width; ++k) {
                const int index = (g * width + k + 1) * stored_steps - 1 - s;
                d_re[index] = dd_re[k];
                d_im[index] = dd_im[k];
            }
        }
    }
    // Then blocks of `width` steps: a block gives each lane `width` consecutive D_n, which a
    // 4x4 transpose turns into one vector store per lane (instead of one store per value).
    for (int s = head; s < stored_steps; s += width) {
        LaneVec rows_re[groups][width], rows_im[groups][width];
        for (int t = 0; t < width; ++t)
            for (int g = 0; g < groups; ++g)
                step(g, rows_re[g][t], rows_im[g][t]);
        for (int g = 0; g < groups; ++g) {
            const LaneVec h = lane_rescale(lane_max4(ur[g], ui[g], cr[g], ci[g]));
            ur[g] *= h;
            ui[g] *= h;
            cr[g] *= h;
            ci[g] *= h;
            // Steps s + t, t = 3, 2, 1, 0, of lane k: the transposed column k, ascending in n.
            LaneVec col_re[width], col_im[width];
            transpose_reversed(rows_re[g], col_re);
            transpose_reversed(rows_im[g], col_im);
            for (int k = 0; k < width; ++k) {
                const int first = (g * width + k + 1) * stored_steps - width - s;
                std::memcpy(d_re + first, &col_re[k], sizeof(LaneVec));
                std::memcpy(d_im + first, &col_im[k], sizeof(LaneVec));
            }
        }
    }
}

// Below this many steps the lanes' fixed cost (two sets of matrices, the serial
// matrix-vector products, the reordering) outweighs their gain over the plain chain.
constexpr int serial_max_steps = detail::serial_max_top;

// Beyond the start table (start above serial_max_top) the serial chain still beats the lanes
// while the start is not far above N: the chain costs about 2.3 ns per step (its multiply-add
// latency, 6.4 cycles on an AMD EPYC Zen 2), while the lanes do their recurrence three times
// over (two columns of transfer matrices, then the lanes again) with more parallelism. Fitted
// to interleaved timings (scripts/mie-ab, Zen 2) of the two over m = 1.2+0.2i, 1.33, 1.7+0.03i,
// 2.0+0.6i, 4.0 and x = 70..1000 (README, "The Mie series" under Performance): serial minus
// lanes is about 1.5 top - 1.8 N - 244 ns, so the serial chain runs where
// top <= 1.2 N + 160 (x = 100: 0.86 of the lanes' time for m = 1.7+0.03i, start 214, N = 130),
// and never above long_serial_max_top, which bounds its list of rescales.
constexpr int long_serial_max_top = 2048;
HOLDFAST_MIE_INLINE bool long_serial(int top, int n_terms) {
    return top <= long_serial_max_top && 5 * top <= 6 * n_terms + 800;
}

// The plain serial recurrence for D_n, n = 0..n_terms: the chain itself, storing its values
// for n <= n_terms + 1, from which D_n = (n+1)/z - psi_{n+1}/psi_n is formed off the chain
// (in series_sums; here only after a rescale in the stored range, returning true then).
// The chain runs on u_n = psi_n(z)/z^n: psi_{n-1} = a_n psi_n - psi_{n+1}, a_n = (2n+1)/z,
// becomes u_{n-1} = (2n+1) u_n - z^2 u_{n+1}, so u_n enters through one real multiply-add and
// the z^2 u_{n+1} part is ready a step early: one multiply-add of latency per step instead of
// two, with the same instructions; psi_{n+1}/psi_n = z u_{n+1}/u_n. Same start, same
// stability (only a common factor z^n per order, which D_n does not see), and u_n grows by
// at most (2n+1) + |z|^2 per step, which the rescaling below covers.
// Beyond the start table (long_serial) the chain runs on v_n = u_n S^n instead, S = 2^k with
// S <= |z| < 2S (and S >= 1/4): v_{n-1} = ((2n+1)/S) v_n - (z^2/S^2) v_{n+1} keeps the real
// coefficient, its numbers are u_n's times exact powers of two (the same roundings), and it
// grows by at most (2n+1)/S + |z/S|^2 <= 2(2n+1)/|z| + 4 per step (|z| >= 1/4) instead of
// 2n + 1 + |z|^2, so that even a start thousands of orders above N needs few rescales;
// psi_{n+1}/psi_n = (z/S) v_{n+1}/v_n. `inv_s` = 1/S (1 for the table's chains: u_n itself).
// The chain is rescaled by `shrink` (an exact power of two) when it grows past `big`,
// checked every 4 steps and never more than 8 steps apart: 8 steps grow it by at most
// ((2n+1) + |z|^2)^8 <= 9409^8 ~ 6e31 for the table's chains (n, |z| <= serial_max_steps =
// 96), and by at most ((2n+1)/S + |z/S|^2)^8 <= (4 * 4097 + 16)^8 ~ 5e33 for the long ones
// (n <= long_serial_max_top, S >= 1/4, |z/S| < 2 or, for |z| < 1/4, below 1), so it stays
// below 1e124, far from overflow also when squared.
// A rescale inside the stored range, after u_k is stored, leaves u_k and u_{k-1} at
// different scales; the D_{k-1} of that pair is formed again afterwards with u_k scaled.
// Where the start table shows that the chain cannot grow past 2^500 (checked = false: short
// chains of moderate |z|, x = 10 among them), the size checks are left out (5% of a call
// at x = 10: each check waits for the chain's latest value).
template <bool checked>
HOLDFAST_MIE_INLINE bool
log_derivative_serial(cplx z, int start, int n_terms, double* d_re, double* d_im, double* p_re,
                      double* p_im, const double* tn, UpwardRiccati& riccati, double inv_s = 1.0) {
    const double z_re = z.real() * inv_s;
    const double z_im = z.imag() * inv_s;
    const cplx z2 = z * z * (inv_s * inv_s);
    const double z2_re = z2.real();
    const double z2_im = z2.imag();
    double up_re = 0.0, up_im = 0.0, cur_re = 1.0, cur_im = 0.0;
    // An even number of steps above the stored range (one more step from above changes
    // nothing but the decay of the arbitrary start).
    int n = start + ((start - n_terms - 1) & 1);
    double f = (2.0 * n + 1.0) * inv_s; // (2n + 1)/S, exact (S a power of two)
    const double f_step = 2.0 * inv_s;
    // One step from (u_{n+1}, u_n) to (u_n, u_{n-1}), u_{n-1} = (2n+1) u_n - z^2 u_{n+1}.
    const auto step = [&]() HOLDFAST_MIE_LAMBDA_INLINE {
        // The z^2 u_{n+1} part does not depend on u_n: one multiply-add in the chain.
        const double t_re = z2_im * up_im - z2_re * up_re;
        const double t_im = -(z2_re * up_im + z2_im * up_re);
        const double lo_re = f * cur_re + t_re;
        const double lo_im = f * cur_im + t_im;
        up_re = cur_re;
        up_im = cur_im;
        cur_re = lo_re;
        cur_im = lo_im;
        f -= f_step;
        --n;
    };
    // Steps go in pairs, the chain's loops in blocks of four with one size check each: no
    // branch per step. (Forming psi_{n-2} = (a_{n-1} a_n - 1) psi_n - a_{n-1} psi_{n+1} beside
    // psi_{n-1} cuts the latency of a pair from 16 to 12 cycles, but costs 15% more
    // instructions in the chain; with the other core busy, as on the shared development
    // machine, that made a call at x = 10 no faster than before, while plain steps with the
    // lower start were 3-6% faster.)
    const auto two_steps = [&]() HOLDFAST_MIE_LAMBDA_INLINE {
        step();
        step();
    };
    const auto too_big = [&]() HOLDFAST_MIE_LAMBDA_INLINE {
        if constexpr (checked) return std::max(std::abs(cur_re), std::abs(cur_im)) > big;
        return false;
    };
    const auto rescale = [&]() HOLDFAST_MIE_LAMBDA_INLINE {
        up_re *= shrink;
        up_im *= shrink;
        cur_re *= shrink;
        cur_im *= shrink;
    };
    // Above the stored range: psi_{n_terms+1} is the first value kept. The upward psi_n(x),
    // chi_n(x) recurrence rides along, two orders per two steps (it stops by itself at N).
    if (((n - n_terms - 1) & 2) != 0) {
        riccati.advance_two();
        two_steps();
    }
    while (n > n_terms + 1) {
        riccati.advance_two();
        two_steps();
        riccati.advance_two();
        two_steps();
        if (too_big()) rescale();
    }
    // Stored range: psi_k at index k, k = n_terms + 1 down to 0, first (n_terms + 1) % 4
    // steps, then blocks of 4 with the size check after each. rescaled_at lists the k after
    // whose store the chain was rescaled.
    int rescaled_at[long_serial_max_top / 4 + 2];
    int rescales = 0;
    p_re[n] = cur_re;
    p_im[n] = cur_im;
    if ((n & 1) != 0) {
        step();
        p_re[n] = cur_re;
        p_im[n] = cur_im;
    }
    const auto two_steps_stored = [&]() HOLDFAST_MIE_LAMBDA_INLINE {
        riccati.advance_two();
        two_steps();
        p_re[n + 1] = up_re;
        p_im[n + 1] = up_im;
        p_re[n] = cur_re;
        p_im[n] = cur_im;
    };
    if ((n & 2) != 0) two_steps_stored();
    while (n >= 4) {
        two_steps_stored();
        two_steps_stored();
        if (n > 0 && too_big()) {
            rescale();
            rescaled_at[rescales++] = n;
        }
    }
    // Without a rescale in the stored range series_sums forms D_n itself from u_n, u_{n+1}.
    if (rescales == 0) {
        return false;
    }
    const cplx inv_z = 1.0 / z;
    const double iz_re = inv_z.real();
    const double iz_im = inv_z.imag();
    // D_k = (k+1)/z - z u_{k+1}/u_k, the division as multiplication by the conjugate over
    // |u_k|^2: one real division.
#pragma omp simd
    for (int k = 0; k <= n_terms; ++k) {
        const double inv = 1.0 / (p_re[k] * p_re[k] + p_im[k] * p_im[k]);
        const double q_re = (p_re[k + 1] * p_re[k] + p_im[k + 1] * p_im[k]) * inv;
        const double q_im = (p_im[k + 1] * p_re[k] - p_re[k + 1] * p_im[k]) * inv;
        d_re[k] = tn[k + 1] * iz_re - (z_re * q_re - z_im * q_im);
        d_im[k] = tn[k + 1] * iz_im - (z_re * q_im + z_im * q_re);
    }
    for (int i = 0; i < rescales; ++i) {
        // u_k was stored before the rescale, u_{k-1} after it: D_{k-1} again.
        const int k = rescaled_at[i];
        const double hi_re = p_re[k] * shrink;
        const double hi_im = p_im[k] * shrink;
        const double lo_re = p_re[k - 1];
        const double lo_im = p_im[k - 1];
        const double inv = 1.0 / (lo_re * lo_re + lo_im * lo_im);
        const double q_re = (hi_re * lo_re + hi_im * lo_im) * inv;
        const double q_im = (hi_im * lo_re - hi_re * lo_im) * inv;
        d_re[k - 1] = tn[k] * iz_re - (z_re * q_re - z_im * q_im);
        d_im[k - 1] = tn[k] * iz_im - (z_re * q_im + z_im * q_re);
    }
    return true;
}

struct SeriesSums {
    double ext = 0.0, sca = 0.0, abs = 0.0, cross = 0.0, pair = 0.0, back_re = 0.0, back_im = 0.0;
};

// The n-dependent weights of the sums, per thread, computed once for the largest N met:
// with them the loops below convert no integers (which would also make the vectoriser
// process 8 terms at once and run out of registers). Each weight is formed as in
// detail::MieSums::add.
struct SeriesWeights {
    std::vector<double> n;      // n
    std::vector<double> w;      // 2n + 1, BH eqs. (4.61), (4.62)
    std::vector<double> w_ab;   // (2n + 1)/(n(n + 1)), Re(a_n b_n*) in BH eq. (4.74)
    std::vector<double> w_pair; // (n - 1)(n + 1)/n, Re(a_{n-1} a_n* + b_{n-1} b_n*), (4.74)

    void grow(std::size_t size) {
        if (n.size() >= size) return;
        n.resize(size);
        w.resize(size);
        w_ab.resize(size);
        w_pair.resize(size);
        n[0] = w[0] = w_ab[0] = w_pair[0] = 0.0; // no n = 0 term
        for (std::size_t i = 1; i < size; ++i) {
            const double dn = static_cast<double>(i);
            const double inv = 1.0 / (dn * (dn + 1.0));
            n[i] = dn;
            w[i] = 2.0 * dn + 1.0;
            w_ab[i] = w[i] * inv;
            w_pair[i] = (dn - 1.0) * (dn + 1.0) * (dn + 1.0) * inv;
        }
    }
};

// Pointers into SeriesWeights for the kernel (plain pointers: no aliasing questions).
struct WeightTables {
    const double *n, *w, *w_ab, *w_pair;
};

HOLDFAST_MIE_INLINE LaneVec load_lanes(const double* p) {
    LaneVec v;
    std::memcpy(&v, p, sizeof v);
    return v;
}
HOLDFAST_MIE_INLINE void store_lanes(double* p, LaneVec v) { std::memcpy(p, &v, sizeof v); }
HOLDFAST_MIE_INLINE double lane_sum(LaneVec v) { return (v[0] + v[1]) + (v[2] + v[3]); }

// Orders per round of series_sums' three passes (a multiple of `width`): the passes hand
// their results on through buffers of 9 doubles per order (4.6 KiB), which stay in the
// first-level cache at every N.
constexpr int chunk_orders = 64;

// a_n, b_n (BH eq. 4.88 through detail::coefficient, written out on real and imaginary parts)
// and all the sums of BH eqs. (4.61), (4.62), (4.74) and section 4.6, `width` orders per
// step in GCC vector types, in three passes over each round of chunk_orders orders:
//  1. G_a = D_n(mx)/m + n/x and G_b = m D_n(mx) + n/x. D_n comes from d_re, d_im
//     (from_psi false) or, from_psi true, G comes straight from the serial chain's
//     unnormalised u_n = psi_n(z)/z^n, z = mx, passed in d_re, d_im, through
//     D_n = (n+1)/z - z u_{n+1}/u_n, the division as multiplication by the conjugate over
//     |u_n|^2;
//  2. a_n, b_n and the absorption term Re(c) - |c|^2 of each (see detail::Coefficient);
//  3. the sums; the pair term of g Q_sca reads a_{n-1}, b_{n-1} one index lower in the
//     coefficient buffers (one unaligned load each instead of a shuffle with the previous
//     step's vectors, which also kept four vectors live across steps).
// One pass per stage rather than one loop doing all three: the chain of dependent
// operations from u_n to a sum is some 150 cycles long, and in one loop the processor's
// scheduler holds about one step of it, so the steps barely overlap; each pass alone has a
// short chain per step and its steps overlap (at x = 10 a call took 0.80-0.85 of the
// one-loop time; README, "Performance"). The orders above n_terms in the last step (the buffers
// hold `width` values beyond N, set to 1 so that they compute on harmless numbers) are set to zero
// after pass 2. Two changes from the one-term-at-a-time form, both at rounding level: the two
// divisions of a_n, b_n share one reciprocal 1/(|den_a|^2 |den_b|^2), and the sums are `width`
// partial sums, added at the end.
template <bool from_psi>
HOLDFAST_MIE_INLINE void series_sums(cplx m, double x, double inv_x, int n_terms,
                                     const double* d_re, const double* d_im, const double* psi,
                                     const double* chi, const WeightTables& t, SeriesSums& s,
                                     double q_scale = 1.0) {
    const cplx inv_m = 1.0 / m;
    const double m_re = m.real(), m_im = m.imag();
    const double im_re = inv_m.real(), im_im = inv_m.imag();
    // 1/(m^2 x) and m^2 x for G from u_n (from_psi).
    const cplx m2x = m * m * x * q_scale;
    const double x_q = x * q_scale;
    const cplx inv_m2x = inv_m * inv_m * inv_x;
    const double c1_re = inv_m2x.real(), c1_im = inv_m2x.imag();
    const double c2_re = m2x.real(), c2_im = m2x.imag();
    // Per step of `width` orders: G_a (re, im), G_b (re, im) in `gain`; a (re, im),
    // b (re, im) and the absorption term in `coef`; each as one vector.
    constexpr int gain_stride = 4 * width;
    alignas(32) double gain[chunk_orders / width * gain_stride];
    // Re a_n, Im a_n, Re b_n, Im b_n, absorption term: order n at index n - first + width;
    // index width - 1 holds the order before the round (for the pair term; a_0 = b_0 = 0).
    constexpr int coef_size = chunk_orders + width;
    alignas(32) double coef[5][coef_size];
    for (int part = 0; part < 4; ++part)
        coef[part][width - 1] = 0.0;
    LaneVec ext{}, sca{}, absorbed{}, cross{}, pair{}, back_re{}, back_im{};
    for (int first = 1; first <= n_terms; first += chunk_orders) {
        // Steps of `width` orders from `first` on, the last possibly past N.
        const int steps = (std::min(chunk_orders, n_terms + 1 - first) + width - 1) / width;
        // 1. G_a, G_b.
        for (int i = 0, n = first; i < steps; ++i, n += width) {
            const LaneVec nd = load_lanes(t.n + n);
            const LaneVec nx = nd * inv_x;
            double* g = gain + i * gain_stride;
            if constexpr (from_psi) {
                // With q = u_{n+1}/u_n, D_n = (n+1)/z - z q, so G_a = (n+1)/(m^2 x) + n/x - x q
                // and G_b = (2n+1)/x - m^2 x q: the same terms as D_n/m + n/x and
                // m D_n + n/x, in fewer operations.
                const LaneVec pr = load_lanes(d_re + n), pi = load_lanes(d_im + n);
                const LaneVec qr = load_lanes(d_re + n + 1), qi = load_lanes(d_im + n + 1);
                const LaneVec inv = 1.0 / (pr * pr + pi * pi);
                const LaneVec n1 = nd + 1.0;
                const LaneVec rr = (qr * pr + qi * pi) * inv; // q = u_{n+1}/u_n
                const LaneVec ri = (qi * pr - qr * pi) * inv;
                store_lanes(g, n1 * c1_re + nx - x_q * rr);                                // G_a
                store_lanes(g + width, n1 * c1_im - x_q * ri);                             //
                store_lanes(g + 2 * width, (nd + n1) * inv_x - (c2_re * rr - c2_im * ri)); // G_b
                store_lanes(g + 3 * width, -(c2_re * ri + c2_im * rr));                    //
            } else {
                const LaneVec dr = load_lanes(d_re + n), di = load_lanes(d_im + n);
                store_lanes(g, dr * im_re - di * im_im + nx);           // G_a
                store_lanes(g + width, dr * im_im + di * im_re);        //
                store_lanes(g + 2 * width, m_re * dr - m_im * di + nx); // G_b
                store_lanes(g + 3 * width, m_re * di + m_im * dr);      //
            }
        }
        // 2. a_n, b_n.
        for (int i = 0, n = first; i < steps; ++i, n += width) {
            const double* g = gain + i * gain_stride;
            const LaneVec ga_re = load_lanes(g), ga_im = load_lanes(g + width);
            const LaneVec gb_re = load_lanes(g + 2 * width), gb_im = load_lanes(g + 3 * width);
            const LaneVec ps = load_lanes(psi + n), ps1 = load_lanes(psi + n - 1);
            const LaneVec ch = load_lanes(chi + n), ch1 = load_lanes(chi + n - 1);
            // P = G psi_n - psi_{n-1} (real psi), Q = G chi_n - chi_{n-1}, den = P - iQ.
            const LaneVec pa_re = ga_re * ps - ps1;
            const LaneVec pa_im = ga_im * ps;
            const LaneVec pb_re = gb_re * ps - ps1;
            const LaneVec pb_im = gb_im * ps;
            const LaneVec da_re = pa_re + ga_im * ch;
            const LaneVec da_im = pa_im - (ga_re * ch - ch1);
            const LaneVec db_re = pb_re + gb_im * ch;
            const LaneVec db_im = pb_im - (gb_re * ch - ch1);
            const LaneVec sa = da_re * da_re + da_im * da_im;
            const LaneVec sb = db_re * db_re + db_im * db_im;
            const LaneVec r = 1.0 / (sa * sb);
            const LaneVec ia = sb * r; // 1 / |den_a|^2
            const LaneVec ib = sa * r; // 1 / |den_b|^2
            const int j = width + i * width;
            store_lanes(coef[0] + j, (pa_re * da_re + pa_im * da_im) * ia); // Re a_n
            store_lanes(coef[1] + j, (pa_im * da_re - pa_re * da_im) * ia); // Im a_n
            store_lanes(coef[2] + j, (pb_re * db_re + pb_im * db_im) * ib);
            store_lanes(coef[3] + j, (pb_im * db_re - pb_re * db_im) * ib);
            // Re(c) - |c|^2 = -Im(G) / |den|^2 (Wronskian form, see detail::Coefficient).
            store_lanes(coef[4] + j, -ga_im * ia - gb_im * ib);
        }
        // The orders past N in the last step contribute nothing.
        if (const int n_last = first + (steps - 1) * width; n_last + width - 1 > n_terms) {
            const auto keep = load_lanes(t.n + n_last) <= static_cast<double>(n_terms);
            const int j = width + (steps - 1) * width;
            for (int part = 0; part < 5; ++part) {
                const LaneVec v = load_lanes(coef[part] + j);
                store_lanes(coef[part] + j, keep ? v : LaneVec{});
            }
        }
        // 3. The sums.
        for (int i = 0, n = first; i < steps; ++i, n += width) {
            const int j = width + i * width;
            const LaneVec ar = load_lanes(coef[0] + j), ai = load_lanes(coef[1] + j);
            const LaneVec br = load_lanes(coef[2] + j), bi = load_lanes(coef[3] + j);
            const LaneVec w = load_lanes(t.w + n);
            ext += w * (ar + br);
            sca += w * (ar * ar + ai * ai + br * br + bi * bi);
            absorbed += w * load_lanes(coef[4] + j);
            cross += load_lanes(t.w_ab + n) * (ar * br + ai * bi);
            // n(n+2)/(n+1) Re(a_n a*_{n+1} + b_n b*_{n+1}) for the pair (n-1, n): the orders
            // n-1.. one index lower.
            pair += load_lanes(t.w_pair + n) *
                    (load_lanes(coef[0] + j - 1) * ar + load_lanes(coef[1] + j - 1) * ai +
                     load_lanes(coef[2] + j - 1) * br + load_lanes(coef[3] + j - 1) * bi);
            // (-1)^n is the same in a lane at every step (width is even): applied at the end.
            back_re += w * (ar - br);
            back_im += w * (ai - bi);
        }
        // The round's last order before the next round's first.
        for (int part = 0; part < 4; ++part)
            coef[part][width - 1] = coef[part][width + chunk_orders - 1];
    }
    s.ext = lane_sum(ext);
    s.sca = lane_sum(sca);
    s.abs = lane_sum(absorbed);
    s.cross = lane_sum(cross);
    s.pair = lane_sum(pair);
    // (-1)^n in lane k is (-1)^(k+1).
    s.back_re = (back_re[1] - back_re[0]) + (back_re[3] - back_re[2]);
    s.back_im = (back_im[1] - back_im[0]) + (back_im[3] - back_im[2]);
}

HOLDFAST_MIE_INLINE MieEfficiencies sphere_large_kernel(cplx m, double x, int n_terms, double* buf,
                                                        std::size_t stride, const WeightTables& t) {
    double* d_re = buf;
    double* d_im = buf + stride;
    double* psi = buf + 2 * stride;
    double* chi = buf + 3 * stride;
    double* p_re = buf + 4 * stride;
    double* p_im = buf + 5 * stride;
    const cplx z = m * x;
    // |z| without std::abs (hypot's care for overflow is not needed here).
    const double abs_z = std::sqrt(z.real() * z.real() + z.imag() * z.imag());
    const auto [serial_top, unchecked] = detail::serial_start_entry(z, abs_z, n_terms);
    const double inv_x = 1.0 / x;
    UpwardRiccati riccati(x, inv_x, n_terms, psi, chi);
    // series_sums reads `width` - 1 values past N (psi_n, chi_n, D_n) or past N + 1 (psi_n(mx)).
    const auto pad = [n_terms](double* v, int from) {
        for (int k = 0; k < width; ++k)
            v[n_terms + from + k] = 1.0;
    };
    bool have_d = true;
    double inv_s = 1.0;
    if (serial_top > 0) {
        have_d = unchecked ? log_derivative_serial<false>(z, serial_top, n_terms, d_re, d_im, p_re,
                                                          p_im, t.n, riccati)
                           : log_derivative_serial<true>(z, serial_top, n_terms, d_re, d_im, p_re,
                                                         p_im, t.n, riccati);
    } else if (const int top = detail::lanes_start(z, abs_z, n_terms); long_serial(top, n_terms)) {
        inv_s = std::ldexp(1.0, -std::max(-2, std::ilogb(abs_z))); // 1/S, S = 2^k <= |z| < 2S
        have_d = log_derivative_serial<true>(z, top, n_terms, d_re, d_im, p_re, p_im, t.n, riccati,
                                             inv_s);
    } else {
        log_derivative_lanes(1.0 / z, top, n_terms, d_re, d_im, riccati);
    }
    riccati.finish();
    pad(psi, 1);
    pad(chi, 1);
    SeriesSums s;
    if (have_d) {
        pad(d_re, 1);
        pad(d_im, 1);
        series_sums<false>(m, x, inv_x, n_terms, d_re, d_im, psi, chi, t, s);
    } else {
        pad(p_re, 2);
        pad(p_im, 2);
        series_sums<true>(m, x, inv_x, n_terms, p_re, p_im, psi, chi, t, s, inv_s);
    }

    // As detail::MieSums::finish.
    MieEfficiencies q;
    const double inv_x2 = inv_x * inv_x;
    const double f = 2.0 * inv_x2;
    q.q_ext = f * s.ext;
    q.q_sca = f * s.sca;
    q.q_abs = f * s.abs;
    const double g_q_sca = 2.0 * f * (s.pair + s.cross);
    q.q_back = (s.back_re * s.back_re + s.back_im * s.back_im) * inv_x2;
    q.g = q.q_sca > 0.0 ? g_q_sca / q.q_sca : 0.0;
    q.q_pr = q.q_ext - g_q_sca;
    return q;
}

MieEfficiencies sphere_large_baseline(cplx m, double x, int n_terms, double* buf,
                                      std::size_t stride, const WeightTables& t) {
    return sphere_large_kernel(m, x, n_terms, buf, stride, t);
}
#if HOLDFAST_MIE_MULTIVERSION
[[gnu::target("arch=x86-64-v3")]] MieEfficiencies sphere_large_v3(cplx m, double x, int n_terms,
                                                                  double* buf, std::size_t stride,
                                                                  const WeightTables& t) {
    return sphere_large_kernel(m, x, n_terms, buf, stride, t);
}
[[gnu::target("arch=x86-64-v4,prefer-vector-width=256")]] MieEfficiencies
sphere_large_v4(cplx m, double x, int n_terms, double* buf, std::size_t stride,
                const WeightTables& t) {
    return sphere_large_kernel(m, x, n_terms, buf, stride, t);
}
#endif

MieEfficiencies sphere_large(cplx m, double x, int n_terms) {
    // Per-thread buffers, grown to the largest N met so far: no allocation per call.
    thread_local std::vector<double> storage;
    thread_local SeriesWeights weights;
    // Room for D_n up to lanes * stored_steps <= N + lanes (log_derivative_lanes), psi_n,
    // chi_n up to N and u_n up to N + 1, each with series_sums' `width` padding values.
    const std::size_t stride = static_cast<std::size_t>(n_terms) + lanes + 2;
    if (storage.size() < 6 * stride) storage.resize(6 * stride);
    weights.grow(stride);
    const WeightTables t{weights.n.data(), weights.w.data(), weights.w_ab.data(),
                         weights.w_pair.data()};
#if HOLDFAST_MIE_MULTIVERSION
    if (__builtin_cpu_supports("x86-64-v4"))
        return sphere_large_v4(m, x, n_terms, storage.data(), stride, t);
    if (__builtin_cpu_supports("x86-64-v3"))
        return sphere_large_v3(m, x, n_terms, storage.data(), stride, t);
#endif
    return sphere_large_baseline(m, x, n_terms, storage.data(), stride, t);
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
    // ceil(x + 6 x^(1/3) + 2). Inside the series' range the cube root comes from
    // detail::cbrt_newton with two steps (relative error < 1.1e-6, so 6 x^(1/3) <= 279 is off
    // by < 3.1e-4); it decides the ceiling unless the sum lies within 1e-3 of an integer (x a
    // perfect cube, say: ~0.2% of all x), where std::cbrt decides as it always did: the same N
    // either way, faster.
    if (const int from_table = detail::series_terms_from_table(x); from_table > 0)
        return from_table;
    if (x >= MieRange::x_min && x <= MieRange::x_max_series) {
        const double v = x + 6.0 * detail::cbrt_newton(x, 2) + 2.0;
        const double up = std::ceil(v);
        if (up - v > 1e-3 && v - (up - 1.0) > 1e-3) return static_cast<int>(up);
    }
    return static_cast<int>(std::ceil(x + 6.0 * std::cbrt(x) + 2.0));
}

MieEfficiencies mie_sphere(std::complex<double> m, double x) {
    // The range test inline (NaN fails every comparison); the checks that throw, with their
    // messages, only when it fails.
    const bool in_range = m.real() >= MieRange::n_min && m.real() <= MieRange::n_max &&
                          m.imag() >= 0.0 && m.imag() <= MieRange::k_max && x >= MieRange::x_min &&
                          x <= MieRange::x_max_series && detail::within_mx_cap(m, x);
    if (!in_range) {
        detail::check_index(m, "mie_sphere");
        detail::check_size_parameter(x, MieRange::x_max_series, "mie_sphere");
        detail::check_mx(m, x, "mie_sphere");
        throw InternalError("mie_sphere: range test and range checks disagree");
    }
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
    detail::RiccatiUpward rb(x, n_terms);
    detail::MieSums sums;
    for (int n = 1; n <= n_terms; ++n) {
        const double ga = n * rb.inv_x;
        sums.add(n,
                 detail::coefficient(cplx(ga, 0.0), cplx(ga * rb.psi - rb.psi_prev, 0.0), rb.chi,
                                     rb.chi_prev),
                 detail::coefficient_pq(cplx(rb.psi, 0.0), cplx(rb.chi, 0.0), 0.0));
        rb.advance(n);
    }
    MieEfficiencies q = sums.finish(x);
    check_finite(q, cplx(0.0, 0.0), x);
    return q;
}

MieEfficiencies mie_sphere_any_size(std::complex<double> m, double x, bool* used_series) {
    // For every index in range the cap on |m| x leaves x >= x_min_geometric where it applies.
    static_assert(MieRange::mx_max_series / 1415.0 >= MieRange::x_min_geometric &&
                  MieRange::n_max * MieRange::n_max + MieRange::k_max * MieRange::k_max <=
                      1415.0 * 1415.0);
    if (x > 0.0 && x < MieRange::x_min) {
        if (used_series) *used_series = false;
        return mie_small_sphere(m, x);
    }
    const bool series = x <= MieRange::x_max_series && detail::within_mx_cap(m, x);
    if (used_series) *used_series = series;
    return series ? mie_sphere(m, x) : mie_geometric_optics(m, x);
}

} // namespace holdfast
