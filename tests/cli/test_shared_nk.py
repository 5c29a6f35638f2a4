"""Every optical-constants table in ../shared/data/nk (published tables from the
refractiveindex.info database, see that folder's README) goes through `holdfast materials
check` and a whole beta curve around the Sun without an error, a NaN or a non-positive beta.
Skipped when the folder is absent. Tables with k < 0 rows (measurement noise in the
corundum tables) need --clip-negative-k, and are refused without it. Tables that do not
cover the solar band run with --out-of-band limit-band.
Every table's extreme indices (smallest and largest n, largest k and |m|) also go through
`holdfast mie` from x = 1e-3 to 100: they must lie inside the Mie series' range
(n in [0.01, 1000], k in [0, 1000]). The beta curves run where the binary has the beta
subcommand (a build without it says so and checks the rest). The refractiveindex.info
.yml copies of the tables (nk/yaml) go through the same checks, except two whose rows are out
of wavelength order: those must be refused naming the line."""
import json
import math
import pathlib
import sys

import harness

args = harness.options()
nk_dir = pathlib.Path(args.shared_data) / "nk"
if not nk_dir.is_dir():
    print(f"SKIP: {nk_dir} not found (reference data lives beside the repository)")
    sys.exit(harness.SKIP)
checks = harness.Checks(args.binary)
tables = sorted(nk_dir.glob("*.txt")) + sorted((nk_dir / "yaml").glob("*.yml"))
checks.check(len(tables) >= 10, f"expected the shared nk tables, found {len(tables)}")

top_help = checks.run(["--help"]).stdout
has_beta = any(line.split()[:1] == ["beta"] for line in top_help.splitlines())
if not has_beta:
    print("NOTE: this build has no beta subcommand: beta curves not checked")


def extreme_indices(path):
    """(n, k) rows of a table with the smallest and largest n, the largest k and |m|."""
    rows = []
    for line in path.read_text().splitlines():
        parts = line.split()
        if not parts or line.lstrip().startswith("#"):
            continue
        try:
            _, n, k = (float(v) for v in parts[:3])
        except ValueError:
            continue
        rows.append((n, max(k, 0.0)))  # k < 0 rows are clipped, as --clip-negative-k does
    if not rows:
        return []
    picks = {min(rows), max(rows), max(rows, key=lambda r: r[1]),
             max(rows, key=lambda r: math.hypot(*r))}
    return sorted(picks)


for table in tables:
    name = table.name
    for n, k in extreme_indices(table):
        index = f"{n!r}+{k!r}i"
        mie = checks.json_of(["mie", "--index", index, "--size-parameter", "1e-3,1,100"])
        mie_rows = mie.get("rows", [])
        checks.check(len(mie_rows) == 3, f"{name}: mie at m = {index}: 3 rows, got {len(mie_rows)}")
        for row in mie_rows:
            for key in ("q_ext", "q_sca", "q_abs", "g", "q_pr"):
                v = row.get(key)
                checks.check(isinstance(v, (int, float)) and math.isfinite(v),
                             f"{name}: mie {key} = {v!r} at m = {index}")

    plain = checks.run(["materials", "check", str(table), "--format", "json"])
    needs_clip = plain.returncode == 2 and "negative" in plain.stderr
    extra = ["--clip-negative-k"] if needs_clip else []
    if needs_clip:
        checks.check("line" in plain.stderr, f"{name}: the k < 0 refusal names the line")
    if table.suffix == ".yml":
        probe = checks.run(["materials", "check", str(table)] + extra)
        if probe.returncode == 2 and "sorted" in probe.stderr:
            # Two of the database's YAML entries (Querry 1985 corundum-o and magnetite) hold
            # rows out of wavelength order, which the reader refuses; the .txt copies are sorted.
            checks.check("line" in probe.stderr and probe.stdout == "",
                         f"{name}: the unsorted-rows refusal names the line")
            print(f"NOTE: {name}: refused, rows out of wavelength order")
            continue
    summary = checks.json_of(["materials", "check", str(table)] + extra)
    checks.check(summary.get("results", {}).get("rows", 0) >= 2, f"{name}: check reports rows")
    if not has_beta:
        continue

    beta_args = ["beta", "--nk", str(table), "--density", "3 g/cm3", "--out-of-band",
                 "limit-band", "--radii", "0.01um..100um", "--points", "15"] + extra
    curve = checks.json_of(beta_args)
    rows = curve.get("rows", [])
    checks.check(len(rows) == 15, f"{name}: 15 radii, got {len(rows)}")
    for row in rows:
        for key in ("qpr_mean", "beta"):
            v = row.get(key)
            checks.check(isinstance(v, (int, float)) and math.isfinite(v) and v > 0,
                         f"{name}: {key} = {v!r} at {row.get('grain_radius_um')} um")
checks.close()
