"""holdfast eddington end to end: results for a spread of masses, opacities, luminosities and
efficiencies against the same formulas evaluated here with astropy.constants (Debian
python3-astropy: CODATA 2018 G, c, sigma_T, m_p and IAU 2015 M_sun, L_sun); the output
formats; --help and --version; and every class of bad input (exit 2, the option named,
nothing on standard output)."""
import csv
import io
import math
import os
import re
import tempfile

import harness

args = harness.options()
harness.astropy_or_skip()
import astropy.constants as const  # noqa: E402
import astropy.units as u  # noqa: E402

checks = harness.Checks(args.binary)

G = const.G.si.value
C = const.c.si.value
SIGMA_T = const.sigma_T.si.value
M_P = const.m_p.si.value
M_SUN = const.M_sun.si.value
L_SUN = const.L_sun.si.value
YEAR = (1 * u.yr).to(u.s).value  # Julian year
PC = const.pc.si.value
# Both sides evaluate the same closed formulas from the same CODATA 2018 / IAU 2015
# constants in double precision, so only rounding differs: 1e-9 leaves room for a handful
# of operations and the JSON round trip.
REL = 1e-9


def kappa_es(x):
    """Electron scattering, fully ionised: sigma_T (1 + X) / (2 m_p), m2/kg."""
    return SIGMA_T * (1.0 + x) / (2.0 * M_P)


def l_edd(m_kg, kappa):
    return 4.0 * math.pi * G * m_kg * C / kappa


def isco(a):
    """Bardeen, Press & Teukolsky (1972), eq. 2.21, in GM/c^2; a < 0 retrograde."""
    z1 = 1.0 + (1.0 - a * a) ** (1.0 / 3.0) * ((1.0 + a) ** (1.0 / 3.0) + (1.0 - a) ** (1.0 / 3.0))
    z2 = math.sqrt(3.0 * a * a + z1 * z1)
    root = math.sqrt(max(0.0, (3.0 - z1) * (3.0 + z1 + 2.0 * z2)))
    return 3.0 + z2 - root if a >= 0 else 3.0 + z2 + root


def compare(results, expected, what):
    for key, value in expected.items():
        got = results.get(key)
        checks.check(got is not None, f"{what}: {key} missing from the output")
        if got is not None:
            checks.near(got, value, REL, f"{what}: {key}")


# ---- values against astropy -------------------------------------------------------------------
# (mass text, mass in Msun, opacity options, kappa in m2/kg)
opacity_cases = [
    ([], kappa_es(1.0), "X=1 default"),
    (["--hydrogen", "0.7"], kappa_es(0.7), "X=0.7"),
    (["--hydrogen", "0"], kappa_es(0.0), "X=0"),
    (["--opacity", "0.34 cm2/g"], 0.034, "0.34 cm2/g"),
    (["--opacity", "1 m2/kg"], 1.0, "1 m2/kg"),
    (["--opacity", "12.5 cm2/g"], 1.25, "12.5 cm2/g"),
]
mass_cases = [("1 Msun", 1.0), ("1.4 Msun", 1.4), ("10 Msun", 10.0), ("4.3e6 Msun", 4.3e6),
              ("1e9 Msun", 1e9), ("2e33 g", 2e30 / M_SUN)]
for mass_text, m_msun in mass_cases:
    for opts, kappa, label in opacity_cases:
        what = f"--mass {mass_text} {label}"
        out = checks.json_of(["eddington", "--mass", mass_text] + opts)
        res = out.get("results", {})
        m_kg = m_msun * M_SUN
        le = l_edd(m_kg, kappa)
        compare(out.get("parameters", {}), {"mass_kg": m_kg, "mass_Msun": m_msun}, what)
        compare(res, {
            "opacity_m2_kg": kappa,
            "opacity_cm2_g": (kappa * u.m**2 / u.kg).to(u.cm**2 / u.g).value,
            "eddington_luminosity_W": le,
            "eddington_luminosity_erg_s": (le * u.W).to(u.erg / u.s).value,
            "eddington_luminosity_Lsun": le / L_SUN,
            "efficiency": 0.1,  # the documented default
            "eddington_accretion_rate_kg_s": le / (0.1 * C**2),
            "eddington_accretion_rate_g_s": le / (0.1 * C**2) * 1e3,
            "eddington_accretion_rate_Msun_yr": le / (0.1 * C**2) * YEAR / M_SUN,
            "efolding_time_s": 0.1 / 0.9 * kappa * C / (4 * math.pi * G),
            "efolding_time_yr": 0.1 / 0.9 * kappa * C / (4 * math.pi * G) / YEAR,
        }, what)

# A luminosity, efficiencies from every source, growth.
lum_cases = [
    # options, mass in Msun, luminosity in W, kappa, efficiency, Eddington ratio for growth,
    # final mass in Msun or None
    (["--luminosity", "1e38 erg/s"], 10.0, 1e31, kappa_es(1.0), 0.1, 1.0, None),
    (["--luminosity", "3e4 Lsun", "--efficiency", "0.3"], 1.4, 3e4 * L_SUN, kappa_es(1.0), 0.3,
     1.0, None),
    (["--luminosity", "1e45 erg/s", "--spin", "0.9", "--hydrogen", "0.7",
      "--eddington-ratio", "0.5", "--final-mass", "1e9 Msun"],
     1e6, 1e38, kappa_es(0.7), 1 - math.sqrt(1 - 2 / (3 * isco(0.9))), 0.5, 1e9),
    (["--luminosity", "2e39 erg/s", "--spin", "-0.7", "--opacity", "0.2 cm2/g"],
     5.0, 2e32, 0.02, 1 - math.sqrt(1 - 2 / (3 * isco(-0.7))), 1.0, None),
    (["--luminosity", "1e37 erg/s", "--star-radius", "12 km"], 1.4, 1e30, kappa_es(1.0),
     G * 1.4 * M_SUN / (12e3 * C**2), 1.0, None),
    (["--luminosity", "1e33 W", "--star-radius", "0.01 Rsun", "--final-mass", "1.2 Msun",
      "--eddington-ratio", "2"],
     1.0, 1e33, kappa_es(1.0), G * M_SUN / (0.01 * const.R_sun.si.value * C**2), 2.0, 1.2),
]
for opts, m_msun, lum, kappa, eta, lam, mf in lum_cases:
    what = " ".join(opts)
    out = checks.json_of(["eddington", "--mass", f"{m_msun!r} Msun"] + opts)
    res = out.get("results", {})
    m_kg = m_msun * M_SUN
    le = l_edd(m_kg, kappa)
    te = eta / (1 - eta) * kappa * C / (4 * math.pi * G * lam)
    exp = {
        "eddington_luminosity_W": le,
        "eddington_ratio": lum / le,
        "minimum_mass_kg": lum * kappa / (4 * math.pi * G * C),
        "minimum_mass_Msun": lum * kappa / (4 * math.pi * G * C) / M_SUN,
        "efficiency": eta,
        "eddington_accretion_rate_kg_s": le / (eta * C**2),
        "required_accretion_rate_kg_s": lum / (eta * C**2),
        "required_accretion_rate_g_s": lum / (eta * C**2) * 1e3,
        "required_accretion_rate_Msun_yr": lum / (eta * C**2) * YEAR / M_SUN,
        "efolding_time_s": te,
        "efolding_time_yr": te / YEAR,
        "efolding_time_Myr": te / YEAR / 1e6,
    }
    if mf is not None:
        exp["growth_time_yr"] = math.log(mf / m_msun) * te / YEAR
    compare(res, exp, what)
    checks.check(res.get("sub_eddington") == (lum < le), f"{what}: sub_eddington flag")
    if "--spin" in opts:
        a = float(opts[opts.index("--spin") + 1])
        compare(res, {"isco_radius_rg": isco(a), "isco_radius_m": isco(a) * G * m_kg / C**2}, what)
    if "--star-radius" in opts:
        compare(res, {"schwarzschild_radius_m": 2 * G * m_kg / C**2}, what)

# Flux, distance and beaming.
for flux_text, flux_si, dist_text, dist_m, beaming in [
        ("1e-8 erg/s/cm2", 1e-11, "8 kpc", 8e3 * PC, None),
        ("2.5e-10 W/m2", 2.5e-10, "2.2 kpc", 2.2e3 * PC, 0.25),
        ("3e-12 erg s^-1 cm^-2", 3e-15, "16.5 Mpc", 16.5e6 * PC, 1.0)]:
    opts = ["--flux", flux_text, "--distance", dist_text]
    if beaming is not None:
        opts += ["--beaming", str(beaming)]
    out = checks.json_of(["eddington", "--mass", "10 Msun"] + opts)
    lum = 4 * math.pi * dist_m**2 * flux_si * (beaming or 1.0)
    le = l_edd(10 * M_SUN, kappa_es(1.0))
    compare(out.get("results", {}), {"luminosity_W": lum, "luminosity_erg_s": lum * 1e7,
                                     "luminosity_Lsun": lum / L_SUN, "eddington_ratio": lum / le},
            " ".join(opts))

# Paczynski (1983) reduction, the fit written out here independently, cgs.
for t_k, rho_cgs in [(1e8, 1e3), (4.5e8, 7.5e5), (3e9, None)]:
    opts = ["--gas-temperature", f"{t_k!r} K"]
    if rho_cgs is not None:
        opts += ["--gas-density", f"{rho_cgs!r} g/cm3"]
    factor = 1.0 / ((1 + 2.7e11 * (rho_cgs or 0.0) / t_k**2) * (1 + (t_k / 4.5e8) ** 0.86))
    out = checks.json_of(["eddington", "--mass", "1.4 Msun", "--hydrogen", "0.7"] + opts)
    compare(out.get("results", {}), {
        "opacity_reduction_factor": factor,
        "thomson_opacity_m2_kg": kappa_es(0.7),
        "opacity_m2_kg": factor * kappa_es(0.7),
        "eddington_luminosity_W": l_edd(1.4 * M_SUN, factor * kappa_es(0.7)),
    }, " ".join(opts))

# ---- formats ------------------------------------------------------------------------------------
base = ["eddington", "--mass", "10", "Msun", "--luminosity", "1e38", "erg/s"]
quick = checks.run(base)  # the README quick start, unquoted words
checks.check(quick.returncode == 0, f"quick start: exit {quick.returncode}: {quick.stderr}")
for unit in ["Msun", "kg", "erg/s", "Lsun", " W", "cm2/g", "m2/kg", "Msun/yr", "g/s", "kg/s",
             " yr", "Myr"]:
    checks.check(unit in quick.stdout, f"table lacks the unit {unit!r}")
checks.check("assumptions and limits" in quick.stdout, "table lacks the assumptions")
checks.check("Spherical symmetry" in quick.stdout, "table lacks the spherical-symmetry limit")
checks.check("X = 1 (default)" in quick.stdout, "table does not say which opacity was used")

csv_run = checks.run(base + ["--format", "csv"])
checks.check(csv_run.returncode == 0, f"csv: exit {csv_run.returncode}")
rows = list(csv.reader(io.StringIO(csv_run.stdout)))
checks.check(len(rows) == 2, f"csv: {len(rows)} lines, expected one header and one row")
if len(rows) == 2:
    header, values = rows
    checks.check(len(header) == len(values), "csv: header and row differ in length")
    checks.check(len(set(header)) == len(header), "csv: repeated column names")
    for name in header:
        checks.check(re.fullmatch(r"[a-z0-9_]+(_[A-Za-z0-9_]+)?", name) is not None,
                     f"csv: {name!r} is not snake_case")
    row = dict(zip(header, values))
    le = l_edd(10 * M_SUN, kappa_es(1.0))
    # CSV prints 10 significant digits: rounding at most 5e-10.
    checks.near(float(row.get("eddington_luminosity_W", "nan")), le, 1e-9, "csv L_Edd")
    checks.near(float(row.get("eddington_ratio", "nan")), 1e31 / le, 1e-9, "csv ratio")

json_run = checks.run(base + ["--format", "json"])
try:
    import json
    obj = json.loads(json_run.stdout)
    checks.check(isinstance(obj, dict), "json: not one object")
    checks.check(obj.get("command") == "eddington", "json: command name")
    checks.check(len(obj.get("assumptions", [])) >= 5, "json: assumptions missing")
except ValueError as e:
    checks.check(False, f"json: not parseable: {e}")

with tempfile.TemporaryDirectory() as tmp:
    path = os.path.join(tmp, "edd.json")
    r = checks.run(base + ["--format", "json", "--output", path])
    checks.check(r.returncode == 0 and r.stdout == "" and os.path.exists(path),
                 "--output: file not written or stdout not empty")
    bad_path = os.path.join(tmp, "bad.json")
    checks.expect_exit(["eddington", "--mass", "-1 Msun", "--output", bad_path], 2, ["--mass"])
    checks.check(not os.path.exists(bad_path), "--output: a refused run left a file")

# ---- --help and --version -------------------------------------------------------------------------
help_run = checks.run(["eddington", "--help"])
checks.check(help_run.returncode == 0, "--help exit status")
for opt in ["--mass", "--hydrogen", "--opacity", "--gas-temperature", "--gas-density",
            "--luminosity", "--flux", "--distance", "--beaming", "--efficiency", "--spin",
            "--star-radius", "--eddington-ratio", "--final-mass", "--format", "--output"]:
    checks.check(opt in help_run.stdout, f"--help does not list {opt}")
for word in ["Msun", "erg/s", "cm2/g", "erg/s/cm2", "kpc", "Default 1", "Default 0.1", "K)",
             "g/cm3", "km"]:
    checks.check(word in help_run.stdout, f"--help does not mention {word!r}")
with open(os.path.join(args.source, "CMakeLists.txt")) as f:
    version = re.search(r"project\(holdfast VERSION ([0-9.]+)", f.read()).group(1)
ver = checks.run(["--version"])
checks.check(ver.returncode == 0 and f"holdfast {version}" in ver.stdout,
             f"--version: {ver.stdout!r}")

# ---- bad input: exit 2, the option named, nothing on stdout --------------------------------------
M = ["eddington", "--mass", "10 Msun"]
bad = [
    # wrong dimension
    (["eddington", "--mass", "10 km"], ["--mass", "length"]),
    (M + ["--luminosity", "1e38 erg"], ["--luminosity"]),
    (M + ["--opacity", "0.34 cm2"], ["--opacity"]),
    (M + ["--flux", "1 W", "--distance", "1 kpc"], ["--flux"]),
    (M + ["--flux", "1 W/m2", "--distance", "1 Msun"], ["--distance"]),
    (M + ["--star-radius", "10 kg"], ["--star-radius"]),
    (M + ["--gas-temperature", "1e8 km"], ["--gas-temperature"]),
    (M + ["--gas-temperature", "1e8 K", "--gas-density", "1 g"], ["--gas-density"]),
    (M + ["--final-mass", "1 yr"], ["--final-mass"]),
    (M + ["--spin", "0.5 kg"], ["--spin"]),
    (M + ["--hydrogen", "0.7 Msun"], ["--hydrogen"]),
    (M + ["--efficiency", "0.1 W"], ["--efficiency"]),
    (M + ["--eddington-ratio", "1 s"], ["--eddington-ratio"]),
    (M + ["--flux", "1 W/m2", "--distance", "1 pc", "--beaming", "0.5 m"], ["--beaming"]),
    (["eddington", "--mass", "10"], ["--mass", "unit"]),
    # negative
    (["eddington", "--mass", "-1 Msun"], ["--mass"]),
    (M + ["--luminosity", "-1e38 erg/s"], ["--luminosity"]),
    (M + ["--opacity", "-0.34 cm2/g"], ["--opacity"]),
    (M + ["--flux", "-1 W/m2", "--distance", "1 kpc"], ["--flux"]),
    (M + ["--flux", "1 W/m2", "--distance", "-1 kpc"], ["--distance"]),
    (M + ["--star-radius", "-10 km"], ["--star-radius"]),
    (M + ["--gas-temperature", "-1e8 K"], ["--gas-temperature"]),
    (M + ["--gas-temperature", "1e8 K", "--gas-density", "-1 g/cm3"], ["--gas-density"]),
    (M + ["--final-mass", "-1 Msun"], ["--final-mass"]),
    (M + ["--eddington-ratio", "-1"], ["--eddington-ratio"]),
    (M + ["--efficiency", "-0.1"], ["--efficiency"]),
    # zero
    (["eddington", "--mass", "0 Msun"], ["--mass"]),
    (M + ["--luminosity", "0 W"], ["--luminosity"]),
    (M + ["--opacity", "0 cm2/g"], ["--opacity"]),
    (M + ["--flux", "0 W/m2", "--distance", "1 kpc"], ["--flux"]),
    (M + ["--flux", "1 W/m2", "--distance", "0 kpc"], ["--distance"]),
    (M + ["--star-radius", "0 km"], ["--star-radius"]),
    (M + ["--gas-temperature", "0 K"], ["--gas-temperature"]),
    (M + ["--gas-temperature", "1e8 K", "--gas-density", "0 g/cm3"], ["--gas-density"]),
    (M + ["--final-mass", "0 Msun"], ["--final-mass"]),
    (M + ["--eddington-ratio", "0"], ["--eddington-ratio"]),
    (M + ["--efficiency", "0"], ["--efficiency"]),
    # NaN and infinity
    (["eddington", "--mass", "nan Msun"], ["--mass", "not finite"]),
    (M + ["--luminosity", "nan erg/s"], ["--luminosity"]),
    (M + ["--hydrogen", "nan"], ["--hydrogen"]),
    (M + ["--spin", "nan"], ["--spin"]),
    (M + ["--efficiency", "nan"], ["--efficiency"]),
    (M + ["--eddington-ratio", "inf"], ["--eddington-ratio"]),
    (M + ["--flux", "1 W/m2", "--distance", "1 pc", "--beaming", "nan"], ["--beaming"]),
    # ranges of the pure numbers
    (M + ["--hydrogen", "1.2"], ["--hydrogen", "[0, 1]"]),
    (M + ["--hydrogen", "-0.1"], ["--hydrogen", "[0, 1]"]),
    (M + ["--spin", "1.01"], ["--spin", "[-1, 1]"]),
    (M + ["--spin", "-1.5"], ["--spin", "[-1, 1]"]),
    (M + ["--efficiency", "1"], ["--efficiency", "(0, 1)"]),
    (M + ["--efficiency", "1.5"], ["--efficiency", "(0, 1)"]),
    (M + ["--flux", "1 W/m2", "--distance", "1 pc", "--beaming", "1.5"], ["--beaming", "(0, 1]"]),
    (M + ["--flux", "1 W/m2", "--distance", "1 pc", "--beaming", "0"], ["--beaming", "(0, 1]"]),
    # options that exclude or need each other
    (M + ["--luminosity", "1e38 erg/s", "--flux", "1 W/m2", "--distance", "1 pc"],
     ["--luminosity", "--flux"]),
    (M + ["--flux", "1 W/m2"], ["--flux", "--distance"]),
    (M + ["--distance", "1 kpc"], ["--distance", "--flux"]),
    (M + ["--efficiency", "0.1", "--spin", "0.5"], ["--efficiency", "--spin"]),
    (M + ["--efficiency", "0.1", "--star-radius", "100 km"], ["--efficiency", "--star-radius"]),
    (M + ["--spin", "0.5", "--star-radius", "100 km"], ["--spin", "--star-radius"]),
    (M + ["--efficiency", "0.1", "--spin", "0", "--star-radius", "1e3 km"], ["--spin"]),
    (M + ["--opacity", "0.34 cm2/g", "--hydrogen", "0.7"], ["--hydrogen", "--opacity"]),
    (M + ["--opacity", "0.34 cm2/g", "--gas-temperature", "1e8 K"],
     ["--gas-temperature", "--opacity"]),
    (M + ["--gas-density", "1 g/cm3"], ["--gas-density", "--gas-temperature"]),
    (M + ["--luminosity", "1e38 erg/s", "--beaming", "0.5"], ["--beaming", "--flux"]),
    # a surface inside the Schwarzschild radius (29.5 km for 10 Msun), and eta >= 1
    (M + ["--star-radius", "20 km"], ["--star-radius", "Schwarzschild"]),
    (M + ["--star-radius", "10 km"], ["--star-radius", "Schwarzschild"]),
    # growth cannot shrink
    (M + ["--final-mass", "5 Msun"], ["--final-mass", "below"]),
    # missing required option, unknown unit, bad format
    (["eddington", "--luminosity", "1e38 erg/s"], ["--mass"]),
    (["eddington", "--mass", "10 Msol"], ["--mass", "unknown unit"]),
    (M + ["--format", "xml"], ["--format"]),
]
for argv, words in bad:
    checks.expect_exit(argv, 2, words, what=" ".join(argv))

# Inputs beyond double precision are refused too, not printed as inf or NaN.
checks.expect_exit(M + ["--flux", "1e300 W/m2", "--distance", "1e10 Mpc"], 2,
                   ["--flux", "--distance", "range"])
checks.close()
