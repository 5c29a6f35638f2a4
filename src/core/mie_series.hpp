#pragma once
// Pieces shared by the Mie kernels in this folder (private to holdfast_core).
// References: C. F. Bohren & D. R. Huffman (1983), "Absorption and Scattering of Light by
// Small Particles", Wiley (BH below), chapter 4; W. J. Wiscombe (1980), Appl. Opt. 19, 1505;
// W. Gautschi (1967), SIAM Rev. 9, 24 and Abramowitz & Stegun (1964), eqs. 9.3.7, 9.3.8 for
// serial_start.
#include <algorithm>
#include <array>
#include <cmath>
#include <complex>
#include <cstdint>
#include <cstring>
#include <string>
#include <string_view>

#include "holdfast/errors.hpp"
#include "holdfast/mie.hpp"

namespace holdfast::detail {

using cplx = std::complex<double>;

// Below this size parameter psi_n(x) is built from downward ratios instead of the upward
// recurrence: the upward start psi_1 = sin x / x - cos x loses ~1/x^2 of its digits to
// cancellation, while every psi_n(x) > 0 for x < pi so the ratio product never meets a zero.
inline constexpr double small_x_limit = 2.5;
// Room for the terms used below small_x_limit (mie_series_terms(2.5) = 13).
inline constexpr int small_x_max_terms = 32;

// Throws InputError when m is outside MieRange; `what` names the argument.
void check_index(cplx m, std::string_view what);
// Whether |m| x is within MieRange::mx_max_series; check_mx throws InputError if not.
bool within_mx_cap(cplx m, double x);
void check_mx(cplx m, double x, std::string_view what);
// Throws InputError unless x_min <= x <= x_max; `what` names the argument.
void check_size_parameter(double x, double x_max, std::string_view what);
std::string format_index(cplx m);

// One Mie coefficient c = P / (P - i Q), which is BH eq. (4.88) with xi_n = psi_n - i chi_n,
// P = G psi_n - psi_{n-1} and Q = G chi_n - chi_{n-1}. The division is written out so that
// Re(c) comes out as (|P|^2 + Re P Im Q - Im P Re Q) / |P - iQ|^2 without an extra rounding
// step, and `absorption` = Re(c) - |c|^2 is returned from the Wronskian identity
// psi_n chi_{n-1} - psi_{n-1} chi_n = -1, which turns Im(P conj Q) into Im(G):
// Re(c) - |c|^2 = -Im(G) / |P - iQ|^2. That sum of non-negative terms gives Q_abs with full
// relative precision even where Q_abs << Q_sca (no subtraction Q_ext - Q_sca).
struct Coefficient {
    cplx value;
    double absorption;
};

inline Coefficient coefficient_pq(cplx p, cplx q, double minus_im_g) {
    const double den_re = p.real() + q.imag();
    const double den_im = p.imag() - q.real();
    const double inv = 1.0 / (den_re * den_re + den_im * den_im);
    return {cplx((p.real() * den_re + p.imag() * den_im) * inv,
                 (p.imag() * den_re - p.real() * den_im) * inv),
            minus_im_g * inv};
}

inline Coefficient coefficient(cplx g, cplx p, double chi, double chi_prev) {
    return coefficient_pq(p, g * chi - chi_prev, -g.imag());
}

// Running sums over n = 1, 2, ... of the efficiency series, BH eqs. (4.61), (4.62) for
// Q_sca and Q_ext, (4.74) for g Q_sca, and the backscattering sum of BH section 4.6.
class MieSums {
  public:
    void add(int n, const Coefficient& a, const Coefficient& b) {
        const double dn = n;
        const double w = 2.0 * dn + 1.0;
        const double inv = 1.0 / (dn * (dn + 1.0));
        const cplx av = a.value;
        const cplx bv = b.value;
        ext_ += w * (av.real() + bv.real());
        // Written out: std::norm goes through std::abs (hypot) unless -ffast-math.
        sca_ += w * (av.real() * av.real() + av.imag() * av.imag() + bv.real() * bv.real() +
                     bv.imag() * bv.imag());
        abs_ += w * (a.absorption + b.absorption);
        // n(n+2)/(n+1) Re(a_n a*_{n+1} + b_n b*_{n+1}) for the pair (n-1, n), plus
        // (2n+1)/(n(n+1)) Re(a_n b*_n); a_0 = b_0 = 0 makes the first pair vanish.
        asym_ += (dn - 1.0) * (dn + 1.0) * (dn + 1.0) * inv *
                     (a_prev_.real() * av.real() + a_prev_.imag() * av.imag() +
                      b_prev_.real() * bv.real() + b_prev_.imag() * bv.imag()) +
                 w * inv * (av.real() * bv.real() + av.imag() * bv.imag());
        back_ += (sign_ * w) * (av - bv);
        sign_ = -sign_;
        a_prev_ = av;
        b_prev_ = bv;
    }

    MieEfficiencies finish(double x) const {
        MieEfficiencies q;
        const double f = 2.0 / (x * x);
        q.q_ext = f * ext_;
        q.q_sca = f * sca_;
        q.q_abs = f * abs_;
        const double g_q_sca = 2.0 * f * asym_;
        q.q_back = std::norm(back_) / (x * x);
        q.g = q.q_sca > 0.0 ? g_q_sca / q.q_sca : 0.0;
        q.q_pr = q.q_ext - g_q_sca;
        return q;
    }

  private:
    double ext_ = 0.0;
    double sca_ = 0.0;
    double abs_ = 0.0;
    double asym_ = 0.0;
    cplx back_{0.0, 0.0};
    double sign_ = -1.0; // (-1)^n for n = 1
    cplx a_prev_{0.0, 0.0};
    cplx b_prev_{0.0, 0.0};
};

// Start of the downward recurrences for an argument of modulus |z| when N terms are needed.
// BH (appendix A) start at max(N, |z|) + 15; the extra 5 |z|^(1/3) covers the transition
// region n ~ |z| (width ~ |z|^(1/3) from the Airy asymptotics of psi_n), so that the error of
// the arbitrary start value has decayed below rounding before n = max(N, |z|) even for
// |z| ~ 1e6, where +15 alone is not enough.
// The cube root for a positive normal v without the libm call (which costs about as much as
// two series terms at x = 10): a first guess from the exponent bits (the usual bit-level
// division by 3, relative error below 3.3e-2), then Newton steps y -= (y^3 - v) / (3 y^2),
// each squaring the relative error: below 1.1e-3, 1.1e-6, 1.1e-12 after 1, 2, 3 steps
// (measured over 2e6 values from 1e-9 to 1e7; the error pattern repeats with every factor 8).
inline double cbrt_newton(double v, int steps) {
    std::uint64_t bits;
    std::memcpy(&bits, &v, sizeof bits);
    bits = bits / 3 + 0x2A9F7893782DA1CEull;
    double y;
    std::memcpy(&y, &bits, sizeof y);
    for (int i = 0; i < steps; ++i)
        y -= (y * y * y - v) / (3.0 * y * y);
    return y;
}

// sin x and cos x for 0 <= x < moderate_x_limit, without the libm call (which costs about
// as many instructions as five series terms at x = 10). Cody-Waite reduction r = x - k pi/2
// with pi/2 in three parts (33 + 33 + 53 bits: k p1 and k p2 are exact for k < 2^20, so r
// is off by about k 2^-122 < 3e-35 absolute, which keeps it to a relative 1e-16 down to
// |r| ~ 3e-19; the doubles next to k pi/2 here are much farther from it); then the Taylor
// series of sin r and cos r to r^17 and r^16 (|r| <= pi/4: the first omitted terms are below
// 1e-19 and 3e-18), cos as 1 - r^2/2 with the rounding of that step carried (the usual
// compensated sum).
// Within 2 ulp of std::sin, std::cos on a fine grid and near every k pi/2 (mie_start_test).
inline constexpr double moderate_x_limit = 128.0;
inline void sin_cos_moderate(double x, double& sin_x, double& cos_x) {
    constexpr double two_over_pi = 0.6366197723675814;
    constexpr double p1 = 0x1.921fb544p+0;       // pi/2, first 33 bits
    constexpr double p2 = 0x1.0b4611a6p-34;      // next 33 bits
    constexpr double p3 = 0x1.3198a2e037073p-69; // the rest, rounded
    constexpr double round_magic = 0x1.8p52;     // adding it rounds to an integer
    const double k = (x * two_over_pi + round_magic) - round_magic;
    const double r = ((x - k * p1) - k * p2) - k * p3;
    const double r2 = r * r;
    // 1/(2j+1)! and 1/(2j)! with alternating signs, from r^3 and r^4 on.
    const double s_poly =
        -1.0 / 6.0 +
        r2 * (1.0 / 120.0 +
              r2 * (-1.0 / 5040.0 +
                    r2 * (1.0 / 362880.0 + r2 * (-1.0 / 39916800.0 +
                                                 r2 * (1.0 / 6227020800.0 +
                                                       r2 * (-1.0 / 1307674368000.0 +
                                                             r2 * (1.0 / 355687428096000.0)))))));
    const double c_poly =
        1.0 / 24.0 +
        r2 * (-1.0 / 720.0 +
              r2 * (1.0 / 40320.0 +
                    r2 * (-1.0 / 3628800.0 +
                          r2 * (1.0 / 479001600.0 +
                                r2 * (-1.0 / 87178291200.0 + r2 * (1.0 / 20922789888000.0))))));
    const double s = r + r * r2 * s_poly;
    const double half = 0.5 * r2;
    const double w = 1.0 - half;
    const double c = w + (((1.0 - w) - half) + r2 * r2 * c_poly);
    switch (static_cast<int>(k) & 3) {
    case 0:
        sin_x = s;
        cos_x = c;
        break;
    case 1:
        sin_x = c;
        cos_x = -s;
        break;
    case 2:
        sin_x = -s;
        cos_x = -c;
        break;
    default:
        sin_x = -c;
        cos_x = s;
        break;
    }
}

// N = ceil(x + 6 x^(1/3) + 2) (mie_series_terms) for small_x_limit <= x < moderate_x_limit
// from a table in cells of 1/4 in x: over one cell x + 6 x^(1/3) + 2 grows by less than 0.53,
// so at most one integer K - 1 is crossed; the table holds K (N at the cell's end) and the x
// where K - 1 is crossed. Computed at compile time with a constexpr cube root (a few ulp);
// the caller decides with std::cbrt where x lies within 1e-9 of that crossing, so the result
// is the std::cbrt one everywhere (checked on a fine grid and next to every crossing in
// mie_start_test).
namespace terms_table {
inline constexpr int cells_per_unit = 4;
inline constexpr int first_cell = static_cast<int>(small_x_limit * cells_per_unit);
inline constexpr int end_cell = static_cast<int>(moderate_x_limit * cells_per_unit);
inline constexpr double band = 1e-9;
constexpr double cbrt_of(double v) { // v >= 1: Newton from above converges monotonically
    double y = v;
    for (int i = 0; i < 200; ++i)
        y -= (y * y * y - v) / (3.0 * y * y);
    return y;
}
constexpr double ceil_of(double v) {
    const auto i = static_cast<long long>(v);
    return static_cast<double>(i) < v ? static_cast<double>(i + 1) : static_cast<double>(i);
}
// x where x + 6 x^(1/3) + 2 = target: t^3 + 6 t + 2 = target for t = x^(1/3), by Newton from
// above (increasing and convex for t > 0).
constexpr double crossing(double target) {
    double t = 8.0;
    for (int i = 0; i < 200; ++i)
        t -= (t * t * t + 6.0 * t + 2.0 - target) / (3.0 * t * t + 6.0);
    return t * t * t;
}
struct Table {
    double crossing[end_cell];
    std::uint8_t terms_at_end[end_cell];
};
constexpr Table make() {
    Table t{};
    for (int i = first_cell; i < end_cell; ++i) {
        const double x1 = static_cast<double>(i + 1) / cells_per_unit;
        const double k = ceil_of(x1 + 6.0 * cbrt_of(x1) + 2.0);
        t.terms_at_end[i] = static_cast<std::uint8_t>(k);
        t.crossing[i] = crossing(k - 1.0);
    }
    return t;
}
inline constexpr Table table = make();
} // namespace terms_table

// The table's N, or 0 where it does not decide (x outside its cells, or within its band).
inline int series_terms_from_table(double x) {
    if (!(x >= small_x_limit && x < moderate_x_limit)) return 0;
    const int cell = static_cast<int>(x * terms_table::cells_per_unit);
    const double at = terms_table::table.crossing[cell];
    if (std::abs(x - at) < terms_table::band) return 0;
    return terms_table::table.terms_at_end[cell] - (x <= at ? 1 : 0);
}

inline int downward_start(double abs_z, int n_terms) {
    // The margin needs no more than a few digits of |z|^(1/3) (2 Newton steps: 1e-6).
    const double above = std::ceil(abs_z + 5.0 * cbrt_newton(abs_z, 2));
    return (above > n_terms ? static_cast<int>(above) : n_terms) + 16;
}

// Start of the downward D_n(z) recurrence beyond the serial start table (sphere_large,
// mie.cpp: the scaled serial chain or the lanes): downward_start,
// or lower for an absorbing z whose |z| lies far above N. Miller's start error at order n is
// |psi_{top+1}/chi_{top+1}| |chi_n/psi_n| (see serial_start below), and by Debye's forms
// ln|chi_nu/psi_nu| grows by 2 Re acosh(nu/z) per unit of order (order nu = n + 1/2; for real
// z this is the 2 acosh(n/|z|) of the serial table, zero below |z|). For absorbing z that
// rate is already positive at N + 1 and grows with the order, so top = N + 1 + k with
// k >= ln(1e18) / (2 Re acosh((N+1)/z)) leaves a start error below 1e-16 at every n <= N + 1
// (the rate is taken at the bottom, where it is least; one decade and 8 orders of margin,
// as Debye's rate is only asymptotic: with ln(1e17) and 8 the worst case was 1.05e-16).
// Checked against the exact start error (long double psi_n, chi_n) in
// tests/mie_start_test.cpp; a wider grid, |z| = 120..2e5, arg z = 0.03..1.56, gave 1.9e-18
// at worst. It matters for metals, carbon and absorbing silicates at large x: m = 2.0+0.6i
// at x = 1e3 starts at order 1196 instead of 2168 (N = 1062), m = 10+10i there at 1461
// instead of 14 280. The logarithm and square root cost about 0.1 us, so the bound is
// formed only where it can save a few hundred orders (arg z >= 0.03 and downward_start at
// least 200 above N).
inline int lanes_start(std::complex<double> z, double abs_z, int n_terms) {
    const int plain = downward_start(abs_z, n_terms);
    const int bottom = n_terms + 1;
    if (plain - bottom < 200 || !(z.imag() >= 0.03 * abs_z)) return plain;
    const std::complex<double> w = static_cast<double>(bottom) / z;
    // acosh w = ln(w + sqrt(w^2 - 1)); of the two roots the one of modulus >= 1 gives the
    // branch with Re >= 0, hence the absolute value.
    const double rate = 2.0 * std::abs(std::log(std::abs(w + std::sqrt(w * w - 1.0))));
    constexpr double ln_1e18 = 41.446531673892822;
    constexpr double margin = 8.0;
    const double steps = std::ceil(ln_1e18 / rate) + margin;
    if (!(steps < static_cast<double>(plain - bottom))) return plain; // also for rate 0 or NaN
    return bottom + static_cast<int>(steps);
}

// The serial D_n(mx) chain of sphere_large (mie.cpp) runs for starts up to this order.
inline constexpr int serial_max_top = 96;

// Start of the serial chain. The arbitrary start psi_{top+1} = 0 makes the chain compute
// psi_n + c chi_n, chi_n a second solution of the recurrence, c = -psi_{top+1}/chi_{top+1}:
// at order n the relative error is eps_n = |psi_{top+1}/chi_{top+1}| |chi_n/psi_n| (the usual
// analysis of Miller's algorithm; W. Gautschi 1967, SIAM Rev. 9, 24, section 3). By Debye's
// asymptotic forms (Abramowitz & Stegun 1964, eqs. 9.3.7, 9.3.8, order nu = n + 1/2),
// ln|chi_n/psi_n| rises by 2 Re acosh(nu/z) per unit of order: for real z only above |z|,
// for an absorbing z at every order, the faster the larger arg z.
// What the series needs is that the start's error in the efficiencies stay far below
// rounding's, not eps_n <= 1e-16 at every order: above both x and |z| the coefficients a_n,
// b_n are of the size of psi_n(x)/chi_n(x), which falls faster with n (2 acosh(nu/x) per
// order) than eps_n rises, and they move in proportion to the relative error of D_n. So the
// start must give (all three on Debye's rates):
//  - eps_n <= 1e-17 at every n <= s1 = min(N + 1, max(|z|, x)). Up to there a coefficient
//    may be of order one, and for a real index between x and |z| sharply resonant
//    (whispering-gallery modes), as sensitive to the start's error as to rounding's. In the
//    strongly absorbing classes (first_damped_class on: Im m >= 0.28 Re m) absorption damps
//    those modes, and s1 = min(N + 1, x);
//  - above s1, eps_n w_n <= 1e-17, w_n = |psi_n(x)/chi_n(x)| / |psi_s1(x)/chi_s1(x)|;
//  - eps_n <= 1e-6 at every n <= N + 1, so that first-order reasoning holds.
// The rates are taken at n, below the order n + 1/2..n + 3/2 of the step; |z| is rounded up,
// arg z down to the class floor (arg_class_tan), x up to the largest x with N terms: each
// makes the rise of eps_n slower or the fall of w_n slower, so top errs on the safe side.
// Checked in tests/mie_start_test.cpp against exact psi_n, chi_n (long double): bounded to
// first order over the whole series, the start's error in the efficiencies stays below a
// tenth of the bound a 1e-16 rounding of every D_n gives (at worst 0.55%, for a real index
// with |mx| above N + 1, where the start is that of the plain criterion; 0.48% in the damped
// classes, against 0.09% with their first rule up to |z|), and the exact relative error of
// D_n meets the first and third rules. (Of D_n, not of psi_n: for a
// strongly absorbing z below |z|, chi_n is nearly a multiple of psi_n, so the start changes
// psi_n by more than Debye's rates say but D_n hardly at all.)
// At x = 10 this starts the chain at 40 (m = 1.7+0.03i and 2.0+0.6i) instead of 43 and
// 45 under the plain criterion, eps_n <= 1e-17 at every n <= N + 1 on the rates of real z,
// and 46 and 51 from downward_start. The table holds top for each arg class, ceil(|z|) (at least 1)
// and N + 1 up to serial_max_top, or 0 where top would reach serial_max_top (sphere_large then
// starts from lanes_start, with the scaled serial chain or the lanes).
namespace start_table {
// Classes of arg z by their floors' tangents (Im z / Re z): real and weakly absorbing
// (ices, silicates), absorbing silicates, carbon, metals.
inline constexpr int arg_classes = 5;
inline constexpr double arg_class_tan[arg_classes] = {0.0, 0.09, 0.28, 0.65, 1.4};
// The classes from this one on count as damped (see the first rule above).
inline constexpr int first_damped_class = 2;
// Entries: top, plus `unchecked_flag` where the chain cannot come near overflow without
// rescaling: a step u_{n-1} = (2n+1) u_n - z^2 u_{n+1} grows max(|u_n|, |u_{n+1}|) by at
// most 2n + 1 + |z|^2, so from the start's 1 the chain stays below the product of those
// factors over n = 1..top + 1; where that is below 2^500 (about 3e150), |u|^2 and the
// products of two u in series_sums stay below 1e301, far from overflow.
inline constexpr std::uint8_t unchecked_flag = 128;
struct Table {
    std::uint8_t top[serial_max_top + 1][serial_max_top + 1]; // [ceil |z|][N + 1]
};
// The table of arg class c (0 <= c < arg_classes), built on its first use
// (src/core/mie_start.cpp; under 1 ms each).
const Table& table(int c);
} // namespace start_table

// top from the table, or 0 if the serial chain does not take this z and N; and whether the
// chain may run without size checks (start_table::unchecked_flag).
struct SerialStart {
    int top;
    bool unchecked;
};
inline SerialStart serial_start_entry(std::complex<double> z, double abs_z, int n_terms) {
    if (!(abs_z <= serial_max_top) || n_terms >= serial_max_top) return {0, false};
    const int iz = std::max(1, static_cast<int>(std::ceil(abs_z)));
    // The class whose floor lies at or below arg z (Re z > 0 for every index in range).
    int c = 0;
    for (int j = 1; j < start_table::arg_classes; ++j)
        c += z.imag() >= start_table::arg_class_tan[j] * z.real() ? 1 : 0;
    const int entry = start_table::table(c).top[iz][n_terms + 1];
    return {entry & (start_table::unchecked_flag - 1), (entry & start_table::unchecked_flag) != 0};
}
inline int serial_start(std::complex<double> z, double abs_z, int n_terms) {
    return serial_start_entry(z, abs_z, n_terms).top;
}

// Logarithmic derivative D_n(z) = psi_n'(z) / psi_n(z) for n = 0..n_terms into d[0..n_terms]
// (d must hold n_terms + 1 values), by downward recurrence, which is stable for every z
// (Kattawar & Plass 1967, Appl. Opt. 6, 1377; Wiscombe 1980). Only n <= n_terms is stored,
// so the memory is that of the series even when |z| >> n_terms.
// BH eq. (4.89), D_{n-1} = n/z - 1/(D_n + n/z), is the Riccati form of the linear recurrence
// psi_{n-1} = (2n+1)/z psi_n - psi_{n+1}; the linear form is run here (Miller's method, with
// rescaling against overflow) because its chain from one n to the next has no division, and
// D_n = psi_{n-1}/psi_n - n/z is then formed off the chain. Same start, same stability.
void log_derivative_downward(cplx z, int n_terms, cplx* d);

// Ratios r_n(z) = psi_{n+1}(z) / psi_n(z) for n = 0..n_terms into r[0..n_terms], by the
// downward continued-fraction recurrence r_{n-1} = 1 / ((2n+1)/z - r_n) (the same recurrence
// as D_n, since D_n = (n+1)/z - r_n, but free of the cancellation n/z - D_{n-1} that the
// ratio psi_n/psi_{n-1} would suffer for small |z|).
void psi_ratio_downward(cplx z, int n_terms, cplx* r);

// psi_n(x) for n = 0..n_terms and the ratios r_n = psi_{n+1}(x) / psi_n(x) for
// n = 0..n_terms, for 0 < x < small_x_limit (n_terms < small_x_max_terms). The ratios come
// from the downward continued-fraction recurrence r_{n-1} = 1 / ((2n+1)/x - r_n) and
// psi_n = psi_{n-1} r_{n-1} from psi_0 = sin x, so no digit is lost for small x.
void riccati_psi_small(double x, int n_terms, double* psi, double* ratio);

// Riccati-Bessel psi_n(x) and chi_n(x) of a real size parameter, stepped upward from n = 1 for
// the scalar series loops (perfect conductor, coated sphere). chi by upward recurrence, which
// is stable; psi likewise above small_x_limit, and below it from riccati_psi_small, where
// upward recurrence would lose digits.
class RiccatiUpward {
  public:
    RiccatiUpward(double x, int n_terms)
        : inv_x(1.0 / x), n_terms_(n_terms), small_(x < small_x_limit) {
        if (small_ && n_terms > small_x_max_terms)
            throw InternalError("Mie small-x path asked for more terms than it holds");
        if (small_) riccati_psi_small(x, n_terms, psi_small_.data(), ratio_.data());
        psi_prev = std::sin(x);
        chi_prev = std::cos(x);
        psi = small_ ? psi_small_[1] : psi_prev * inv_x - chi_prev;
        chi = chi_prev * inv_x + psi_prev;
    }
    // From order n to n + 1.
    void advance(int n) {
        const double f = (2.0 * n + 1.0) * inv_x;
        const double psi_next = small_ ? psi_small_[std::min(n + 1, n_terms_)] : f * psi - psi_prev;
        const double chi_next = f * chi - chi_prev;
        psi_prev = psi;
        psi = psi_next;
        chi_prev = chi;
        chi = chi_next;
    }

    const double inv_x;
    double psi = 0.0, psi_prev = 0.0; // psi_n, psi_{n-1}
    double chi = 0.0, chi_prev = 0.0; // chi_n, chi_{n-1}

  private:
    int n_terms_;
    bool small_;
    std::array<double, small_x_max_terms + 1> psi_small_{};
    std::array<double, small_x_max_terms + 1> ratio_{};
};

} // namespace holdfast::detail
