"""holdfast materials list | show | check: outputs in table, CSV and JSON, and every class of
bad input refused with exit 2 and a message naming the file and line."""
import csv
import io
import os
import tempfile

import harness

args = harness.options()
checks = harness.Checks(args.binary)

# ---- list ----------------------------------------------------------------------------------
proc = checks.run(["materials", "list", "--format", "csv"])
checks.check(proc.returncode == 0, f"materials list: exit {proc.returncode}: {proc.stderr}")
rows = list(csv.DictReader(io.StringIO(proc.stdout)))
names = [r["name"] for r in rows]
checks.check(names == ["carbon", "ice", "iron", "silicate"], f"shipped materials: {names}")
for r in rows:
    checks.check(set(r) == {"name", "density_g_cm3", "n", "k", "source"}, f"list columns: {list(r)}")
    checks.check(float(r["density_g_cm3"]) > 0 and float(r["n"]) > 1 and float(r["k"]) >= 0,
                 f"list row {r}")
# Densities as the shipped files give them (from memory / common practice; see tables/).
dens = {r["name"]: float(r["density_g_cm3"]) for r in rows}
checks.check(dens.get("silicate") == 3.3 and dens.get("iron") == 7.87, f"densities {dens}")

table = checks.run(["materials", "list"])
checks.check(table.returncode == 0 and "silicate" in table.stdout and "constant index" in table.stdout,
             f"list table: {table.stdout}")

# ---- show ----------------------------------------------------------------------------------
j = checks.json_of(["materials", "show", "silicate"])
res = j.get("results", {})
checks.check(res.get("n") == 1.7 and res.get("k") == 0.03, f"silicate index: {res}")
# 1e-12: g/cm3 -> kg/m3 -> g/cm3 round trip, rounding only.
checks.near(res.get("density_g_cm3"), 3.3, 1e-12, "silicate density g/cm3")
checks.near(res.get("density_kg_m3"), 3300.0, 1e-12, "silicate density kg/m3")
checks.check("from memory" in res.get("source", ""), f"provenance: {res.get('source')}")
checks.check(any("constant index" in a for a in j.get("assumptions", [])), f"assumptions: {j}")
checks.expect_exit(["materials", "show", "unobtainium"], 2,
                   stderr_has=["unknown material 'unobtainium'", "silicate", "iron"])
checks.expect_exit(["materials", "show"], 2, stderr_has=["NAME"])
checks.expect_exit(["materials"], 2)

# ---- check ---------------------------------------------------------------------------------
tmp = tempfile.mkdtemp(prefix="holdfast_test_materials_")


def write(name, text):
    path = os.path.join(tmp, name)
    with open(path, "w") as f:
        f.write(text)
    return path


good = write("good.txt", "# wavelength_um n k\n0.1 1.8 0.1\n\n0.5 1.7 0.03\n1.0 1.65 0\n"
                         "300 3.0 0.5 # far-IR\n")
j = checks.json_of(["materials", "check", good])
res = j.get("results", {})
expect = {"rows": 4, "wavelength_min_um": 0.1, "wavelength_max_um": 300, "n_min": 1.65,
          "n_max": 3.0, "k_min": 0, "k_max": 0.5, "zero_k_rows": 1}
for key, value in expect.items():
    checks.check(res.get(key) == value, f"check {key}: {res.get(key)}, expected {value}")
checks.check(j.get("parameters", {}).get("source") == good, f"check source: {j.get('parameters')}")
# Sparse rows (1 to 300 um) and the solar band (0.104-116 um needed; 0.1-300 um given: covered).
warnings = " ".join(j.get("warnings", []))
checks.check("sparse" in warnings and "k = 0" in warnings, f"check warnings: {warnings}")
checks.check("Sun-like" not in warnings, f"check says a covering table does not cover: {warnings}")

narrow = write("narrow.txt", "0.3 1.7 0.03\n0.5 1.7 0.03\n0.8 1.7 0.03\n1.2 1.7 0.03\n")
j = checks.json_of(["materials", "check", narrow])
checks.check("Sun-like" in " ".join(j.get("warnings", [])), f"narrow table not flagged: {j}")

csv_out = checks.run(["materials", "check", good, "--format", "csv"])
header = csv_out.stdout.splitlines()[0] if csv_out.stdout else ""
for key in ("source", "rows", "wavelength_min_um", "wavelength_max_um", "n_min", "k_max"):
    checks.check(key in header.split(","), f"check CSV header lacks {key}: {header}")

bad_files = {
    "unsorted.txt": ("0.1 1.8 0.1\n0.5 1.7 0.03\n0.3 1.7 0.03\n", ["line 3", "sorted"]),
    "duplicate.txt": ("# c\n0.1 1.8 0.1\n0.5 1.7 0.03\n0.5 1.7 0.03\n", ["line 4", "duplicate"]),
    "negative_k.txt": ("0.1 1.8 0.1\n0.5 1.7 -0.03\n", ["line 2", "negative", "--clip-negative-k"]),
    "zero_n.txt": ("0.1 1.8 0.1\n0.5 0 0.03\n", ["line 2", "n = 0"]),
    "one_row.txt": ("# just one\n0.5 1.7 0.03\n", ["at least 2"]),
    "garbage.txt": ("0.1 1.8 0.1\nthis is not a table\n", ["line 2", "'this'"]),
    "nan.txt": ("0.1 1.8 0.1\n0.5 nan 0.03\n", ["line 2", "not finite"]),
    "two_columns.txt": ("0.1 1.8 0.1\n0.5 1.7\n", ["line 2", "expected 3"]),
    "formula.yml": ("DATA:\n  - type: formula 2\n    coefficients: 0 0.69 0.068\n",
                    ["line 2", "formula 2", "tabulated"]),
}
for name, (text, words) in bad_files.items():
    path = write(name, text)
    checks.expect_exit(["materials", "check", path], 2, stderr_has=[name] + words,
                       what=f"materials check {name}")
checks.expect_exit(["materials", "check", os.path.join(tmp, "missing.txt")], 2,
                   stderr_has=["cannot open"])

# Clipping on request: accepted, and the clipping is reported.
clip = write("clip.txt", "0.1 1.8 0.1\n0.5 1.7 -0.03\n")
proc = checks.run(["materials", "check", clip, "--clip-negative-k", "--format", "json"])
checks.check(proc.returncode == 0 and "clipped" in proc.stderr,
             f"--clip-negative-k: exit {proc.returncode}, stderr {proc.stderr}")

# A refractiveindex.info entry from the reference data, when present.
yml = os.path.join(args.shared_data, "nk", "yaml", "fe-iron-ordal-1988.yml")
if os.path.exists(yml):
    j = checks.json_of(["materials", "check", yml])
    res = j.get("results", {})
    # The data README: Ordal (1988) iron, 52 rows, 0.667-286 um.
    checks.check(res.get("rows") == 52, f"Ordal iron rows: {res.get('rows')}")
    checks.near(res.get("wavelength_min_um"), 0.667, 1e-3, "Ordal iron shortest wavelength")
    checks.check("tabulated nk" in res.get("format", ""), f"format: {res.get('format')}")
else:
    print(f"note: {yml} absent; refractiveindex.info check skipped")

for name in os.listdir(tmp):
    os.remove(os.path.join(tmp, name))
os.rmdir(tmp)
checks.close()
