// Mie efficiencies: analytic limits, identities over a random sample of the whole range,
// coated-sphere reductions, the large-particle approximation against the series, and the
// range checks. Published values and the 50-digit comparison are in mie_reference_test.cpp.
#include <catch2/catch.hpp>

#include <cmath>
#include <complex>
#include <random>

#include "holdfast/errors.hpp"
#include "holdfast/mie.hpp"

using namespace holdfast;
using cplx = std::complex<double>;

namespace {

bool all_finite(const MieEfficiencies& q) {
    return std::isfinite(q.q_ext) && std::isfinite(q.q_sca) && std::isfinite(q.q_abs) &&
           std::isfinite(q.q_back) && std::isfinite(q.g) && std::isfinite(q.q_pr);
}

double rel(double got, double want) { return std::abs(got - want) / std::abs(want); }

} // namespace

TEST_CASE("Rayleigh limit for small spheres", "[mie][limit]") {
    // Analytic limit (Bohren & Huffman 1983, eqs. 5.8 and 5.9): with K = (m^2-1)/(m^2+2),
    // Q_abs -> 4 x Im K and Q_sca -> (8/3) x^4 |K|^2. The next terms are O(x^2) relative
    // (BH eq. 5.7), so at x = 1e-3 a tolerance of 1e-5 covers coefficients up to 10.
    const double x = 1e-3;
    for (const cplx m : {cplx(1.5, 0.0), cplx(1.7, 0.03), cplx(2.0, 0.6), cplx(1.33, 1e-5),
                         cplx(3.0, 4.0), cplx(0.5, 0.2)}) {
        INFO("m = " << m);
        const cplx k = (m * m - 1.0) / (m * m + 2.0);
        const MieEfficiencies q = mie_sphere(m, x);
        REQUIRE(all_finite(q));
        CHECK(rel(q.q_sca, 8.0 / 3.0 * std::pow(x, 4) * std::norm(k)) < 1e-5);
        if (m.imag() > 0.0) CHECK(rel(q.q_abs, 4.0 * x * k.imag()) < 1e-5);
        // Dipole scattering is symmetric fore and aft: g = O(x^2) (BH section 5.1).
        CHECK(std::abs(q.g) < 1e-5);
    }
}

TEST_CASE("extinction paradox: Q_ext -> 2 for large spheres", "[mie][limit]") {
    // Analytic limit (van de Hulst 1957, section 8.22; BH section 4.4): Q_ext -> 2 as x -> oo,
    // approached as ~2 x^(-2/3) (Nussenzveig & Wiscombe 1980): 0.0043 at x = 1e4, so 0.01.
    for (const cplx m : {cplx(1.5, 1.0), cplx(1.7, 0.03), cplx(2.0, 0.6), cplx(10.0, 10.0)}) {
        INFO("m = " << m);
        const MieEfficiencies q = mie_sphere(m, 1e4);
        REQUIRE(all_finite(q));
        CHECK(std::abs(q.q_ext - 2.0) < 0.01);
    }
}

TEST_CASE("anomalous diffraction for m -> 1", "[mie][limit]") {
    // van de Hulst (1957), eq. 11.22: for k = 0, Q_ext = 2 - (4/p) sin p + (4/p^2)(1 - cos p)
    // with p = 2x(n-1). The approximation is first order in n - 1: the tolerance is
    // 2 (n - 1), and the error must shrink with n - 1 (measured: 1e-2 at n = 1.01, 1e-3 at
    // n = 1.001).
    for (const double n : {1.01, 1.001}) {
        for (const double x : {100.0, 500.0, 1000.0, 3000.0}) {
            const double p = 2.0 * x * (n - 1.0);
            const double adt = 2.0 - 4.0 / p * std::sin(p) + 4.0 / (p * p) * (1.0 - std::cos(p));
            const MieEfficiencies q = mie_sphere({n, 0.0}, x);
            INFO("n = " << n << ", x = " << x);
            REQUIRE(std::isfinite(q.q_ext));
            CHECK(rel(q.q_ext, adt) < 2.0 * (n - 1.0));
        }
    }
}

TEST_CASE("non-absorbing spheres absorb nothing", "[mie][limit]") {
    // Identity: k = 0 makes every Im G vanish, so Q_abs = 0 exactly and Q_ext = Q_sca.
    for (const double n : {0.1, 0.75, 1.001, 1.5, 4.0, 10.0})
        for (const double x : {1e-6, 0.3, 2.4, 2.6, 30.0, 3000.0}) {
            const MieEfficiencies q = mie_sphere({n, 0.0}, x);
            INFO("n = " << n << ", x = " << x);
            CHECK(q.q_abs == 0.0);
            CHECK(rel(q.q_ext, q.q_sca) < 1e-13); // two separately rounded sums
        }
}

TEST_CASE("identities over a random sample of the documented range", "[mie][property]") {
    // Invariants: Q_ext = Q_sca + Q_abs (the three sums are computed separately, Q_abs from
    // the Wronskian form); Q_abs >= 0; |g| <= 1; Q_pr = Q_abs + (1 - g) Q_sca >= 0; finite.
    std::mt19937_64 rng(20240613);
    std::uniform_real_distribution<double> u(0.0, 1.0);
    for (int i = 0; i < 400; ++i) {
        const double x = std::pow(10.0, -6.0 + 10.0 * u(rng)); // 1e-6 .. 1e4
        const double n = 0.1 + 9.9 * u(rng);
        const double k = u(rng) < 0.2 ? 0.0 : std::pow(10.0, -8.0 + 9.0 * u(rng));
        const MieEfficiencies q = mie_sphere({n, k}, x);
        INFO("m = " << n << " + " << k << "i, x = " << x);
        REQUIRE(all_finite(q));
        CHECK(std::abs(q.q_ext - q.q_sca - q.q_abs) <= 1e-12 * q.q_ext); // rounding of sums
        CHECK(q.q_abs >= 0.0);
        CHECK(q.q_sca >= 0.0);
        CHECK(q.q_back >= 0.0);
        CHECK(q.g >= -1.0);
        CHECK(q.g <= 1.0);
        CHECK(q.q_pr >= -1e-15 * q.q_ext);
    }
}

TEST_CASE("identities over a random sample of the wide index range", "[mie][property]") {
    // As above over n in [0.01, 1000], k in {0} or [1e-8, 1000] (log-uniform: metals, oxides
    // near their reststrahlen bands, carbon), x from 1e-6 up to 1e4 or the cap |m| x <= 2e6.
    // Q_ext = Q_sca + Q_abs to 1e-10 here, not 1e-12: Q_ext sums Re(a_n + b_n), which for a
    // tiny, weakly absorbing high-index sphere is far below |a_1| and keeps fewer digits than
    // the two sums of non-negative terms (measured: 3.6e-12 at m = 241.5+0.0716i,
    // x = 5.2e-6; Q_ext itself agrees with the 50-digit series to ~3e-12 in such cases).
    std::mt19937_64 rng(20250602);
    std::uniform_real_distribution<double> u(0.0, 1.0);
    for (int i = 0; i < 300; ++i) {
        const double n = std::pow(10.0, -2.0 + 5.0 * u(rng));
        const double k = u(rng) < 0.2 ? 0.0 : std::pow(10.0, -8.0 + 11.0 * u(rng));
        const double x_top = std::min(1e4, MieRange::mx_max_series / std::hypot(n, k));
        const double x = std::pow(10.0, -6.0 + std::log10(x_top / 1e-6) * u(rng));
        const MieEfficiencies q = mie_sphere({n, k}, x);
        INFO("m = " << n << " + " << k << "i, x = " << x);
        REQUIRE(all_finite(q));
        CHECK(std::abs(q.q_ext - q.q_sca - q.q_abs) <= 1e-10 * q.q_ext); // see above
        CHECK(q.q_abs >= 0.0);
        CHECK(q.q_sca >= 0.0);
        CHECK(q.q_back >= 0.0);
        CHECK(q.g >= -1.0);
        CHECK(q.g <= 1.0);
        CHECK(q.q_pr >= -1e-15 * q.q_ext);
    }
}

TEST_CASE("both branches of the series agree at their boundary", "[mie][property]") {
    // Below x = 2.5 the cancellation-free small-x form runs, above it the plain recurrences;
    // the efficiencies are smooth in x, so across 2.5 +/- 1e-9 they agree to ~1e-9 relative.
    for (const cplx m : {cplx(1.5, 0.0), cplx(2.0, 0.6), cplx(10.0, 10.0), cplx(0.1, 3.0)}) {
        const MieEfficiencies a = mie_sphere(m, 2.5 - 1e-9);
        const MieEfficiencies b = mie_sphere(m, 2.5);
        INFO("m = " << m);
        CHECK(rel(a.q_ext, b.q_ext) < 1e-8);
        CHECK(rel(a.q_sca, b.q_sca) < 1e-8);
        CHECK(rel(a.g, b.g) < 1e-8);
        CHECK(rel(a.q_back, b.q_back) < 1e-8);
    }
}

TEST_CASE("radius and wavelength give the same as the size parameter", "[mie]") {
    // Identity: x = 2 pi s / lambda.
    const cplx m(1.7, 0.03);
    const MieEfficiencies a = mie_sphere(m, micrometres(0.3), micrometres(0.55));
    const MieEfficiencies b = mie_sphere(m, 2.0 * M_PI * 0.3 / 0.55);
    CHECK(a.q_ext == Approx(b.q_ext).epsilon(1e-14));
    CHECK(a.q_pr == Approx(b.q_pr).epsilon(1e-14));
    CHECK_THROWS_AS(mie_sphere(m, micrometres(-1.0), micrometres(0.5)), InputError);
    CHECK_THROWS_AS(mie_sphere(m, micrometres(1.0), micrometres(0.0)), InputError);
}

TEST_CASE("coated sphere reduces to the homogeneous sphere", "[mie][coated]") {
    // Identities of the coated-sphere solution (Toon & Ackerman 1981; BH section 8.1).
    // Tolerances: the coated recursion takes a different path through the same quantities,
    // so agreement is to rounding amplified by the recursion, 1e-10.
    const cplx core(1.5, 0.1);
    const cplx mantle(1.33, 0.01);
    for (const double x : {0.01, 1.0, 10.0, 300.0}) {
        INFO("x = " << x);
        const MieEfficiencies h = mie_sphere(core, x);
        // Same material inside and out.
        const MieEfficiencies same = mie_coated_sphere(core, core, 0.6 * x, x);
        CHECK(rel(same.q_ext, h.q_ext) < 1e-10);
        CHECK(rel(same.q_sca, h.q_sca) < 1e-10);
        CHECK(rel(same.q_abs, h.q_abs) < 1e-10);
        CHECK(rel(same.g, h.g) < 1e-10);
        CHECK(rel(same.q_pr, h.q_pr) < 1e-10);
        // No mantle: x_core = x_outer.
        const MieEfficiencies bare = mie_coated_sphere(core, mantle, x, x);
        CHECK(rel(bare.q_ext, h.q_ext) < 1e-10);
        CHECK(rel(bare.q_sca, h.q_sca) < 1e-10);
        CHECK(rel(bare.g, h.g) < 1e-10);
        CHECK(rel(bare.q_pr, h.q_pr) < 1e-10);
        // A vanishing core: radius 1e-4 of the grain, volume 1e-12, so the mantle alone to
        // ~1e-12 (1e-9 leaves room for the relative size of the core's dipole).
        const MieEfficiencies m_only = mie_sphere(mantle, x);
        const MieEfficiencies tiny = mie_coated_sphere(core, mantle, 1e-4 * x, x);
        CHECK(rel(tiny.q_ext, m_only.q_ext) < 1e-9);
        CHECK(rel(tiny.q_sca, m_only.q_sca) < 1e-9);
        CHECK(rel(tiny.g, m_only.g) < 1e-9);
        CHECK(mie_coated_sphere(core, mantle, 0.0, x).q_ext == m_only.q_ext);
    }
}

TEST_CASE("coated sphere with a vacuum mantle is the bare core", "[mie][coated]") {
    // Identity: a mantle of m = 1 changes nothing but the reference area, so
    // Q_coated x_outer^2 = Q_core x_core^2 (cross-sections agree), and g is the core's.
    for (const cplx core : {cplx(1.5, 0.1), cplx(2.0, 0.6), cplx(1.33, 0.0)}) {
        for (const double x_core : {0.3, 5.0, 80.0}) {
            const double x_outer = 1.7 * x_core;
            const MieEfficiencies c = mie_coated_sphere(core, {1.0, 0.0}, x_core, x_outer);
            const MieEfficiencies h = mie_sphere(core, x_core);
            const double area = (x_outer * x_outer) / (x_core * x_core);
            INFO("core " << core << ", x_core = " << x_core);
            REQUIRE(all_finite(c));
            CHECK(rel(c.q_ext * area, h.q_ext) < 1e-9);
            CHECK(rel(c.q_sca * area, h.q_sca) < 1e-9);
            CHECK(rel(c.g, h.g) < 1e-9);
        }
    }
}

TEST_CASE("coated sphere stays finite with a thick absorbing mantle", "[mie][coated]") {
    // The direct (BHCOAT) form overflows here (Im(m2) (x2 - x1) ~ 2000); Toon & Ackerman's
    // reformulation must not. Identities as in the random-sample test.
    const MieEfficiencies q = mie_coated_sphere({1.5, 0.0}, {2.0, 1.0}, 1000.0, 3000.0);
    REQUIRE(all_finite(q));
    CHECK(std::abs(q.q_ext - q.q_sca - q.q_abs) < 1e-12 * q.q_ext);
    // Light never reaches the core: the bare mantle material at x = 3000 is the answer, to
    // rounding of the recursion (1e-10).
    const MieEfficiencies m = mie_sphere({2.0, 1.0}, 3000.0);
    CHECK(rel(q.q_ext, m.q_ext) < 1e-10);
    CHECK(rel(q.q_pr, m.q_pr) < 1e-10);
}

TEST_CASE("coated sphere with a metal or a high index in core or mantle", "[mie][coated]") {
    // The identities above with indices of the wide range in the core or the mantle:
    // metals (n, k up to 1000), graphite, amorphous carbon, an oxide near its reststrahlen
    // band (n < 0.1). Tolerance 1e-9 as for the homogeneous series (measured: <= 1.7e-10;
    // the vacuum mantle, where Q_abs of a reflective core is a small imaginary part carried
    // through the recursion, up to 6.7e-10, so 2e-9 there).
    for (const cplx m :
         {cplx(0.05, 1.3), cplx(4.9, 10.9), cplx(12.8, 9.3), cplx(100.0, 100.0), cplx(1.5, 50.0),
          cplx(238.5, 306.0), cplx(1000.0, 1000.0), cplx(0.01, 1000.0)}) {
        for (const double x : {0.05, 1.0, 5.0, 30.0, 300.0}) {
            INFO("m = " << m << ", x = " << x);
            const MieEfficiencies h = mie_sphere(m, x);
            auto agree = [&](const MieEfficiencies& c, double area, double tol) {
                REQUIRE(all_finite(c));
                CHECK(rel(c.q_ext * area, h.q_ext) < tol);
                CHECK(rel(c.q_sca * area, h.q_sca) < tol);
                // Below 1e-6 Q_abs is a tiny difference of large terms in the coated recursion,
                // as in the 50-digit comparison (tests/mie_reference_test.cpp).
                if (h.q_abs > 1e-6) CHECK(rel(c.q_abs * area, h.q_abs) < tol);
                CHECK(rel(c.g, h.g) < tol);
                CHECK(rel(c.q_pr * area, h.q_pr) < tol);
            };
            // Same material inside and out; no mantle; a vacuum mantle around it as the core.
            agree(mie_coated_sphere(m, m, 0.6 * x, x), 1.0, 1e-9);
            agree(mie_coated_sphere(m, {1.5, 0.01}, x, x), 1.0, 1e-9);
            agree(mie_coated_sphere(m, {1.0, 0.0}, x, 1.7 * x), 1.7 * 1.7, 2e-9);
            // A mantle of it 0.5 x thick around a glass core: with k x / 2 > 40 the field
            // decays by e^-80 before the core, so the mantle material alone.
            if (m.imag() * 0.5 * x > 40.0)
                agree(mie_coated_sphere({1.5, 0.0}, m, 0.5 * x, x), 1.0, 1e-9);
        }
    }
}

TEST_CASE("any-size entry point switches at the cap on |m| x", "[mie]") {
    // Above |m| x = 2e6 the series is refused and geometric optics takes over. Measured at
    // the switch (x = 2e6 / |m|) for m = 30+40i, 60+80i, 100+100i, 1.5+50i, 54.8+152.1i,
    // 238.5+306i, 300+300i, 1000+1000i, 0.01+1000i: Q_ext <= 7.2e-3, Q_abs <= 4.3e-2,
    // g <= 7.2e-3, Q_pr <= 9.1e-4 relative; bounds here are those rounded up.
    bool series = true;
    for (const cplx m :
         {cplx(100.0, 100.0), cplx(238.5, 306.0), cplx(1.5, 50.0), cplx(1000.0, 1000.0)}) {
        const double x_cap = MieRange::mx_max_series / std::abs(m);
        INFO("m = " << m << ", x at the cap " << x_cap);
        const MieEfficiencies s = mie_sphere_any_size(m, 0.999 * x_cap, &series);
        CHECK(series);
        const MieEfficiencies a = mie_sphere_any_size(m, 1.001 * x_cap, &series);
        CHECK_FALSE(series);
        REQUIRE(all_finite(a));
        CHECK(rel(a.q_ext, s.q_ext) < 1e-2);
        CHECK(rel(a.q_abs, s.q_abs) < 5e-2);
        CHECK(rel(a.g, s.g) < 1e-2);
        CHECK(rel(a.q_pr, s.q_pr) < 1e-3);
    }
}

namespace {

struct GeometricError {
    double q_ext = 0, q_sca = 0, q_abs = 0, g = 0, q_pr = 0;
};

GeometricError geometric_error(double x) {
    GeometricError worst;
    for (const cplx m : {cplx(1.5, 1.0), cplx(1.33, 1e-5), cplx(1.7, 0.03), cplx(0.75, 0.0),
                         cplx(2.0, 0.6), cplx(10.0, 10.0)}) {
        const MieEfficiencies s = mie_sphere(m, x);
        const MieEfficiencies a = mie_geometric_optics(m, x);
        REQUIRE(all_finite(a));
        worst.q_ext = std::max(worst.q_ext, rel(a.q_ext, s.q_ext));
        worst.q_sca = std::max(worst.q_sca, rel(a.q_sca, s.q_sca));
        if (m.imag() > 0.0) worst.q_abs = std::max(worst.q_abs, rel(a.q_abs, s.q_abs));
        worst.g = std::max(worst.g, rel(a.g, s.g));
        worst.q_pr = std::max(worst.q_pr, rel(a.q_pr, s.q_pr));
    }
    return worst;
}

} // namespace

TEST_CASE("geometric optics against the series at x = 1e4", "[mie][geometric]") {
    // Our own measurement of the large-particle approximation (quoted in README): worst
    // relative errors over six indices at x = 1e4 were Q_ext 1.5e-3, Q_sca 1.5e-3,
    // Q_abs 1.2e-2 (m = 10+10i), g 1.2e-3, Q_pr 3.3e-3. Bounds: those figures rounded up.
    const GeometricError e = geometric_error(1e4);
    CHECK(e.q_ext < 2e-3);
    CHECK(e.q_sca < 2e-3);
    CHECK(e.q_abs < 1.5e-2);
    CHECK(e.g < 2e-3);
    CHECK(e.q_pr < 5e-3);
}

TEST_CASE("geometric optics against the series at x = 1e5", "[mie][geometric][slow]") {
    // As above at the top of the series range: measured Q_ext 6.2e-4, Q_sca 6.2e-4,
    // Q_abs 1.6e-3, g 3.4e-4, Q_pr 2.5e-3.
    const GeometricError e = geometric_error(1e5);
    CHECK(e.q_ext < 1e-3);
    CHECK(e.q_sca < 1e-3);
    CHECK(e.q_abs < 2e-3);
    CHECK(e.g < 1e-3);
    CHECK(e.q_pr < 3e-3);
}

TEST_CASE("any-size entry point switches at the end of the series range", "[mie]") {
    bool series = false;
    const MieEfficiencies a = mie_sphere_any_size({1.7, 0.03}, 1e5, &series);
    CHECK(series);
    CHECK(a.q_ext == mie_sphere({1.7, 0.03}, 1e5).q_ext);
    const MieEfficiencies b = mie_sphere_any_size({1.7, 0.03}, 1e7, &series);
    CHECK_FALSE(series);
    // Analytic limit: Q_ext -> 2, Q_pr of an opaque absorbing sphere close to 1 (DESIGN.md).
    CHECK(b.q_ext == Approx(2.0).margin(1e-4));
    CHECK(b.q_pr == Approx(1.0).margin(0.1));
}

TEST_CASE("inputs outside the documented range are refused", "[mie][input]") {
    CHECK_THROWS_AS(mie_sphere({1.5, 0.0}, 0.0), InputError);
    CHECK_THROWS_AS(mie_sphere({1.5, 0.0}, 5e-7), InputError);
    CHECK_THROWS_AS(mie_sphere({1.5, 0.0}, 1.01e5), InputError);
    CHECK_THROWS_AS(mie_sphere({1.5, 0.0}, std::nan("")), InputError);
    CHECK_THROWS_AS(mie_sphere({1.5, -0.1}, 1.0), InputError);
    // The index range was widened to n in [0.01, 1000], k in [0, 1000] (published tables of
    // metals, carbon and oxides need it); these three test its new edges.
    CHECK_THROWS_AS(mie_sphere({1000.5, 0.0}, 1.0), InputError);
    CHECK_THROWS_AS(mie_sphere({0.005, 0.0}, 1.0), InputError);
    CHECK_THROWS_AS(mie_sphere({1.5, 1000.5}, 1.0), InputError);
    // |m| x above 2e6: refused by the series, geometric optics in mie_sphere_any_size.
    CHECK_THROWS_AS(mie_sphere({100.0, 100.0}, 1.5e4), InputError);
    CHECK_THROWS_WITH(mie_sphere({100.0, 100.0}, 1.5e4), Catch::Matchers::Contains("|m| x"));
    CHECK_THROWS_AS(mie_coated_sphere({1.5, 0.0}, {100.0, 100.0}, 1e3, 1.5e4), InputError);
    CHECK_THROWS_AS(mie_coated_sphere({1000.0, 1000.0}, {1.5, 0.0}, 1.5e3, 2e3), InputError);
    CHECK_THROWS_AS(mie_sphere({std::nan(""), 0.0}, 1.0), InputError);
    CHECK_THROWS_AS(mie_coated_sphere({1.5, 0.0}, {1.3, 0.0}, 2.0, 1.0), InputError);
    CHECK_THROWS_AS(mie_coated_sphere({1.5, 0.0}, {1.3, 0.0}, -1.0, 1.0), InputError);
    CHECK_THROWS_AS(mie_geometric_optics({1.5, 0.0}, 10.0), InputError);
    CHECK_THROWS_AS(mie_perfect_conductor(0.0), InputError);
    CHECK_THROWS_WITH(mie_sphere({1200.0, 0.0}, 1.0),
                      Catch::Matchers::Contains("n in [0.01, 1000], k in [0, 1000]"));
}
