"""holdfast beta --plot: the image is produced and valid (SVG parses as XML, PNG has its
signature), written only when the run succeeds, and refused clearly when gnuplot is missing."""
import os
import shutil
import tempfile
import xml.etree.ElementTree as ET

import harness

args = harness.options()
checks = harness.Checks(args.binary)
if shutil.which("gnuplot") is None:
    print("SKIP: gnuplot is not installed (Debian: apt-get install gnuplot-nox)")
    raise SystemExit(harness.SKIP)

tmp = tempfile.mkdtemp(prefix="holdfast-plot-")
base = ["beta", "--qpr", "1", "--radii", "0.05um..50um", "--points", "40"]

svg = os.path.join(tmp, "beta.svg")
proc = checks.run(base + ["--plot", svg])
checks.check(proc.returncode == 0, f"--plot svg: exit {proc.returncode}: {proc.stderr}")
checks.check(os.path.exists(svg), "--plot svg: file written")
if os.path.exists(svg):
    try:
        root = ET.parse(svg).getroot()
        checks.check(root.tag.endswith("svg"), f"SVG root element is <svg>, got {root.tag}")
    except ET.ParseError as e:
        checks.check(False, f"SVG does not parse as XML: {e}")

png = os.path.join(tmp, "beta.png")
proc = checks.run(base + ["--plot", png])
checks.check(proc.returncode == 0, f"--plot png: exit {proc.returncode}: {proc.stderr}")
if os.path.exists(png):
    with open(png, "rb") as f:
        # PNG signature, ISO/IEC 15948 (PNG specification) section 5.2.
        checks.check(f.read(8) == b"\x89PNG\r\n\x1a\n", "PNG signature")
else:
    checks.check(False, "--plot png: file written")

# A refused run draws nothing.
bad_plot = os.path.join(tmp, "refused.svg")
checks.expect_exit(base + ["--porosity", "2", "--plot", bad_plot], 2, stderr_has=("--porosity",))
checks.check(not os.path.exists(bad_plot), "refused run left a plot behind")

# gnuplot missing from PATH: exit 2, the option and the program named, no file.
no_gnuplot = os.path.join(tmp, "nognuplot.svg")
env = dict(os.environ, PATH=os.path.join(tmp, "empty-path"))
proc = checks.run(base + ["--plot", no_gnuplot], env=env)
checks.check(proc.returncode == 2, f"no gnuplot: exit {proc.returncode}, expected 2")
checks.check("--plot" in proc.stderr and "gnuplot" in proc.stderr,
             f"no gnuplot: message names --plot and gnuplot: {proc.stderr.strip()}")
checks.check(proc.stdout == "", "no gnuplot: nothing on stdout")
checks.check(not os.path.exists(no_gnuplot), "no gnuplot: no file")

leftovers = sorted(f for f in os.listdir(tmp) if f.startswith("."))
checks.check(leftovers == [], f"temporary files left behind: {leftovers}")
shutil.rmtree(tmp, ignore_errors=True)
checks.close()
