// The start tables of the serial D_n(mx) chain (detail::serial_start_entry; the criterion and
// its checks are described beside it in mie_series.hpp).
#include <algorithm>
#include <array>
#include <cmath>
#include <complex>

#include "mie_series.hpp"

namespace holdfast::detail::start_table {
namespace {

constexpr int last = serial_max_top;
constexpr std::size_t index(int n) { return static_cast<std::size_t>(n); }

// What every class shares. fall[s][n]: the fall of ln|psi_n(x)/chi_n(x)| from order 0 to n,
// the sum of 2 acosh(k/x) over k < n, k > x, at the largest x whose series has N = s - 1
// terms (mie_series_terms: x + 6 x^(1/3) + 2 = N); x_top[s] is the ceiling of that x.
// growth[iz][k]: ln of the chain's growth bound over n = 1..k + 1 for |z| = iz.
struct Shared {
    std::array<std::array<double, last + 2>, last + 1> fall{};
    std::array<int, last + 1> x_top{};
    std::array<std::array<double, last + 1>, last + 1> growth{};
};
Shared make_shared() {
    Shared sh;
    for (int s = 2; s <= last; ++s) {
        const double x_max = terms_table::crossing(s - 1.0);
        sh.x_top[index(s)] = x_max > 0.0 ? static_cast<int>(std::ceil(x_max)) : 0;
        auto& row = sh.fall[index(s)];
        for (int n = 1; n <= last + 1; ++n) {
            const double k = n - 1;
            row[index(n)] =
                row[index(n - 1)] + (x_max > 0.0 && k > x_max ? 2.0 * std::acosh(k / x_max) : 0.0);
        }
    }
    for (int iz = 1; iz <= last; ++iz) {
        double sum_growth = std::log(3.0 + iz * iz); // n = 1
        for (int k = 1; k <= last; ++k) {
            sum_growth += std::log(2.0 * (k + 1) + 1.0 + iz * iz);
            sh.growth[index(iz)][index(k)] = sum_growth;
        }
    }
    return sh;
}

Table make(int c) {
    static const Shared shared = make_shared();
    const double target = std::log(1e17);
    const double guard = std::log(1e6);
    const double growth_limit = 500.0 * std::log(2.0); // ln(2^500)
    Table t{};
    // z at the class floor: iz e^{i arg}, arg = atan(arg_class_tan[c]).
    const double tan_a = arg_class_tan[c];
    const double cos_a = 1.0 / std::sqrt(1.0 + tan_a * tan_a), sin_a = tan_a * cos_a;
    std::array<double, last + 2> rise{};
    for (int iz = 1; iz <= last; ++iz) {
        // rise[n]: the rise of ln|chi_n/psi_n|(z) from order 0 to n, the sum of
        // 2 Re acosh(k/z) over k < n. For w = k/z = a - ib, Re acosh w = acosh(h),
        // h = (|w + 1| + |w - 1|) / 2 (w = cosh(u + iv) has |w + 1| + |w - 1| = 2 cosh u).
        rise[0] = 0.0;
        for (int n = 1; n <= last + 1; ++n) {
            const double r = static_cast<double>(n - 1) / iz;
            const double a = r * cos_a, b = r * sin_a;
            const double h = 0.5 * (std::sqrt((a + 1.0) * (a + 1.0) + b * b) +
                                    std::sqrt((a - 1.0) * (a - 1.0) + b * b));
            rise[index(n)] = rise[index(n - 1)] + (h > 1.0 ? 2.0 * std::acosh(h) : 0.0);
        }
        const auto& growth = shared.growth[index(iz)];
        for (int s = 2; s <= last; ++s) { // s = N + 1
            // Rule 1 up to max(|z|, x), or up to x alone in the damped classes.
            const int s1 =
                std::min(s, std::max(c >= first_damped_class ? 1 : iz, shared.x_top[index(s)]));
            const auto& f = shared.fall[index(s)];
            double need = rise[index(s1)] + target;
            for (int n = s1 + 1; n <= s; ++n)
                need = std::max(need, rise[index(n)] - (f[index(n)] - f[index(s1)]) + target);
            need = std::max(need, rise[index(s)] + guard);
            // The first order from s + 1 on whose rise meets `need` (rise never falls), or last.
            const auto from = rise.begin() + s + 1, to = rise.begin() + last;
            const int top = static_cast<int>(std::lower_bound(from, to, need) - rise.begin());
            // At most serial_max_top - 1: the chain may add one step (an even count), which
            // the growth bound includes (top + 1).
            const bool serial = rise[index(top)] >= need && top < last;
            const bool unchecked = serial && growth[index(top)] < growth_limit;
            t.top[iz][s] =
                static_cast<std::uint8_t>(serial ? top + (unchecked ? unchecked_flag : 0) : 0);
        }
    }
    return t;
}

// One function-local static per class: each is built on its own first use, thread-safely.
template <int C> const Table& class_table() {
    static const Table built = make(C);
    return built;
}

} // namespace

const Table& table(int c) {
    static_assert(arg_classes == 5);
    static constexpr const Table& (*tables[arg_classes])() = {
        class_table<0>, class_table<1>, class_table<2>, class_table<3>, class_table<4>};
    return tables[c]();
}

} // namespace holdfast::detail::start_table
