"""What the Python suites in tests/scripts share: where the build is, and
the one-line PASS/FAIL report that tests/run.sh counts.

    sys.path.insert(0, os.path.join(os.path.dirname(os.path.dirname(
        os.path.abspath(__file__))), "lib"))
    from vgcheck import ROOT, BUILD, build_path, report, failed

VG_BUILD (default "build") names the build directory, relative to the
repository or absolute.  Not a suite itself: tests/run.sh runs only
tests/scripts/.
"""
import os

ROOT = os.path.dirname(os.path.dirname(os.path.dirname(os.path.abspath(__file__))))
BUILD = os.environ.get("VG_BUILD", "build")

_failures = [0]


def build_path(*parts):
    """A path inside the build directory, e.g. build_path("vibrogate")."""
    base = BUILD if os.path.isabs(BUILD) else os.path.join(ROOT, BUILD)
    return os.path.join(base, *parts)


def report(ok, what, why=""):
    """Print 'PASS: what' or 'FAIL: what: why'; return ok."""
    if ok:
        print("PASS: " + what)
    else:
        _failures[0] += 1
        print("FAIL: %s: %s" % (what, why))
    return ok


def failed():
    """The number of FAIL lines printed so far."""
    return _failures[0]
