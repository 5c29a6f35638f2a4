// The old kernel behind a plain function (see ab.cpp). Compiled with -Dholdfast=holdfast_old,
// like the old mie.cpp, so that its symbols do not clash with the current library's.
#include <cstring>

#include "holdfast/mie.hpp"

void call_small(double re, double im, double x, double* out);
void call_geometric(double re, double im, double x, double* out);

namespace holdfast {
static_assert(sizeof(MieEfficiencies) == 6 * sizeof(double));
namespace {
MieEfficiencies from_current(void (*call)(double, double, double, double*), std::complex<double> m,
                             double x) {
    double values[6];
    call(m.real(), m.imag(), x, values);
    MieEfficiencies q;
    std::memcpy(&q, values, sizeof q);
    return q;
}
} // namespace
MieEfficiencies mie_small_sphere(std::complex<double> m, double x) {
    return from_current(call_small, m, x);
}
MieEfficiencies mie_geometric_optics(std::complex<double> m, double x) {
    return from_current(call_geometric, m, x);
}
} // namespace holdfast

void call_old(double re, double im, double x, double* out) {
    const auto q = holdfast::mie_sphere({re, im}, x);
    std::memcpy(out, &q, sizeof q);
}
