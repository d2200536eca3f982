"""What the tests/ref_*.py checks share: the PASS/FAIL line, the failure count and the probe
programs they drive (env BUILD). See LICENSE."""
import os
import subprocess

BUILD = os.environ.get("BUILD", "build")
failures = 0


def probe_path(name):
    """The path of the probe program tests/NAME.c as make check builds it."""
    return os.path.join(BUILD, "tests", name)


def report(ok, desc):
    """Print one PASS or FAIL line and count a failure."""
    global failures
    print(("PASS: " if ok else "FAIL: ") + desc)
    if not ok:
        failures += 1


def probe_output(path, lines):
    """The probe's standard output, given the input lines one per line; raises if it fails."""
    return subprocess.run([path], input="".join(l + "\n" for l in lines), capture_output=True,
                          text=True, check=True).stdout
