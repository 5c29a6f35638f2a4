"""holdfast beta, blowout and temperature end to end: output names, analytic values with a
constant efficiency, and every class of bad input (exit 2, option named, nothing printed, no
output file)."""
import math
import os
import tempfile

import harness

args = harness.options()
checks = harness.Checks(args.binary)

# IAU 2015 B3 nominal solar values and the IAU 2012 au (the same as constants.hpp).
GM_SUN = 1.3271244e20
AU = 149597870700.0
R_SUN = 6.957e8
T_SUN = 5772.0

# ---- beta with a perfect absorber ---------------------------------------------------------
out = checks.json_of(["beta", "--qpr", "1", "--density", "1 g/cm3", "--radii", "0.5um..5um",
                      "--points", "11"])
rows = out.get("rows", [])
checks.check(len(rows) == 11, f"beta: 11 rows, got {len(rows)}")
checks.check(rows and set(rows[0]) == {"grain_radius_um", "qpr_mean", "beta", "bound"},
             f"beta: grid columns {rows[0].keys() if rows else None}")
res = out.get("results", {})
for key in ("beta_crit", "beta_max", "radius_at_beta_max_um", "blowout_radii_um"):
    checks.check(key in res, f"beta: result {key} present")
# Burns, Lamy & Soter (1979, Icarus 40, 1) eq. 19: beta = 5.7e-5 Q_pr / (rho s) cgs for the
# Sun. At s = 1 um = 1e-4 cm, rho = 1: 0.57. Tolerance 1%: they give two digits.
for row in rows:
    s_cm = row["grain_radius_um"] * 1e-4
    checks.near(row["beta"], 5.7e-5 / s_cm, 0.01, f"beta at {row['grain_radius_um']} um")
    checks.check(row["bound"] == (row["beta"] < 0.5), f"bound flag at {row['grain_radius_um']} um")
    checks.check(row["qpr_mean"] == 1.0, "constant --qpr is used as given")
# Analytic: circular parent, beta_crit = 1/2; blow-out where 5.7e-5 / s = 1/2 (1% as above).
checks.near(res.get("beta_crit"), 0.5, 1e-12, "beta_crit for a circular parent")
radii = res.get("blowout_radii_um", [])
checks.check(len(radii) == 1, f"one blow-out radius, got {radii}")
if radii:
    checks.near(radii[0], 5.7e-5 / 0.5 * 1e4, 0.01, "blow-out radius of a perfect absorber")
checks.check(res.get("peak_at_range_edge") is True, "constant Q_pr peaks at the smallest radius")

# CSV: one header line with the grid's machine names.
proc = checks.run(["beta", "--qpr", "1", "--radii", "1um..10um", "--points", "3",
                   "--format", "csv"])
lines = proc.stdout.splitlines()
checks.check(proc.returncode == 0 and lines and lines[0] == "grain_radius_um,qpr_mean,beta,bound",
             f"beta csv header: {lines[:1]}")
checks.check(len(lines) == 4, f"beta csv: header + 3 rows, got {len(lines)}")

# Eccentric parent released at apocentre: beta_crit = (1 + e) / 2 (analytic).
out = checks.json_of(["beta", "--qpr", "1", "--eccentricity", "0.4", "--release", "apocentre",
                      "--radii", "1um..10um", "--points", "3"])
checks.near(out.get("results", {}).get("beta_crit"), 0.7, 1e-12, "beta_crit at apocentre")
out = checks.json_of(["beta", "--qpr", "1", "--eccentricity", "0.4", "--release", "90",
                      "--radii", "1um..10um", "--points", "3"])
checks.near(out.get("results", {}).get("beta_crit"), (1 - 0.16) / 2, 1e-12,
            "beta_crit at f = 90 deg")

# ---- blowout: one grain's released orbit --------------------------------------------------
out = checks.json_of(["blowout", "--qpr", "1", "--density", "1 g/cm3", "--distance", "1 au",
                      "--grain-radius", "2 um"])
res = out.get("results", {})
b = res.get("beta")
checks.check(b is not None and 0 < b < 0.5, f"2 um perfect absorber is bound: beta {b}")
if b:
    # Analytic (circular parent): a' = a (1 - beta) / (1 - 2 beta), e' = beta / (1 - beta),
    # pericentre = release distance. Tolerance 1e-9: 10-digit JSON numbers.
    checks.near(res.get("semi_major_axis_au"), (1 - b) / (1 - 2 * b), 1e-9, "released a'")
    checks.near(res.get("eccentricity"), b / (1 - b), 1e-9, "released e'")
    checks.near(res.get("pericentre_au"), 1.0, 1e-9, "released pericentre")
    checks.near(res.get("apocentre_au"), (1 - b) / (1 - 2 * b) * (1 + b / (1 - b)), 1e-9,
                "released apocentre")
    # Burns et al. (1979) eq. 50: t_PR = 400 (r/au)^2 / beta yr; 1% for their rounding.
    checks.near(res.get("pr_drag_time_yr"), 400 / b, 0.01, "Poynting-Robertson time")
    checks.check("speed_at_infinity_km_s" not in res, "a bound grain has no speed at infinity")

out = checks.json_of(["blowout", "--qpr", "1", "--density", "1 g/cm3", "--distance", "1 au",
                      "--grain-radius", "0.5 um"])
res = out.get("results", {})
b = res.get("beta")
checks.check(res.get("bound") is False, "0.5 um perfect absorber is blown out")
if b:
    # Energy: v_inf^2 = 2 (G M / r)(beta - 1/2) for a circular parent (analytic).
    checks.near(res.get("speed_at_infinity_km_s"), math.sqrt(2 * GM_SUN / AU * (b - 0.5)) / 1e3,
                1e-9, "speed at infinity")
    checks.check("semi_major_axis_au" not in res, "an unbound grain has no semi-major axis")

# The table over radii, with empty cells where a value does not apply.
proc = checks.run(["blowout", "--qpr", "1", "--distance", "10 au", "--radii", "0.1um..10um",
                   "--points", "5", "--format", "csv"])
lines = proc.stdout.splitlines()
checks.check(proc.returncode == 0 and lines and lines[0] ==
             "grain_radius_um,qpr_mean,beta,bound,semi_major_axis_au,eccentricity,pericentre_au,"
             "apocentre_au,speed_at_infinity_km_s,pr_drag_time_yr", f"blowout csv header {lines[:1]}")
if len(lines) == 6:
    first = lines[1].split(",")  # 0.1 um: unbound, so a, e, q, Q and t_PR are empty
    checks.check(first[3] == "false" and first[4] == "" and first[8] != "",
                 f"unbound row has empty orbit cells: {lines[1]}")
    last = lines[5].split(",")
    checks.check(last[3] == "true" and last[4] != "" and last[8] == "",
                 f"bound row has an orbit and no speed at infinity: {lines[5]}")

# No crossing: a tiny constant Q_pr gives beta far below 1/2 everywhere searched.
out = checks.json_of(["blowout", "--qpr", "0.001", "--radii", "1um..1mm"])
res = out.get("results", {})
checks.check(res.get("blowout_radii_um") == [], f"no blow-out radius: {res.get('blowout_radii_um')}")
checks.check("no grain of this material is blown out" in res.get("verdict", ""),
             f"verdict says so plainly: {res.get('verdict')}")

# ---- temperature -------------------------------------------------------------------------------
out = checks.json_of(["temperature", "--qabs", "1", "--distances", "0.5au..50au", "--points", "5",
                      "--sublimation-temperature", "1500 K"])
rows = out.get("rows", [])
checks.check(len(rows) == 5, f"temperature: 5 rows, got {len(rows)}")
for row in rows:
    # Analytic: a blackbody at r has T = T_eff sqrt(R / 2r); 2e-5 covers the nominal L, R,
    # T_eff rounding (3e-5 in L) and the finite-disc term (R/r)^2 / 16.
    expect = T_SUN * math.sqrt(R_SUN / (2 * row["distance_au"] * AU))
    checks.near(row["temperature_K"], expect, 2e-5, f"blackbody T at {row['distance_au']} au")
    checks.near(row["blackbody_temperature_K"], row["temperature_K"], 1e-9, "T_bb column")
# Analytic, far field: r = (R / 2)(T_eff / T)^2; 3e-3 for the finite-disc correction (R/r)^2/8.
for row in rows:
    checks.near(row.get("sublimation_distance_au"), 0.5 * R_SUN * (T_SUN / 1500) ** 2 / AU, 3e-3,
                "blackbody sublimation distance at 1500 K")
out = checks.json_of(["temperature", "--qabs", "1", "--distances", "1 au"])
rows = out.get("rows", [])
# About 278 K at 1 au (from memory, the standard blackbody value for the Earth's distance).
checks.check(rows and abs(rows[0]["temperature_K"] - 278.0) < 0.5,
             f"278 K at 1 au: {rows[0] if rows else None}")

# ---- threads: the same output for any number --------------------------------------------------
for cmd in (["beta", "--material", "carbon"], ["blowout", "--material", "ice", "--radii", "0.05um..50um"]):
    outs = [checks.run(cmd + ["--format", "csv", "--threads", t]) for t in ("1", "2", "3")]
    for t, proc in zip(("1", "2", "3"), outs):
        checks.check(proc.returncode == 0, f"{cmd[0]} --threads {t}: {proc.stderr}")
        checks.check(proc.stdout == outs[0].stdout, f"{cmd[0]} --threads {t}: same output as 1")

# ---- bad input: exit 2, the option named, nothing on stdout, no output file ------------------
tmp = tempfile.mkdtemp(prefix="holdfast-grain-")
bad = [
    (["beta", "--luminosity", "1 Msun", "--mass", "1 Msun", "--teff", "5000 K"], "--luminosity"),
    (["beta", "--density", "3 g"], "--density"),
    (["blowout", "--distance", "3 s"], "--distance"),
    (["beta", "--eccentricity", "1"], "--eccentricity"),
    (["beta", "--eccentricity", "-0.1"], "--eccentricity"),
    (["beta", "--eccentricity", "abc"], "--eccentricity"),
    (["beta", "--release", "sideways"], "--release"),
    (["beta", "--release", "nan"], "--release"),
    (["beta", "--release", "400"], "--release"),
    (["beta", "--radii", "1mm..1um"], "--radii"),
    (["beta", "--radii", "1um..1mm", "--points", "1"], "--points"),
    (["blowout", "--points", "0"], "--points"),
    (["temperature", "--distances", "1au..10au", "--points", "1"], "--points"),
    (["beta", "--porosity", "1"], "--porosity"),
    (["beta", "--porosity", "-0.2"], "--porosity"),
    (["beta", "--qpr", "0"], "--qpr"),
    (["beta", "--qpr", "-1"], "--qpr"),
    (["temperature", "--qabs", "0"], "--qabs"),
    (["beta", "--luminosity", "1 Lsun", "--mass", "1 Msun", "--teff", "5772 K",
      "--star-radius", "2 Rsun"], "--star-radius"),
    (["beta", "--star", "sun", "--luminosity", "2 Lsun"], "--star"),
    (["beta", "--star", "vega"], "--star"),
    (["beta", "--nk", os.path.join(tmp, "missing.txt"), "--density", "3 g/cm3"], "--nk"),
    (["beta", "--spectrum", os.path.join(tmp, "missing.txt")], "--spectrum"),
    (["beta", "--material", "unobtainium"], "--material"),
    (["beta", "--index", "1.7-0.03i", "--density", "3 g/cm3"], "--index"),
    (["beta", "--index", "1.7+0.03i"], "--density"),
    (["beta", "--core-fraction", "0.5"], "--core-fraction"),
    (["beta", "--mantle-index", "1.3", "--core-fraction", "1.5"], "--core-fraction"),
    (["beta", "--mixing-rule", "average"], "--mixing-rule"),
    (["beta", "--out-of-band", "ignore"], "--out-of-band"),
    (["beta", "--spectral-tolerance", "0.5"], "--spectral-tolerance"),
    (["beta", "--qpr", "1", "--plot", os.path.join(tmp, "beta.jpg")], "--plot"),
    (["blowout", "--grain-radius", "2"], "--grain-radius"),
    (["temperature", "--distances", "0.001 au"], "--distances"),
    (["temperature", "--sublimation-temperature", "1500"], "--sublimation-temperature"),
    (["temperature", "--grain-radius", "-1 um"], "--grain-radius"),
    (["beta", "--threads", "-1"], "--threads"),
    (["beta", "--threads", "1.5"], "--threads"),
    (["blowout", "--threads", "5000"], "--threads"),
    (["blowout", "--threads", "two"], "--threads"),
]
for argv, option in bad:
    target = os.path.join(tmp, "out.json")
    proc = checks.expect_exit(argv + ["--output", target], 2, stderr_has=(option,),
                              what=" ".join(argv))
    checks.check(not os.path.exists(target), f"{' '.join(argv)}: wrote {target} although refused")
    checks.check("holdfast: error:" in proc.stderr, f"{' '.join(argv)}: message on stderr")
leftovers = [f for f in os.listdir(tmp)]
checks.check(leftovers == [], f"refused runs left files behind: {leftovers}")
checks.close()
