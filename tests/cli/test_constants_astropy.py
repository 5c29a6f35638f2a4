"""Every constant in include/holdfast/constants.hpp against astropy (Debian python3-astropy),
which ships CODATA 2018 and the IAU 2015 nominal values. Each is compared to the precision
its source states (see the tolerance column)."""
import subprocess

import harness

args = harness.options()
harness.astropy_or_skip()
import astropy.constants as const  # noqa: E402
import astropy.units as u  # noqa: E402
from astropy.cosmology import Planck18  # noqa: E402

out = subprocess.run([args.dump, "constants"], capture_output=True, text=True, check=True).stdout
ours = {name: float(v) for name, v in (line.split() for line in out.splitlines())}
checks = harness.Checks(args.binary)

# name: (astropy value in SI, relative tolerance, why that tolerance)
expected = {
    "speed_of_light_m_s": (const.c.si.value, 0.0, "exact"),
    "gravitational_constant_SI": (const.G.si.value, 1e-15, "CODATA 2018 digits"),
    "planck_J_s": (const.h.si.value, 0.0, "exact"),
    "boltzmann_J_K": (const.k_B.si.value, 0.0, "exact"),
    "stefan_boltzmann_SI": (const.sigma_sb.si.value, 1e-9, "CODATA prints 10 digits"),
    "proton_mass_kg": (const.m_p.si.value, 1e-15, "CODATA 2018 digits"),
    "electron_mass_kg": (const.m_e.si.value, 1e-15, "CODATA 2018 digits"),
    "atomic_mass_unit_kg": (const.u.si.value, 1e-15, "CODATA 2018 digits"),
    "thomson_cross_section_m2": (const.sigma_T.si.value, 1e-15, "CODATA 2018 digits"),
    "au_m": (const.au.si.value, 0.0, "IAU 2012 B2, exact"),
    "parsec_m": (const.pc.si.value, 1e-15, "IAU 2015 B2, derived"),
    "solar_luminosity_W": (const.L_sun.si.value, 0.0, "IAU 2015 B3 nominal"),
    "solar_radius_m": (const.R_sun.si.value, 0.0, "IAU 2015 B3 nominal"),
    "solar_teff_K": (5772.0, 0.0, "IAU 2015 B3 nominal (astropy has no constant for it)"),
    "solar_gm_m3_s2": (const.GM_sun.si.value, 0.0, "IAU 2015 B3 nominal"),
    "solar_mass_kg": (const.M_sun.si.value, 1e-15, "IAU 2015 B3: GM_sun / G"),
    "julian_year_s": ((1 * u.yr).to(u.s).value, 0.0, "Julian year, exact"),
    "erg_J": ((1 * u.erg).to(u.J).value, 1e-15, "exact; astropy rounds 1e-7 in its conversion"),
    # astropy has no CMB constant; its Planck 2018 cosmology quotes Fixsen (2009) rounded to
    # 2.7255 K, hence 2e-5.
    "cmb_temperature_K": (Planck18.Tcmb0.to(u.K).value, 2e-5, "Fixsen 2009 via astropy Planck18"),
}
for name, (value, rel, why) in expected.items():
    checks.check(name in ours, f"{name} missing from holdfast_dump")
    if name in ours:
        got = ours[name]
        ok = got == value if rel == 0.0 else abs(got - value) <= rel * abs(value)
        checks.check(ok, f"{name}: holdfast {got!r}, astropy {value!r} ({why}, rel tol {rel})")
checks.check(set(ours) == set(expected), f"constants not compared: {set(ours) ^ set(expected)}")
checks.close()
