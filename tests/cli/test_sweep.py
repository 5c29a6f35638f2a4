"""holdfast sweep end to end: rows against holdfast beta for the same inputs, the same bytes for
any --threads, the sidecar, a run really stopped by SIGTERM and by SIGINT and then resumed (the
file byte-identical to an uninterrupted run), the progress bar only on request or a terminal,
and every class of bad input (exit 2, the key and line named, no CSV written)."""
import json
import os
import signal
import subprocess
import tempfile
import time

import harness

args = harness.options()
checks = harness.Checks(args.binary)
tmp = tempfile.mkdtemp(prefix="holdfast_sweep_")


def path(name):
    return os.path.join(tmp, name)


def write(name, text):
    with open(path(name), "w") as f:
        f.write(text)
    return path(name)


def read(name):
    with open(name, "rb") as f:
        return f.read()


# ---- the same numbers as holdfast beta --------------------------------------------------------
spec = write("beta.toml", """
quantities = ["qpr_mean", "beta", "bound"]
radii = "0.01um..100um"
points = 25

[[star]]
label = "Veyra"
luminosity = "0.34 Lsun"
mass = "0.78 Msun"
teff = "4900 K"

[[material]]
name = "silicate"
porosity = [0, 0.5]

[[material]]
index = "1.9+0.7i"
density = "2 g/cm3"

[[orbit]]
eccentricity = 0.3
release = "apocentre"
""")
proc = checks.run(["sweep", spec, "-o", path("beta.csv"), "--threads", "2"])
checks.check(proc.returncode == 0, f"sweep beta.toml: exit {proc.returncode}: {proc.stderr}")
lines = read(path("beta.csv")).decode().splitlines()
header = lines[0].split(",")
checks.check(header == ["star", "luminosity_Lsun", "star_mass_Msun", "teff_K", "material",
                        "porosity", "grain_density_g_cm3", "parent_eccentricity",
                        "release_true_anomaly_deg", "beta_crit", "grain_radius_um", "qpr_mean",
                        "beta", "bound"], f"header {header}")
checks.check(len(lines) == 1 + 3 * 25, f"rows: {len(lines) - 1}, expected 75")
veyra = ["--luminosity", "0.34", "Lsun", "--mass", "0.78", "Msun", "--teff", "4900", "K",
         "--eccentricity", "0.3", "--release", "apocentre", "--radii", "0.01um..100um",
         "--points", "25", "--format", "csv"]
for k, material in enumerate([["--material", "silicate"],
                              ["--material", "silicate", "--porosity", "0.5"],
                              ["--index", "1.9+0.7i", "--density", "2 g/cm3"]]):
    beta = checks.run(["beta"] + veyra + material)
    checks.check(beta.returncode == 0, f"beta {material}: {beta.stderr}")
    expected = beta.stdout.splitlines()[1:]
    got = [",".join(l.split(",")[10:]) for l in lines[1 + 25 * k:1 + 25 * (k + 1)]]
    # Our own code path twice: the digits must be the same, not merely close.
    checks.check(got == expected, f"sweep rows for {material} differ from holdfast beta:\n"
                                  f"{got[:3]}\n{expected[:3]}")

# ---- the sidecar ---------------------------------------------------------------------------------
try:
    side = json.loads(read(path("beta.csv.json")))
except (OSError, ValueError) as e:
    side = {}
    checks.check(False, f"sidecar: {e}")
checks.check(side.get("status") == "complete", f"sidecar status {side.get('status')}")
checks.check(side.get("rows_written") == 75, f"sidecar rows_written {side.get('rows_written')}")
checks.check(side.get("spec_text") == open(spec).read(), "sidecar keeps the sweep file's text")
checks.check(side.get("csv_header") == lines[0], "sidecar keeps the CSV header")
version = checks.run(["--version"]).stdout.split()
checks.check(len(version) > 1 and side.get("holdfast_version") == version[1],
             f"sidecar version {side.get('holdfast_version')} vs {version}")
checks.check(str(side.get("started_utc", "")).endswith("Z"), "sidecar date in UTC")
# CODATA 2018: G = 6.67430e-11 m3 kg-1 s-2, c = 299792458 m/s exactly.
const = side.get("constants", {})
checks.check(const.get("gravitational_constant_m3_kg_s2") == 6.67430e-11, "sidecar G")
checks.check(const.get("speed_of_light_m_s") == 299792458.0, "sidecar c")

# ---- a wide sweep: the same bytes for any thread count ---------------------------------------
# Enough curves (8 porosities x 6 temperatures) that a run lasts about a second on one thread.
wide = write("wide.toml", """
quantities = ["qpr_mean", "beta", "bound", "blowout_radii"]
radii = "0.01um..1mm"
points = 120

[[star]]
label = "Veyra"
luminosity = ["0.1 Lsun", "0.34 Lsun"]
mass = "0.78 Msun"
teff = ["4500 K", "4700 K", "4900 K", "5100 K", "5300 K", "5500 K"]

[[material]]
name = "silicate"
porosity = [0, 0.1, 0.2, 0.3, 0.4, 0.5, 0.6, 0.7]
""")
reference = None
for threads in ("1", "2", "3"):
    out = path(f"wide{threads}.csv")
    proc = checks.run(["sweep", wide, "-o", out, "--threads", threads])
    checks.check(proc.returncode == 0, f"wide --threads {threads}: {proc.stderr}")
    # Not a terminal here: no progress bar, nothing on stderr.
    checks.check(proc.stderr == "", f"wide --threads {threads}: stderr {proc.stderr!r}")
    data = read(out)
    if reference is None:
        reference = data
        checks.check(data.count(b"\n") == 1 + 12 * 8 * 120, "wide: rows")
    else:
        checks.check(data == reference, f"--threads {threads} changes the CSV")

proc = checks.run(["sweep", spec, "-o", path("p.csv"), "--progress", "on"])
checks.check(proc.returncode == 0 and "rows/s" in proc.stderr and "100.0%" in proc.stderr,
             f"--progress on draws the bar: {proc.stderr!r}")


# ---- stopped by a signal, then resumed -----------------------------------------------------------
def stop_and_resume(sig, name):
    out = path(f"stopped_{name}.csv")
    p = subprocess.Popen([args.binary, "sweep", wide, "-o", out, "--threads", "1"],
                         stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)
    # Wait for the first rows, then stop it partway.
    deadline = time.time() + 120
    while time.time() < deadline and p.poll() is None:
        if os.path.exists(out) and os.path.getsize(out) > len(reference.splitlines()[0]) + 1:
            break
        time.sleep(0.01)
    p.send_signal(sig)
    stdout, stderr = p.communicate(timeout=300)
    checks.check(p.returncode == 128 + sig,
                 f"{name}: exit {p.returncode}, expected {128 + sig}: {stderr}")
    checks.check(name in stderr and "--resume" in stderr, f"{name}: message {stderr!r}")
    data = read(out)
    checks.check(0 < len(data) < len(reference), f"{name}: stopped partway ({len(data)} bytes)")
    checks.check(reference.startswith(data), f"{name}: the stopped file is a prefix of a full run")
    side = json.loads(read(out + ".json"))
    checks.check(side.get("status") == "stopped", f"{name}: sidecar status {side.get('status')}")
    checks.check(side.get("rows_written") == data.count(b"\n") - 1,
                 f"{name}: sidecar rows_written {side.get('rows_written')}")
    # A kill in the middle of a write leaves a partial row: --resume must cut it.
    with open(out, "ab") as f:
        f.write(b"Veyra,0.1,0.78,45")
    proc = checks.run(["sweep", wide, "-o", out, "--resume", "--threads", "2", "--format", "json"])
    checks.check(proc.returncode == 0, f"{name}: resume exit {proc.returncode}: {proc.stderr}")
    checks.check(read(out) == reference, f"{name}: resumed file differs from an uninterrupted run")
    summary = json.loads(proc.stdout or "{}").get("results", {})
    checks.check(summary.get("rows_resumed_from") == side.get("rows_written"),
                 f"{name}: resumed from {summary.get('rows_resumed_from')}")
    side = json.loads(read(out + ".json"))
    checks.check(side.get("status") == "complete" and len(side.get("resumed_utc", [])) == 1,
                 f"{name}: sidecar after resume {side.get('status')} {side.get('resumed_utc')}")
    # Resuming a complete run changes nothing.
    proc = checks.run(["sweep", wide, "-o", out, "--resume"])
    checks.check(proc.returncode == 0 and read(out) == reference, f"{name}: second resume")


stop_and_resume(signal.SIGTERM, "SIGTERM")
stop_and_resume(signal.SIGINT, "SIGINT")

# ---- the example sweep file runs as documented ------------------------------------------------
example = os.path.join(args.source, "notebooks-free-examples", "veyra-porosity-sweep.toml")
proc = checks.run(["sweep", example, "-o", path("veyra.csv"), "--threads", "2"])
checks.check(proc.returncode == 0, f"example sweep: exit {proc.returncode}: {proc.stderr}")
if proc.returncode == 0:
    rows = read(path("veyra.csv")).decode().splitlines()
    # 3 luminosities x 5 porosities x 1 orbit x 1 distance x 46 radii (veyra-porosity-sweep.toml).
    checks.check(len(rows) == 1 + 690, f"example sweep: {len(rows) - 1} rows, expected 690")

# ---- bad input: exit 2, the key and line named, no CSV -------------------------------------------
good_tail = '[[star]]\npreset = "sun"\n[[material]]\nname = "silicate"\n'
bad = [
    ('radii = "0.01um..1mm"\nradius_points = 5\n' + good_tail, ["bad.toml:2: radius_points", "unknown key"]),
    ('radii = "0.01 K..1 K"\n' + good_tail, ["bad.toml:1: radii", "length"]),
    ('radii = "0.01um..1mm"\n[[star]]\nluminosity = "1 Lsun"\nmass = "-1 Msun"\nteff = "5000 K"\n'
     '[[material]]\nname = "silicate"\n', ["bad.toml:4: star[1].mass"]),
    ('radii = "0.01um..1mm"\n' + good_tail + 'porosity = 1\n', ["bad.toml:6: material[1].porosity", "[0, 1)"]),
    ('radii = "0.01um..1mm"\n' + good_tail + 'nk = "missing.txt"\n', ["material[1]", "use only one"]),
    ('radii = "0.01um..1mm"\n[[star]]\npreset = "sun"\n[[material]]\nnk = "missing.txt"\n'
     'density = "3 g/cm3"\n', ["bad.toml:5: material[1].nk", "no such file"]),
    ('quantities = ["temperature"]\nradii = "0.01um..1mm"\n' + good_tail, ["distances"]),
    ('radii = "0.01um..1mm"\n[[star]\n', ["bad.toml:2", "TOML"]),
]
for text, words in bad:
    f = write("bad.toml", text)
    if os.path.exists(path("bad.csv")):
        os.remove(path("bad.csv"))
    checks.expect_exit(["sweep", f, "-o", path("bad.csv")], 2, words, what=f"bad spec {text!r}")
    checks.check(not os.path.exists(path("bad.csv")), f"bad spec {text!r}: a CSV was written")
checks.expect_exit(["sweep", spec], 2, ["--output"], what="no -o")
checks.expect_exit(["sweep", path("nowhere.toml"), "-o", path("x.csv")], 2, ["nowhere.toml"])
checks.expect_exit(["sweep", spec, "-o", path("x.csv"), "--threads", "5000"], 2, ["--threads"])
checks.expect_exit(["sweep", spec, "-o", path("x.csv"), "--progress", "maybe"], 2, ["--progress"])
checks.expect_exit(["sweep", spec, "-o", path("never.csv"), "--resume"], 2, ["--resume"])
# Resuming with another sweep file than the stopped run's.
changed = write("changed.toml", open(spec).read().replace("points = 25", "points = 26"))
checks.expect_exit(["sweep", changed, "-o", path("beta.csv"), "--resume"], 2,
                   ["--resume", "not the one"])

checks.close()
