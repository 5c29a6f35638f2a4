#pragma once
// Test-only: the fraction of blackbody flux below a wavelength, computed independently of the
// library from the exponential series of Widger & Woodall (1976), summed in long double until
// converged (exact to rounding for x = hc/(lambda k T) >= 0.05, the range the tests use).
#include <cmath>
#include <numbers>

#include "holdfast/constants.hpp"

namespace holdfast::test {

inline double reference_fraction_below(double wavelength_um, double t_K) {
    using namespace holdfast::constants;
    const double c2_um_K = planck_J_s * speed_of_light_m_s / boltzmann_J_K * 1e6;
    const long double x = c2_um_K / (wavelength_um * t_K);
    long double sum = 0.0L;
    for (int n = 1; n <= 1000000; ++n) {
        const long double dn = n;
        const long double term =
            std::exp(-dn * x) / dn *
            (x * x * x + 3.0L * x * x / dn + 6.0L * x / (dn * dn) + 6.0L / (dn * dn * dn));
        sum += term;
        if (term < 1e-22L * sum) break;
    }
    // 15 / pi^4 normalises the series to the whole Planck integral.
    return static_cast<double>(sum * 15.0L / std::pow(std::numbers::pi_v<long double>, 4));
}

} // namespace holdfast::test
