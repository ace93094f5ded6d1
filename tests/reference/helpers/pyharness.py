"""What the Python-package tests share (python_*.py in tests/reference/):
the repository's paths, the command line, the package from build/python,
the demo and Pantheon data as keyword settings, and one "ok"/"not ok" line
per check with a count of failures. (A helper, not a test: tests/run.sh runs
only the scripts directly in tests/reference/.)"""
import os
import subprocess
import sys

ROOT = os.path.dirname(os.path.dirname(os.path.dirname(os.path.dirname(
    os.path.abspath(__file__)))))
LANTERN = os.environ.get("LANTERN_BIN", os.path.join(ROOT, "bin", "lantern"))
PYPATH = os.path.join(ROOT, "build", "python")
sys.path.insert(0, PYPATH)

_PANTHEON = os.path.join(ROOT, "data", "pantheon2018")
#: The binned Pantheon 2018 release (data/pantheon2018/SOURCE.md), as settings.
PAN = dict(data=os.path.join(_PANTHEON, "lcparam_DS17f.txt"),
           columns="z=zcmb,zhel=zhel,mag=mb,err=dmb",
           cov=os.path.join(_PANTHEON, "sys_DS17f.txt"), no_warn="header-extra-names")
#: The fictional Lamplighter demo survey (data/README.md), as settings.
LAMP = dict(data=os.path.join(ROOT, "data", "lamplighter", "survey.csv"),
            columns="z=z,zhel=zhel,mag=mag,err=err,id=id",
            modes=os.path.join(ROOT, "data", "lamplighter", "modes.csv"))

failures = 0


def report(good, name, note=""):
    """One check's line; a failure is counted for finish()."""
    global failures
    print(f"{'ok' if good else 'not ok'} - {name}{' (' + note + ')' if note else ''}")
    sys.stdout.flush()
    failures += not good


def finish():
    sys.exit(1 if failures else 0)


def cli(*args):
    return subprocess.run([LANTERN, *args], capture_output=True, text=True)


def import_lantern():
    """The package from build/python, or a failed check and exit."""
    try:
        import lantern
        return lantern
    except ImportError as e:
        report(False, "the Python package imports from build/python (make python)", str(e))
        sys.exit(1)
