"""The command line as a whole: --version, --help, and refusals that happen before any
subcommand runs (exit status 2, message on stderr, nothing on stdout)."""
import re

import harness

args = harness.options()
checks = harness.Checks(args.binary)

proc = checks.run(["--version"])
checks.check(proc.returncode == 0, f"--version exit {proc.returncode}")
checks.check(re.match(r"holdfast \d+\.\d+\.\d+ \(git [0-9a-f]+|holdfast \d+\.\d+\.\d+ \(git unknown",
                      proc.stdout) is not None, f"--version prints version and git hash: {proc.stdout!r}")

proc = checks.run(["--help"])
checks.check(proc.returncode == 0, f"--help exit {proc.returncode}")
checks.check("Exit status" in proc.stdout, "--help documents the exit status")

checks.expect_exit([], 2, what="no subcommand")
checks.expect_exit(["no-such-subcommand"], 2, what="unknown subcommand")
checks.expect_exit(["--no-such-option"], 2, what="unknown option")
checks.close()
