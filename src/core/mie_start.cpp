// The start table of the serial D_n(mx) chain (detail::serial_start_entry; the criterion and
// its checks are described beside it in mie_series.hpp).
#include <algorithm>
#include <cmath>
#include <complex>
#include <vector>

#include "mie_series.hpp"

namespace holdfast::detail::start_table {
namespace {

Table make() {
    const double target = std::log(1e17);
    const double guard = std::log(1e6);
    const double growth_limit = 500.0 * std::log(2.0); // ln(2^500)
    constexpr int last = serial_max_top;
    const auto index = [](int n) { return static_cast<std::size_t>(n); };
    Table t{};
    // fall[s][n]: the fall of ln|psi_n(x)/chi_n(x)| from order 0 to n, the sum of
    // 2 acosh(k/x) over k < n, k > x, at the largest x whose series has N = s - 1 terms
    // (mie_series_terms: x + 6 x^(1/3) + 2 = N); x_top[s] is the ceiling of that x.
    std::vector<std::vector<double>> fall(index(last + 1),
                                          std::vector<double>(index(last + 2), 0.0));
    std::vector<int> x_top(index(last + 1), 0);
    for (int s = 2; s <= last; ++s) {
        const double x_max = terms_table::crossing(s - 1.0);
        x_top[index(s)] = x_max > 0.0 ? static_cast<int>(std::ceil(x_max)) : 0;
        for (int n = 1; n <= last + 1; ++n) {
            const double k = n - 1;
            fall[index(s)][index(n)] =
                fall[index(s)][index(n - 1)] +
                (x_max > 0.0 && k > x_max ? 2.0 * std::acosh(k / x_max) : 0.0);
        }
    }
    std::vector<double> rise(index(last + 2)), growth(index(last + 1));
    for (int c = 0; c < arg_classes; ++c) {
        // z at the class floor: iz e^{i arg}, arg = atan(arg_class_tan[c]).
        const std::complex<double> unit = std::complex<double>(1.0, arg_class_tan[c]) /
                                          std::sqrt(1.0 + arg_class_tan[c] * arg_class_tan[c]);
        for (int iz = 1; iz <= last; ++iz) {
            // rise[n]: the rise of ln|chi_n/psi_n|(z) from order 0 to n, the sum of
            // 2 Re acosh(k/z) over k < n. Re acosh w = ln|w + sqrt(w^2 - 1)| for the root of
            // modulus >= 1 (the two roots' moduli multiply to 1), hence the absolute value.
            const std::complex<double> inv_z = std::conj(unit) / static_cast<double>(iz);
            rise[0] = 0.0;
            for (int n = 1; n <= last + 1; ++n) {
                const std::complex<double> w = static_cast<double>(n - 1) * inv_z;
                rise[index(n)] =
                    rise[index(n - 1)] + std::abs(std::log(std::norm(w + std::sqrt(w * w - 1.0))));
            }
            // ln of the growth bound over n = 1..k + 1, for each top k.
            double sum_growth = std::log(3.0 + iz * iz); // n = 1
            for (int k = 1; k <= last; ++k) {
                sum_growth += std::log(2.0 * (k + 1) + 1.0 + iz * iz);
                growth[index(k)] = sum_growth;
            }
            for (int s = 2; s <= last; ++s) { // s = N + 1
                const int s1 = std::min(s, std::max(iz, x_top[index(s)]));
                const auto& f = fall[index(s)];
                double need = rise[index(s1)] + target;
                for (int n = s1 + 1; n <= s; ++n)
                    need = std::max(need, rise[index(n)] - (f[index(n)] - f[index(s1)]) + target);
                need = std::max(need, rise[index(s)] + guard);
                int top = s + 1;
                while (top < last && rise[index(top)] < need)
                    ++top;
                // At most serial_max_top - 1: the chain may add one step (an even count),
                // which the growth bound includes (top + 1).
                const bool serial = rise[index(top)] >= need && top < last;
                const bool unchecked = serial && growth[index(top)] < growth_limit;
                t.top[c][iz][s] =
                    static_cast<std::uint8_t>(serial ? top + (unchecked ? unchecked_flag : 0) : 0);
            }
        }
    }
    return t;
}

} // namespace

const Table& table() {
    static const Table built = make();
    return built;
}

} // namespace holdfast::detail::start_table
