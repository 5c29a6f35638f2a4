"""MPI build only (registered by tests/CMakeLists.txt when HOLDFAST_WITH_MPI is ON):
`mpirun -np 2 holdfast sweep` writes the same CSV bytes as one process, and resumes a
stopped file to the same bytes. Exit 0 passes."""
import argparse
import os
import shutil
import subprocess
import sys
import tempfile

p = argparse.ArgumentParser()
p.add_argument("--binary", required=True)
p.add_argument("--mpirun", required=True)
a = p.parse_args()
tmp = tempfile.mkdtemp(prefix="holdfast_mpi_")
failures = []

spec = os.path.join(tmp, "mpi.toml")
with open(spec, "w") as f:
    f.write("""
quantities = ["qpr_mean", "beta", "bound", "blowout_radii"]
radii = "0.01um..100um"
points = 40

[[star]]
preset = "sun"

[[star]]
label = "Veyra"
luminosity = ["0.1 Lsun", "0.34 Lsun"]
mass = "0.78 Msun"
teff = "4900 K"

[[material]]
name = "silicate"
porosity = [0, 0.3, 0.6]

[[material]]
index = "1.9+0.7i"
density = "2 g/cm3"

[[orbit]]
eccentricity = [0, 0.5]
""")
mpirun = [a.mpirun, "--allow-run-as-root", "--oversubscribe", "-np", "2"]


def run(cmd):
    proc = subprocess.run(cmd, capture_output=True, text=True, timeout=600)
    if proc.returncode != 0:
        failures.append(f"{' '.join(cmd)}: exit {proc.returncode}: {proc.stderr}")
    return proc


def read(path):
    with open(path, "rb") as f:
        return f.read()


one = os.path.join(tmp, "one.csv")
two = os.path.join(tmp, "two.csv")
run([a.binary, "sweep", spec, "-o", one, "--threads", "1"])
proc = run(mpirun + [a.binary, "sweep", spec, "-o", two, "--threads", "1", "--format", "json"])
if proc.stdout.count('"rows_total"') != 1:
    failures.append(f"the summary should be printed once (rank 0): {proc.stdout!r}")
if '"processes": 2' not in proc.stdout.replace(".0", ""):
    failures.append(f"the summary should name 2 processes: {proc.stdout!r}")
reference = read(one) if os.path.exists(one) else b""
if not reference or read(two) != reference:
    failures.append("two ranks wrote another CSV than one process")

# Resume on two ranks from a file cut inside a block, with a partial last row.
cut = os.path.join(tmp, "cut.csv")
lines = reference.split(b"\n")
with open(cut, "wb") as f:
    f.write(b"\n".join(lines[:101]) + b"\n" + lines[101][:7])
shutil.copy(one + ".json", cut + ".json")
run(mpirun + [a.binary, "sweep", spec, "-o", cut, "--resume", "--threads", "1"])
if read(cut) != reference:
    failures.append("two ranks resumed to another CSV than one process writes")

for f in failures:
    print("FAIL:", f)
print(f"{3 - len(failures)} of 3 MPI checks passed" if len(failures) <= 3 else "")
sys.exit(1 if failures else 0)
