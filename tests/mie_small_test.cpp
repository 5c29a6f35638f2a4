// The small-particle (Rayleigh) limit below the series' range, x < 1e-6 (mie_small.cpp):
// against the exact series at x = 1e-6, and grain efficiencies that no longer refuse tiny x.
#include <catch2/catch.hpp>

#include <cmath>
#include <complex>
#include <numbers>
#include <tuple>

#include "holdfast/errors.hpp"
#include "holdfast/grain.hpp"
#include "holdfast/material.hpp"
#include "holdfast/mie.hpp"

using namespace holdfast;
using cplx = std::complex<double>;

namespace {
double rel(double a, double b) { return std::abs(a - b) / std::abs(b); }
bool finite(const MieEfficiencies& e) {
    return std::isfinite(e.q_ext) && std::isfinite(e.q_sca) && std::isfinite(e.q_abs) &&
           std::isfinite(e.q_back) && std::isfinite(e.g) && std::isfinite(e.q_pr);
}
} // namespace

TEST_CASE("small-particle limit equals the series at x = 1e-6", "[mie][small]") {
    // Reference: the exact series (mie_sphere), which at x = 1e-6 agrees with a 50-digit sum to
    // 1e-9 (tests/mie_reference_test.cpp). Tolerance 1e-9, the series' own accuracy: the
    // limit's relative corrections are O(x^2) = 1e-12 (Bohren & Huffman 1983, sec. 5.2), and
    // with BH eq. 5.11's x^2 term O((|m| x)^4) <= 4e-12 for metals. Indices: silicate-like,
    // ice-like, carbon-like, an oxide near its reststrahlen band, metals up to the range's
    // end, and a non-absorbing sphere (Q_abs = 0 in both). Measured: at most 2.3e-11 (Q_abs of
    // m = 0.01 + 1000i, where Q_abs ~ 2e-16 is nearly all magnetic-dipole absorption).
    const double x = MieRange::x_min;
    for (const cplx m :
         {cplx(1.7, 0.03), cplx(1.31, 1e-4), cplx(2.0, 1.0), cplx(0.05, 1.3), cplx(12.8, 9.3),
          cplx(100.0, 100.0), cplx(1000.0, 1000.0), cplx(0.01, 1000.0), cplx(1.5, 0.0)}) {
        INFO("m = " << m);
        const MieEfficiencies s = mie_sphere(m, x);
        const MieEfficiencies r = mie_small_sphere(m, x);
        REQUIRE(finite(r));
        CHECK(rel(r.q_ext, s.q_ext) < 1e-9);
        CHECK(rel(r.q_sca, s.q_sca) < 1e-9);
        if (m.imag() > 0.0)
            CHECK(rel(r.q_abs, s.q_abs) < 1e-9);
        else
            CHECK(std::abs(r.q_abs) <= 1e-9 * s.q_ext); // both 0 up to rounding
        CHECK(rel(r.q_pr, s.q_pr) < 1e-9);
        CHECK(rel(r.q_back, s.q_back) < 1e-9);
        CHECK(std::abs(r.g - s.g) < 1e-9); // g is O(x^2) in the series, 0 in the limit
    }
}

TEST_CASE("coated small-particle limit equals the coated series at x = 1e-6",
          "[mie][small][coated]") {
    // Reference: mie_coated_sphere (the series, Toon & Ackerman 1981), and for equal core and
    // mantle the homogeneous limit (BH eq. 5.36 reduces to eq. 5.7 for eps1 = eps2, and for
    // f = 0 or 1: analytic). Tolerance 1e-9 as above (measured: at most 3.5e-10, in Q_abs of a
    // silicate core in an ice mantle, where the coated series carries Q_abs ~ 1e-7 as a small
    // imaginary part through its recursion; the limit's own O(x^2) is 1e-12).
    const double x = MieRange::x_min;
    const cplx silicate(1.7, 0.03), ice(1.31, 0.01), carbon(2.0, 1.0);
    for (const auto& [core, mantle, f] :
         {std::tuple{silicate, ice, 0.6}, std::tuple{carbon, ice, 0.8},
          std::tuple{ice, silicate, 0.3}, std::tuple{carbon, cplx(1.0, 0.0), 0.5}}) {
        INFO("core " << core << ", mantle " << mantle << ", f = " << f);
        const MieEfficiencies s = mie_coated_sphere(core, mantle, f * x, x);
        const MieEfficiencies r = mie_small_coated_sphere(core, mantle, f * x, x);
        REQUIRE(finite(r));
        CHECK(rel(r.q_ext, s.q_ext) < 1e-9);
        CHECK(rel(r.q_sca, s.q_sca) < 1e-9);
        CHECK(rel(r.q_abs, s.q_abs) < 1e-9);
        CHECK(std::abs(r.g - s.g) < 1e-9);
    }
    for (const cplx m : {silicate, carbon}) {
        const MieEfficiencies h = mie_small_sphere(m, 0.5 * x);
        for (const double f : {0.0, 0.4, 1.0}) {
            const MieEfficiencies c = mie_small_coated_sphere(m, m, f * 0.5 * x, 0.5 * x);
            CHECK(rel(c.q_abs, h.q_abs) < 1e-12); // the x^2 term of h is ~1e-13 at x = 5e-7
            CHECK(rel(c.q_sca, h.q_sca) < 1e-14); // the same formula: rounding only
        }
    }
}

TEST_CASE("grain efficiencies below x = 1e-6 use the limit", "[mie][small][grain_optics]") {
    // A 0.01 um silicate-like grain at 1e5 um (x = 6.3e-7): no refusal; Q_abs / x is the
    // same as at x = 1e-6 to O(x^2) (the limit is linear in x; analytic, BH eq. 5.9): 1e-9.
    GrainOptics o;
    o.core = constant_index({1.7, 0.03});
    const double radius_um = 0.01, wavelength_um = 1e5;
    const double x = 2.0 * std::numbers::pi * radius_um / wavelength_um;
    REQUIRE(x < MieRange::x_min);
    const MieEfficiencies e = grain_efficiencies(o, radius_um, wavelength_um);
    REQUIRE(finite(e));
    const MieEfficiencies s = mie_sphere({1.7, 0.03}, MieRange::x_min);
    CHECK(rel(e.q_abs / x, s.q_abs / MieRange::x_min) < 1e-9);
    // The same for a coated grain (analytic: the limit is linear in x).
    GrainOptics c = o;
    c.mantle = constant_index({1.31, 0.01});
    c.core_radius_fraction = 0.6;
    const MieEfficiencies ec = grain_efficiencies(c, radius_um, wavelength_um);
    REQUIRE(finite(ec));
    const MieEfficiencies sc =
        mie_coated_sphere({1.7, 0.03}, {1.31, 0.01}, 0.6 * MieRange::x_min, MieRange::x_min);
    CHECK(rel(ec.q_abs / x, sc.q_abs / MieRange::x_min) < 1e-9);
    // Outside the limit's range: refused with the size parameter named.
    CHECK_THROWS_AS(mie_small_sphere({1.7, 0.03}, 2e-6), InputError);
    CHECK_THROWS_AS(mie_small_sphere({1.7, 0.03}, 0.0), InputError);
}
