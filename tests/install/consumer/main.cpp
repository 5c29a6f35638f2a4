// Uses the installed holdfast library: an Eddington luminosity, a Mie efficiency, a shipped
// material read from the installed tables folder, and the version header. Prints what it
// computed and exits 1 on any mismatch (0 when all agree).
#include <cmath>
#include <complex>
#include <cstdio>
#include <cstring>
#include <exception>

#include <gsl/gsl_errno.h>
#include <holdfast/eddington.hpp>
#include <holdfast/material.hpp>
#include <holdfast/mie.hpp>
#include <holdfast/units.hpp>
#include <holdfast/version.hpp>

namespace {

int failures = 0;

void expect_near(const char* what, double got, double want, double rel_tol) {
    const bool ok = std::isfinite(got) && std::abs(got - want) <= rel_tol * std::abs(want);
    std::printf("%s %s = %.9g (expected %.9g, rel tol %g)\n", ok ? "ok  " : "FAIL", what, got, want,
                rel_tol);
    if (!ok) ++failures;
}

} // namespace

int main() {
    // GSL's default handler aborts; the library checks every GSL status and throws instead.
    gsl_set_error_handler_off();
    try {
        using namespace holdfast;
        // Eddington luminosity of 1 Msun for electron scattering in pure hydrogen (X = 1,
        // kappa = sigma_T / m_p): 1.2571e38 erg/s, computed with astropy 5.2 constants (as in
        // tests/eddington_test.cpp); 1e-4 is the rounding of five digits.
        const Power l_edd =
            eddington_luminosity(solar_masses(1.0), electron_scattering_opacity(1.0));
        expect_near("eddington_luminosity_erg_s", in_erg_per_second(l_edd), 1.2571e38, 1e-4);

        // Mie efficiencies of m = 1.5+1i, x = 1: Wiscombe (1979, rev. 1996, NCAR/TN-140+STR),
        // MIEV0 test case 14: Q_ext 2.336321, Q_sca 0.6634538, g 0.192136. Tolerances: one unit
        // in the last printed digit, relative.
        const MieEfficiencies q = mie_sphere(std::complex<double>(1.5, 1.0), 1.0);
        expect_near("q_ext", q.q_ext, 2.336321, 1e-6 / 2.336321);
        expect_near("q_sca", q.q_sca, 0.6634538, 1e-7 / 0.6634538);
        expect_near("g", q.g, 0.192136, 1e-6 / 0.192136);

        // The shipped silicate from the installed tables: 3.3 g/cm3 and m = 1.7+0.03i as
        // written in tables/materials/silicate.toml (its provenance is in that file); the
        // g/cm3 round trip only rounds, hence 1e-12.
        const Material silicate = shipped_material("silicate", CONSUMER_TABLES_DIR);
        expect_near("silicate density_g_cm3", in_g_per_cm3(silicate.density), 3.3, 1e-12);
        expect_near("silicate n", silicate.optics->index_at_um(0.55).real(), 1.7, 1e-12);
        std::printf("silicate read from %s\n", silicate.file.c_str());

        const bool version_ok = std::strcmp(version_string, CONSUMER_EXPECTED_VERSION) == 0;
        std::printf("%s holdfast version %s (package %s)\n", version_ok ? "ok  " : "FAIL",
                    version_string, CONSUMER_EXPECTED_VERSION);
        if (!version_ok) ++failures;
    } catch (const std::exception& e) {
        std::printf("FAIL exception: %s\n", e.what());
        return 1;
    }
    return failures == 0 ? 0 : 1;
}
