"""Installing holdfast: `cmake --install` of the build tree under test into a fresh prefix, then
- the prefix holds the command, every public header, the tables and a CMake package whose files
  name no path of the build or source tree;
- the prefix still works after it is moved (nothing in it depends on where it was installed);
- a small outside project (tests/install/consumer) finds the package with
  find_package(holdfast CONFIG REQUIRED), links holdfast::holdfast_core, and its program
  checks an Eddington luminosity, a Mie efficiency and a shipped material (each expected value
  is sourced in tests/install/consumer/main.cpp);
- the installed command, run from another working directory with HOLDFAST_TABLES unset, reads
  its materials from PREFIX/share/holdfast/tables and gives the same beta curve as the build
  tree's command; HOLDFAST_TABLES still takes precedence over the installed folder.
Needs no network: the consumer uses the same compiler and system packages as the build."""
import csv
import glob
import io
import json
import os
import shutil
import subprocess
import sys
import tempfile

import harness

args = harness.options()
binary = os.path.abspath(args.binary)  # the runs below change the working directory
checks = harness.Checks(binary)


def build_dir_of(binary):
    """The build tree holding the binary under test: the nearest folder up with a CMakeCache."""
    folder = os.path.dirname(os.path.abspath(binary))
    while True:
        if os.path.isfile(os.path.join(folder, "CMakeCache.txt")):
            return folder
        parent = os.path.dirname(folder)
        if parent == folder:
            return None
        folder = parent


def cache_value(build, name):
    with open(os.path.join(build, "CMakeCache.txt")) as f:
        for line in f:
            if line.startswith(name + ":"):
                return line.split("=", 1)[1].strip()
    return ""


build = build_dir_of(binary)
if build is None:
    print(f"FAIL: no CMakeCache.txt above {binary}: cannot tell which build tree to install")
    sys.exit(1)
source = os.path.abspath(args.source)
cmake = cache_value(build, "CMAKE_COMMAND") or "cmake"
build_type = cache_value(build, "CMAKE_BUILD_TYPE") or "Release"
compiler = cache_value(build, "CMAKE_CXX_COMPILER")
generator = cache_value(build, "CMAKE_GENERATOR")

# Runs everything without HOLDFAST_TABLES, so the installed folder must be found by itself
# (and without DESTDIR, which would divert the install).
clean_env = {k: v for k, v in os.environ.items() if k not in ("HOLDFAST_TABLES", "DESTDIR")}
tmp = tempfile.mkdtemp(prefix="holdfast_test_install_")


def run(cmd, cwd=tmp, env=None, what=None):
    proc = subprocess.run(cmd, cwd=cwd, env=env or clean_env, capture_output=True, text=True,
                          timeout=600)
    checks.check(proc.returncode == 0, f"{what or ' '.join(cmd)}: exit {proc.returncode}\n"
                                       f"{proc.stdout[-3000:]}\n{proc.stderr[-3000:]}")
    return proc


def finish():
    if not checks.failures:
        shutil.rmtree(tmp, ignore_errors=True)
    else:
        print(f"(kept {tmp} for inspection)")
    checks.close()


# ---- install, then move the prefix ------------------------------------------------------------
first = os.path.join(tmp, "first-prefix")
install = run([cmake, "--install", build, "--prefix", first], what="cmake --install")
if install.returncode != 0:
    finish()
prefix = os.path.join(tmp, "moved", "prefix")
os.makedirs(os.path.dirname(prefix))
os.rename(first, prefix)

installed = os.path.join(prefix, "bin", "holdfast")
tables = os.path.join(prefix, "share", "holdfast", "tables")
checks.check(os.access(installed, os.X_OK), f"{installed} is not an executable")
headers = sorted(os.path.basename(p)
                 for p in glob.glob(os.path.join(source, "include", "holdfast", "*.hpp")))
for h in headers + ["version.hpp"]:
    checks.check(os.path.isfile(os.path.join(prefix, "include", "holdfast", h)),
                 f"header {h} not installed")
source_materials = sorted(os.listdir(os.path.join(source, "tables", "materials")))
installed_materials = sorted(os.listdir(os.path.join(tables, "materials"))) if os.path.isdir(
    os.path.join(tables, "materials")) else []
checks.check(installed_materials == source_materials,
             f"installed tables/materials {installed_materials}, source has {source_materials}")
configs = glob.glob(os.path.join(prefix, "*", "cmake", "holdfast", "holdfastConfig.cmake"))
checks.check(len(configs) == 1, f"holdfastConfig.cmake under PREFIX/*/cmake/holdfast: {configs}")
package_dir = os.path.dirname(configs[0]) if configs else ""
for name in ["holdfastConfigVersion.cmake", "holdfastTargets.cmake"]:
    checks.check(os.path.isfile(os.path.join(package_dir, name)), f"{name} not installed")
checks.check(len(glob.glob(os.path.join(prefix, "*", "libholdfast_core.a"))) == 1,
             "libholdfast_core.a not installed")
# No build or source path may reach a consumer: not in the package files, not in the headers.
for path in glob.glob(os.path.join(package_dir, "*.cmake")) + glob.glob(
        os.path.join(prefix, "include", "holdfast", "*.hpp")):
    with open(path) as f:
        text = f.read()
    for tree in (build, source, first):
        checks.check(tree not in text, f"{path} names {tree}")

# ---- a project of its own using the package ---------------------------------------------------
consumer_build = os.path.join(tmp, "consumer-build")
configure = [cmake, "-S", os.path.join(source, "tests", "install", "consumer"),
             "-B", consumer_build,
             f"-DCMAKE_PREFIX_PATH={prefix}", f"-DCMAKE_BUILD_TYPE={build_type}"]
if compiler:
    configure.append(f"-DCMAKE_CXX_COMPILER={compiler}")
if generator:
    configure += ["-G", generator]
if run(configure, what="configure the consumer").returncode == 0:
    checks.check(cache_value(consumer_build, "holdfast_DIR") == package_dir,
                 f"consumer found holdfast at {cache_value(consumer_build, 'holdfast_DIR')}, "
                 f"not {package_dir}")
    if run([cmake, "--build", consumer_build], what="build the consumer").returncode == 0:
        proc = run([os.path.join(consumer_build, "holdfast_consumer")], what="run the consumer")
        print(proc.stdout)
        checks.check("FAIL" not in proc.stdout, f"consumer checks: {proc.stdout}")
        checks.check(os.path.join(tables, "materials", "silicate.toml") in proc.stdout,
                     f"consumer read silicate elsewhere: {proc.stdout}")

# ---- the installed command, from another working directory -----------------------------------
elsewhere = os.path.join(tmp, "elsewhere")
os.makedirs(elsewhere)


def installed_json(cmd, env=None):
    proc = run([installed] + cmd + ["--format", "json"], cwd=elsewhere, env=env)
    try:
        return json.loads(proc.stdout) if proc.returncode == 0 else {}
    except json.JSONDecodeError as e:
        checks.check(False, f"{' '.join(cmd)}: not JSON: {e}")
        return {}


listing = installed_json(["materials", "list"])
proc = run([installed, "materials", "list", "--format", "csv"], cwd=elsewhere)
names = [r["name"] for r in csv.DictReader(io.StringIO(proc.stdout))]
checks.check(names == [m[:-5] for m in source_materials if m.endswith(".toml")],
             f"installed materials list: {names}")
checks.check(any(os.path.join(tables, "materials") in a for a in listing.get("assumptions", [])),
             f"materials list does not say it read {tables}: {listing.get('assumptions')}")
show = installed_json(["materials", "show", "silicate"])
shown_file = show.get("results", {}).get("file")
checks.check(shown_file == os.path.join(tables, "materials", "silicate.toml"),
             f"materials show silicate read from {shown_file}")

# The same beta curve as the build tree's command: same code, same tables.
beta_args = ["beta", "--radii", "0.05um..5um", "--points", "7", "--format", "csv"]
mine = run([installed] + beta_args, cwd=elsewhere, what="installed holdfast beta")
reference = run([binary] + beta_args, what="build-tree holdfast beta")
checks.check(mine.stdout == reference.stdout and len(mine.stdout.splitlines()) == 8,
             f"installed beta differs from the build tree's:\n{mine.stdout}\n{reference.stdout}")
version = run([installed, "--version"], cwd=elsewhere)
checks.check(version.stdout == run([binary, "--version"]).stdout,
             f"installed --version: {version.stdout}")

# HOLDFAST_TABLES comes first, before the installed folder.
custom = os.path.join(tmp, "custom-tables")
os.makedirs(os.path.join(custom, "materials"))
with open(os.path.join(custom, "materials", "glass.toml"), "w") as f:
    f.write('name = "glass"\ndensity_g_cm3 = 2.2\nn = 1.5\nk = 0\n')
proc = run([installed, "materials", "list", "--format", "csv"], cwd=elsewhere,
           env=dict(clean_env, HOLDFAST_TABLES=custom))
names = [r["name"] for r in csv.DictReader(io.StringIO(proc.stdout))]
checks.check(names == ["glass"], f"with HOLDFAST_TABLES set, materials list gave {names}")

finish()
