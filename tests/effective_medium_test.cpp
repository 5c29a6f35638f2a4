// Effective-medium mixing: Bruggeman and Maxwell Garnett rules, porosity, mixtures.
#include <catch2/catch.hpp>

#include <array>
#include <cmath>
#include <complex>
#include <vector>

#include "holdfast/errors.hpp"
#include "holdfast/material.hpp"

using namespace holdfast;
using cplx = std::complex<double>;

namespace {

double rel(cplx got, cplx want) { return std::abs(got - want) / std::abs(want); }

cplx bruggeman_residual(const std::vector<cplx>& eps, const std::vector<double>& f, cplx e) {
    cplx s(0.0, 0.0);
    for (std::size_t i = 0; i < eps.size(); ++i)
        s += f[i] * (eps[i] - e) / (eps[i] + 2.0 * e);
    return s;
}

} // namespace

TEST_CASE("index and permittivity round trip on the absorbing branch", "[effective_medium]") {
    // Identity eps = m^2, with the root k >= 0.
    for (const cplx m : {cplx(1.7, 0.03), cplx(1.0, 0.0), cplx(0.2, 3.0), cplx(3.0, 0.0)}) {
        const cplx eps = permittivity_from_index(m);
        CHECK(rel(eps, m * m) < 1e-15);
        const cplx back = index_from_permittivity(eps);
        CHECK(rel(back, m) < 1e-15);
        CHECK(back.imag() >= 0.0);
    }
    // A metal-like negative permittivity: m = i sqrt(2), n = 0.
    const cplx metal = index_from_permittivity({-2.0, -0.0});
    CHECK(metal.imag() == Approx(std::sqrt(2.0)).epsilon(1e-15));
    CHECK(metal.real() == Approx(0.0).margin(1e-15));
    CHECK_THROWS_AS(index_from_permittivity({2.0, -0.1}), InputError); // gain medium
}

TEST_CASE("one component gives itself", "[effective_medium]") {
    // Identity of both rules.
    const cplx eps = permittivity_from_index({1.7, 0.03});
    const std::array<cplx, 1> one{eps};
    const std::array<double, 1> all{1.0};
    CHECK(rel(bruggeman_permittivity(one, all), eps) < 1e-15);
    const std::array<cplx, 2> two{eps, cplx(1.0, 0.0)};
    const std::array<double, 2> none_of_second{1.0, 0.0};
    CHECK(rel(bruggeman_permittivity(two, none_of_second), eps) < 1e-15);
    CHECK(rel(maxwell_garnett_permittivity(eps, {1.0, 0.0}, 0.0), eps) < 1e-15);
    // Maxwell Garnett with f = 1 is the inclusion (BH eq. 8.50 at f = 1); rounding only.
    CHECK(rel(maxwell_garnett_permittivity({1.0, 0.0}, eps, 1.0), eps) < 1e-14);
}

TEST_CASE("Bruggeman solves its equation and matches the two-component quadratic",
          "[effective_medium]") {
    // Analytic: for two components the condition is 2 eps^2 - b eps - eps1 eps2 = 0 with
    // b = (3 f1 - 1) eps1 + (3 f2 - 1) eps2; the physical root has Im >= 0 (and is the
    // positive one for lossless dielectrics). Tolerance: rounding, 1e-12.
    const cplx e1 = permittivity_from_index({1.7, 0.03});
    const cplx e2 = permittivity_from_index({1.33, 0.0});
    for (const double f1 : {0.1, 0.5, 0.9}) {
        const double f2 = 1.0 - f1;
        const cplx b = (3.0 * f1 - 1.0) * e1 + (3.0 * f2 - 1.0) * e2;
        const cplx s = std::sqrt(b * b + 8.0 * e1 * e2);
        cplx root = (b + s) / 4.0;
        if (root.imag() < 0.0) root = (b - s) / 4.0;
        const std::array<cplx, 2> eps{e1, e2};
        const std::array<double, 2> f{f1, f2};
        const cplx got = bruggeman_permittivity(eps, f);
        INFO("f1 = " << f1);
        CHECK(rel(got, root) < 1e-12);
        CHECK(std::abs(bruggeman_residual({e1, e2}, {f1, f2}, got)) < 1e-14);
    }
}

TEST_CASE("Bruggeman is symmetric in its components", "[effective_medium]") {
    // Bruggeman (1935): the rule treats every component alike, so any permutation gives the
    // same result to rounding (1e-12).
    const std::vector<cplx> eps{permittivity_from_index({1.7, 0.03}),
                                {1.0, 0.0},
                                permittivity_from_index({2.5, 1.2}),
                                {1.77, 0.0}};
    const std::vector<double> f{0.4, 0.3, 0.2, 0.1};
    const cplx ref = bruggeman_permittivity(eps, f);
    CHECK(std::abs(bruggeman_residual(eps, f, ref)) < 1e-13);
    CHECK(ref.imag() >= 0.0);
    std::vector<std::size_t> order{0, 1, 2, 3};
    int permutations = 0;
    do {
        std::vector<cplx> e2;
        std::vector<double> f2;
        for (auto i : order) {
            e2.push_back(eps[i]);
            f2.push_back(f[i]);
        }
        CHECK(rel(bruggeman_permittivity(e2, f2), ref) < 1e-12);
        ++permutations;
    } while (std::next_permutation(order.begin(), order.end()));
    CHECK(permutations == 24);
}

TEST_CASE("Bruggeman of lossless dielectrics lies within the Wiener bounds", "[effective_medium]") {
    // Wiener (1912) bounds for real permittivities: the harmonic and arithmetic means.
    const std::vector<cplx> eps{{1.0, 0.0}, {4.0, 0.0}, {9.0, 0.0}};
    const std::vector<double> f{0.2, 0.5, 0.3};
    const cplx e = bruggeman_permittivity(eps, f);
    double arithmetic = 0.0;
    double harmonic = 0.0;
    for (std::size_t i = 0; i < eps.size(); ++i) {
        arithmetic += f[i] * eps[i].real();
        harmonic += f[i] / eps[i].real();
    }
    CHECK(e.imag() == 0.0);
    CHECK(e.real() > 1.0 / harmonic);
    CHECK(e.real() < arithmetic);
}

TEST_CASE("Bruggeman finds the physical root for a metal in a dielectric", "[effective_medium]") {
    // Of the two roots exactly one has Im(eps) >= 0 here; it must be the one returned, and
    // it must satisfy the equation (residual at rounding level).
    const std::vector<cplx> eps{{-20.0, 1.0}, {2.25, 0.0}};
    const std::vector<double> f{0.5, 0.5};
    const cplx e = bruggeman_permittivity(eps, f);
    CHECK(e.imag() > 0.0);
    CHECK(std::abs(bruggeman_residual(eps, f, e)) < 1e-13);
}

TEST_CASE("Maxwell Garnett and Bruggeman agree to first order for dilute inclusions",
          "[effective_medium]") {
    // Both expand as eps_m + 3 f eps_m (eps_i - eps_m)/(eps_i + 2 eps_m) + O(f^2) (BH section
    // 8.5); their difference must therefore shrink like f^2: check it at f = 1e-3 and 1e-4.
    const cplx em = permittivity_from_index({1.7, 0.03});
    const cplx ei = permittivity_from_index({1.0, 0.0});
    double previous = 0.0;
    for (const double f : {1e-3, 1e-4}) {
        const std::array<cplx, 2> eps{em, ei};
        const std::array<double, 2> fr{1.0 - f, f};
        const cplx bg = bruggeman_permittivity(eps, fr);
        const cplx mg = maxwell_garnett_permittivity(em, ei, f);
        const cplx first = em + 3.0 * f * em * (ei - em) / (ei + 2.0 * em);
        const double diff = std::abs(bg - mg);
        INFO("f = " << f);
        CHECK(std::abs(mg - first) < 10.0 * f * f * std::abs(em));
        CHECK(std::abs(bg - first) < 10.0 * f * f * std::abs(em));
        if (previous > 0.0) CHECK(diff < previous / 50.0); // f^2 scaling: 100x, allow 50x
        previous = diff;
    }
}

TEST_CASE("porosity as vacuum inclusions", "[effective_medium]") {
    const auto solid = constant_index({1.7, 0.03});
    // P = 0 gives the solid back unchanged (same object).
    CHECK(with_porosity(solid, 0.0, MixingRule::bruggeman) == solid);
    // P -> 0: the index approaches the solid's linearly; at 1e-9 it agrees to ~1e-9.
    for (const MixingRule rule : {MixingRule::bruggeman, MixingRule::maxwell_garnett}) {
        const auto almost = with_porosity(solid, 1e-9, rule);
        CHECK(rel(almost->index_at_um(0.5), {1.7, 0.03}) < 1e-8);
        // Porosity lowers both n and k (vacuum dilutes the solid).
        const auto porous = with_porosity(solid, 0.5, rule);
        const cplx m = porous->index_at_um(0.5);
        CHECK(m.real() < 1.7);
        CHECK(m.real() > 1.0);
        CHECK(m.imag() < 0.03);
        CHECK(m.imag() > 0.0);
        // The Maxwell Garnett mixture equals the rule applied by hand (identity).
        if (rule == MixingRule::maxwell_garnett)
            CHECK(rel(m, index_from_permittivity(maxwell_garnett_permittivity(
                             permittivity_from_index({1.7, 0.03}), {1.0, 0.0}, 0.5))) < 1e-14);
    }
    CHECK_THROWS_AS(with_porosity(solid, 1.0, MixingRule::bruggeman), InputError);
    CHECK_THROWS_AS(with_porosity(solid, -0.1, MixingRule::bruggeman), InputError);
    CHECK_THROWS_AS(with_porosity(nullptr, 0.1, MixingRule::bruggeman), InputError);
}

TEST_CASE("mixtures check their fractions and describe themselves", "[effective_medium]") {
    const auto a = constant_index({1.7, 0.03});
    const auto b = constant_index({1.33, 0.0});
    const auto mix = mixture({{a, 0.6}, {b, 0.4}}, MixingRule::bruggeman);
    const std::array<cplx, 2> eps{permittivity_from_index({1.7, 0.03}),
                                  permittivity_from_index({1.33, 0.0})};
    const std::array<double, 2> f{0.6, 0.4};
    CHECK(rel(mix->index_at_um(1.0), index_from_permittivity(bruggeman_permittivity(eps, f))) <
          1e-15);
    CHECK_THAT(mix->describe(), Catch::Matchers::Contains("Bruggeman"));
    CHECK_THROWS_AS(mixture({{a, 0.6}, {b, 0.3}}, MixingRule::bruggeman), InputError);
    CHECK_THROWS_AS(mixture({{a, 1.2}, {b, -0.2}}, MixingRule::bruggeman), InputError);
    CHECK_THROWS_AS(mixture({}, MixingRule::bruggeman), InputError);
    CHECK_THROWS_AS(mixture({{nullptr, 1.0}}, MixingRule::bruggeman), InputError);
    CHECK_THROWS_AS(constant_index({1.5, -0.1}), InputError);
    CHECK_THROWS_AS(constant_index({0.0, 0.1}), InputError);
    // Maxwell Garnett with two inclusion kinds: matrix first, inclusions pre-mixed.
    const auto c = constant_index({1.0, 0.0});
    const auto mg = mixture({{a, 0.5}, {b, 0.25}, {c, 0.25}}, MixingRule::maxwell_garnett);
    const std::array<cplx, 2> inc{permittivity_from_index({1.33, 0.0}), cplx(1.0, 0.0)};
    const std::array<double, 2> half{0.5, 0.5};
    const cplx by_hand = index_from_permittivity(maxwell_garnett_permittivity(
        permittivity_from_index({1.7, 0.03}), bruggeman_permittivity(inc, half), 0.5));
    CHECK(rel(mg->index_at_um(1.0), by_hand) < 1e-14);
}
