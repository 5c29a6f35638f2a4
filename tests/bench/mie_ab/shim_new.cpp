// The current kernel, behind a plain function (see ab.cpp).
#include <cstring>

#include "holdfast/mie.hpp"

void call_new(double re, double im, double x, double* out) {
    const auto q = holdfast::mie_sphere({re, im}, x);
    std::memcpy(out, &q, sizeof q);
}

// For the old kernel: the small-x and large-particle parts it calls, from the current library.
void call_small(double re, double im, double x, double* out) {
    const auto q = holdfast::mie_small_sphere({re, im}, x);
    std::memcpy(out, &q, sizeof q);
}
void call_geometric(double re, double im, double x, double* out) {
    const auto q = holdfast::mie_geometric_optics({re, im}, x);
    std::memcpy(out, &q, sizeof q);
}
