"""Shared helpers for the Python checks: run the holdfast binary and assert on the result.

Each test_*.py file is one CTest test. It is given --binary, --dump, --source and
--shared-data by tests/CMakeLists.txt. Exit 0 passes, 77 skips, anything else fails.
"""
import argparse
import json
import math
import os
import subprocess
import sys
import tempfile

SKIP = 77


def options():
    p = argparse.ArgumentParser()
    p.add_argument("--binary", required=True)
    p.add_argument("--dump", required=True)
    p.add_argument("--source", required=True)
    p.add_argument("--shared-data", required=True)
    return p.parse_args()


class Checks:
    """Collects failures so one run reports all of them, then exits non-zero."""

    def __init__(self, binary):
        self.binary = binary
        self.failures = []
        self.count = 0

    def run(self, args, stdin=None, env=None):
        proc = subprocess.run([self.binary] + list(args), capture_output=True, text=True,
                              input=stdin, env=env, timeout=600)
        return proc

    def check(self, condition, what):
        self.count += 1
        if not condition:
            self.failures.append(what)
            print("FAIL:", what)

    def expect_exit(self, args, status, stderr_has=(), what=None):
        """Runs holdfast with args; checks the exit status and words in stderr."""
        proc = self.run(args)
        label = what or " ".join(args)
        self.check(proc.returncode == status,
                   f"{label}: exit {proc.returncode}, expected {status}; stderr: {proc.stderr.strip()}")
        for word in stderr_has:
            self.check(word in proc.stderr, f"{label}: stderr lacks {word!r}: {proc.stderr.strip()}")
        if status == 2:
            self.check("Traceback" not in proc.stderr and "terminate" not in proc.stderr,
                       f"{label}: crashed instead of refusing")
            self.check(proc.stdout.strip() == "", f"{label}: printed output although refused")
        return proc

    def json_of(self, args):
        proc = self.run(list(args) + ["--format", "json"])
        self.check(proc.returncode == 0, f"{' '.join(args)}: exit {proc.returncode}: {proc.stderr}")
        if proc.returncode != 0:
            return {}
        try:
            return json.loads(proc.stdout)
        except json.JSONDecodeError as e:
            self.check(False, f"{' '.join(args)}: output is not JSON: {e}")
            return {}

    def close(self, close_enough=lambda a, b, rel: math.isclose(a, b, rel_tol=rel)):
        print(f"{self.count - len(self.failures)} of {self.count} checks passed")
        sys.exit(1 if self.failures else 0)

    def near(self, value, expected, rel, what):
        ok = value is not None and math.isfinite(value) and math.isclose(value, expected, rel_tol=rel)
        self.check(ok, f"{what}: got {value}, expected {expected} (rel tol {rel})")


def astropy_or_skip():
    try:
        import astropy  # noqa: F401
        return True
    except ImportError:
        print("SKIP: astropy is not installed (Debian: apt-get install python3-astropy)")
        sys.exit(SKIP)
