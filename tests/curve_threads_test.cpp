// Spectral-mean curves on several threads (SpectralEfficiency::curve): the same numbers, bit for
// bit, as one callable asked radius by radius, for every quadrature path, and the same errors.
// Expected values come from the serial path itself: the property under test is that threading
// changes nothing (the design promise of grain.hpp), so no tolerance is allowed.
#include <catch2/catch.hpp>

#include <atomic>
#include <complex>
#include <limits>
#include <memory>
#include <vector>

#include "holdfast/errors.hpp"
#include "holdfast/grain.hpp"
#include "holdfast/material.hpp"
#include "holdfast/parse.hpp"
#include "holdfast/star.hpp"
#include "synthetic_nk.hpp"

using namespace holdfast;

namespace {

struct Case {
    const char* name;
    GrainOptics optics;
    GrainEfficiencySettings settings;
    std::vector<double> radii_um;
};

std::vector<Case> cases() {
    std::vector<Case> out;
    const std::vector<double> curve = log_spaced(0.01, 1000.0, 60);
    GrainOptics silicate;
    silicate.core = constant_index({1.7, 0.03});
    out.push_back({"constant index (fixed rule in x)", silicate, {}, curve});

    GrainOptics ice;
    ice.core = constant_index({1.31, 1e-4});
    out.push_back({"nearly transparent constant index", ice, {}, log_spaced(0.05, 50.0, 24)});

    GrainOptics coated = silicate;
    coated.mantle = constant_index({1.31, 1e-4});
    coated.core_radius_fraction = 0.8;
    out.push_back({"coated grain", coated, {}, log_spaced(0.05, 5.0, 8)});

    GrainOptics tabulated;
    tabulated.core = tabulated_index(testing::transparent_nk_table(100.0, 31, 1e3, "synthetic"));
    GrainEfficiencySettings limit;
    limit.out_of_band = OutOfBand::limit_band;
    out.push_back(
        {"tabulated index (rule in ln lambda)", tabulated, limit, log_spaced(0.02, 5.0, 12)});

    GrainEfficiencySettings tight;
    tight.spectral.relative_tolerance = 1e-8; // below the fixed rules: adaptive quadrature
    out.push_back({"adaptive quadrature", silicate, tight, log_spaced(0.05, 5.0, 6)});
    return out;
}

} // namespace

TEST_CASE("a curve on several threads equals the serial means bit for bit", "[curve_threads]") {
    const auto sun_spectrum = sun().spectrum;
    for (const Case& c : cases()) {
        SECTION(c.name) {
            const SpectralEfficiency serial =
                starlight_qpr_mean(c.optics, sun_spectrum, c.settings);
            std::vector<double> expected;
            for (double s : c.radii_um)
                expected.push_back(serial.mean(s));
            for (unsigned threads : {1u, 2u, 3u}) {
                const SpectralEfficiency e = starlight_qpr_mean(c.optics, sun_spectrum, c.settings);
                const std::vector<double> got = e.curve(c.radii_um, threads, nullptr);
                REQUIRE(got.size() == expected.size());
                for (std::size_t i = 0; i < got.size(); ++i) {
                    INFO("threads " << threads << ", radius " << c.radii_um[i] << " um");
                    CHECK(got[i] == expected[i]);
                }
                // The calling thread's callable keeps what the curve computed and still
                // answers like a fresh one, between and beyond the curve's radii.
                const double between = std::sqrt(c.radii_um[0] * c.radii_um[1]);
                const double fresh =
                    starlight_qpr_mean(c.optics, sun_spectrum, c.settings).mean(between);
                CHECK(e.mean(between) == fresh);
            }
        }
    }
}

TEST_CASE("Q_abs curves on threads equal the serial means", "[curve_threads]") {
    GrainOptics carbon;
    carbon.core = constant_index({1.9, 0.7});
    const auto radii = log_spaced(0.01, 100.0, 40);
    const SpectralEfficiency serial = starlight_qabs_mean(carbon, sun().spectrum);
    const SpectralEfficiency e = starlight_qabs_mean(carbon, sun().spectrum);
    const std::vector<double> got = e.curve(radii, 2, nullptr);
    for (std::size_t i = 0; i < radii.size(); ++i)
        CHECK(got[i] == serial.mean(radii[i]));
    // More threads than radii: one radius each.
    const std::vector<double> few(radii.begin(), radii.begin() + 5);
    const std::vector<double> got_few =
        starlight_qabs_mean(carbon, sun().spectrum).curve(few, 16, nullptr);
    for (std::size_t i = 0; i < few.size(); ++i)
        CHECK(got_few[i] == serial.mean(few[i]));
}

TEST_CASE("a curve on threads raises the error the serial loop raises first", "[curve_threads]") {
    GrainOptics silicate;
    silicate.core = constant_index({1.7, 0.03});
    const SpectralEfficiency e = starlight_qpr_mean(silicate, sun().spectrum);
    // The serial loop would stop at the first bad radius (index 2: zero), not at the NaN.
    const std::vector<double> radii{0.1, 1.0, 0.0, 3.0, std::numeric_limits<double>::quiet_NaN()};
    try {
        e.curve(radii, 3, nullptr);
        FAIL("no error for a zero radius");
    } catch (const InputError& err) {
        CHECK_THAT(err.what(), Catch::Contains("got 0 um"));
    }
    // Empty input: nothing to compute, no thread started.
    CHECK(e.curve({}, 4, nullptr).empty());
}

TEST_CASE("a curve asked to stop returns empty", "[curve_threads]") {
    GrainOptics silicate;
    silicate.core = constant_index({1.7, 0.03});
    GrainEfficiencySettings tight;
    tight.spectral.relative_tolerance = 1e-8; // the generic path as well as the fixed rule
    const std::atomic<bool> stop{true};
    const auto radii = log_spaced(0.1, 10.0, 8);
    for (const auto& settings : {GrainEfficiencySettings{}, tight})
        for (unsigned threads : {1u, 2u})
            CHECK(starlight_qpr_mean(silicate, sun().spectrum, settings)
                      .curve(radii, threads, &stop)
                      .empty());
}
