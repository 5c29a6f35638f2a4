"""Quantity parsing: every conversion cross-checked against astropy.units
(Debian python3-astropy), and the refusals the parser must make."""
import subprocess

import harness

args = harness.options()
harness.astropy_or_skip()
import astropy.units as u  # noqa: E402

checks = harness.Checks(args.binary)

# our text -> the same quantity spelled for astropy
cases = {
    "1.4 Msun": "1.4 solMass",
    "3e38 erg/s": "3e38 erg/s",
    "2.1e-9 erg/s/cm2": "2.1e-9 erg/(s cm2)",
    "8 kpc": "8 kpc",
    "0.34 cm2/g": "0.34 cm2/g",
    "1e-8 Msun/yr": "1e-8 solMass/yr",
    "12 km": "12 km",
    "1e8 K": "1e8 K",
    "3.3 g/cm3": "3.3 g/cm3",
    "3.3 g cm^-3": "3.3 g/cm3",
    "2 W m-2": "2 W/m2",
    "1 au": "1 au",
    "5 Rsun": "5 solRad",
    "2 Lsun": "2 solLum",
    "0.5 um": "0.5 um",
    "3 micron": "3 micron",
    "4000 Angstrom": "4000 Angstrom",
    "1 Gyr": "1 Gyr",
    "1 Mearth": "1 earthMass",
    "1 Mjup": "1 jupiterMass",
    "1e-3 erg/(s cm^2)": "1e-3 erg/(s cm2)",
    "7 km/s": "7 km/s",
    "1 d": "1 d",
    "2 keV": "2 keV",
}
texts = list(cases)
out = subprocess.run([args.dump, "parse"] + texts, capture_output=True, text=True,
                     check=True).stdout.splitlines()
for text, line in zip(texts, out):
    ref = u.Quantity(cases[text]).decompose(bases=[u.m, u.kg, u.s, u.K])
    parts = line.split()
    checks.check(parts[0] != "error", f"{text!r} refused: {line}")
    if parts[0] == "error":
        continue
    value = float(parts[0])
    dim = tuple(int(p) for p in parts[1:])
    bases = dict(zip(ref.unit.bases, ref.unit.powers))
    ref_dim = (bases.get(u.m, 0), bases.get(u.kg, 0), bases.get(u.s, 0), bases.get(u.K, 0))
    checks.check(dim == ref_dim, f"{text!r}: dimension {dim}, astropy {ref_dim}")
    # 1e-12: both sides use the same definitions; only rounding differs.
    checks.near(value, ref.value, 1e-12, f"{text!r} in SI (astropy {cases[text]!r})")

bad = ["", "Msun", "1.4 Mparsec", "nan Msun", "inf erg/s", "1.4 Msun Msun extra ^", "1 erg//s",
       "1 cm^x", "1e999 kg", "3e38 erg/s)"]
out = subprocess.run([args.dump, "parse"] + bad, capture_output=True, text=True,
                     check=True).stdout.splitlines()
for text, line in zip(bad, out):
    checks.check(line.startswith("error --value"), f"{text!r} should be refused, got {line!r}")
checks.close()
