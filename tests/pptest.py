"""Shared helpers for the reference checks (tests/ref_*.py).

ctest sets PP_BIN (the pixpost binary), PP_PROBES (folder of the probe_*
programs), PP_TMP (a scratch folder for this check) and PP_SOURCE_DIR.
"""
import os
import shutil
import subprocess
import sys

BIN = os.environ.get("PP_BIN", "pixpost")
PROBES = os.environ.get("PP_PROBES", ".")
SOURCE = os.environ.get("PP_SOURCE_DIR", ".")
_failures = []


def tmpdir():
    """A fresh, empty scratch folder for this check."""
    d = os.environ.get("PP_TMP", "/tmp/pp_ref")
    shutil.rmtree(d, ignore_errors=True)
    os.makedirs(d)
    return d


def run(args, check=True, **kw):
    """Run the pixpost binary; returns CompletedProcess (text mode)."""
    p = subprocess.run([BIN] + [str(a) for a in args], capture_output=True, text=True, **kw)
    if check and p.returncode != 0:
        raise AssertionError("pixpost %s failed (%d): %s" % (" ".join(map(str, args)), p.returncode, p.stderr))
    return p


def probe(name, args, stdin=None):
    """Run tests/probe_<name> and return its stdout (text)."""
    exe = os.path.join(PROBES, "probe_" + name)
    p = subprocess.run([exe] + [str(a) for a in args], input=stdin, capture_output=True, text=True)
    if p.returncode != 0:
        raise AssertionError("probe_%s failed (%d): %s" % (name, p.returncode, p.stderr))
    return p.stdout


def check(cond, what):
    """Record one assertion; prints PASS/FAIL with the description."""
    print(("PASS " if cond else "FAIL ") + what)
    if not cond:
        _failures.append(what)


def done():
    """Exit non-zero if any check failed."""
    n = len(_failures)
    print("%d failed" % n)
    sys.exit(1 if n else 0)
