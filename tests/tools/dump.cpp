// Prints what the library computes, one "name value" per line, so that Python checks can
// compare it with astropy. Test-only; never installed.
//   holdfast_dump constants
//   holdfast_dump parse "1.4 Msun" "3e38 erg/s" ...
#include <cstdio>
#include <string>

#include "holdfast/constants.hpp"
#include "holdfast/errors.hpp"
#include "holdfast/parse.hpp"

int main(int argc, char** argv) {
    using namespace holdfast::constants;
    if (argc < 2) return 2;
    const std::string mode = argv[1];
    if (mode == "constants") {
        const struct {
            const char* name;
            double value;
        } rows[] = {
            {"speed_of_light_m_s", speed_of_light_m_s},
            {"gravitational_constant_SI", gravitational_constant_SI},
            {"planck_J_s", planck_J_s},
            {"boltzmann_J_K", boltzmann_J_K},
            {"stefan_boltzmann_SI", stefan_boltzmann_SI},
            {"proton_mass_kg", proton_mass_kg},
            {"electron_mass_kg", electron_mass_kg},
            {"atomic_mass_unit_kg", atomic_mass_unit_kg},
            {"thomson_cross_section_m2", thomson_cross_section_m2},
            {"au_m", au_m},
            {"parsec_m", parsec_m},
            {"solar_luminosity_W", solar_luminosity_W},
            {"solar_radius_m", solar_radius_m},
            {"solar_teff_K", solar_teff_K},
            {"solar_gm_m3_s2", solar_gm_m3_s2},
            {"solar_mass_kg", solar_mass_kg},
            {"julian_year_s", julian_year_s},
            {"erg_J", erg_J},
            {"cmb_temperature_K", cmb_temperature_K},
        };
        for (const auto& r : rows)
            std::printf("%s %.17g\n", r.name, r.value);
        return 0;
    }
    if (mode == "parse") {
        for (int i = 2; i < argc; ++i) {
            try {
                const auto q = holdfast::parse_quantity_text(argv[i], "--value");
                std::printf("%.17g %d %d %d %d\n", q.value_si, q.dimension.length, q.dimension.mass,
                            q.dimension.time, q.dimension.temperature);
            } catch (const holdfast::Error& e) {
                std::printf("error %s\n", e.what());
            }
        }
        return 0;
    }
    return 2;
}
