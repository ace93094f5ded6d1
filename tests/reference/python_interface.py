#!/usr/bin/env python3
"""lantern's Python package (make python; build/python) against the command
line it wraps: lantern.distance's keys are the columns of `lantern distance
--format csv`, in order; the redshifts keep their order (a scalar gives
arrays of one); and bad input raises ValueError with the message the command
line prints (after its "lantern: WHERE: " prefix: the Python side names the
argument, "model" or "distance", where the command line names its flag).
Prints one "ok"/"not ok" line per check."""
import os
import subprocess
import sys

import numpy as np

ROOT = os.path.dirname(os.path.dirname(os.path.dirname(os.path.abspath(__file__))))
LANTERN = os.environ.get("LANTERN_BIN", os.path.join(ROOT, "bin", "lantern"))
sys.path.insert(0, os.path.join(ROOT, "build", "python"))

failures = 0


def report(good, name, note=""):
    global failures
    print(f"{'ok' if good else 'not ok'} - {name}{' (' + note + ')' if note else ''}")
    failures += not good


def cli(*args):
    return subprocess.run([LANTERN, *args], capture_output=True, text=True)


def same_message(py, cli_stderr):
    """The Python message is the command line's, but for the "lantern: "
    prefix and the name of where (the argument, not the flag)."""
    c = cli_stderr.strip()
    c = c[len("lantern: "):] if c.startswith("lantern: ") else c
    return py == c or py.split(": ", 1)[-1] == c.split(": ", 1)[-1]


try:
    import lantern
except ImportError as e:
    report(False, "the Python package imports from build/python (make python)", str(e))
    sys.exit(1)

out = cli("distance", "--model", "wcdm", "--set", "h0=68,omega_m=0.3,omega_de=0.65,w0=-0.9",
          "--z", "0.5", "--format", "csv")
header = tuple(out.stdout.splitlines()[0].split(","))
d = lantern.distance("wcdm", [0.5], h0=68, omega_m=0.3, omega_de=0.65, w0=-0.9)
report(tuple(d) == header == lantern.DISTANCE_COLUMNS,
       "distance's keys are the command line's csv columns, in order", ",".join(d))
values = [float(v) for v in out.stdout.splitlines()[1].split(",")]
report(values == [float(d[k][0]) for k in header], "the same numbers as the command line")

z = [2.0, 0.1, 1.0, 0.1]
d = lantern.distance("lcdm-flat", z, omega_m=0.3)
report(list(d["z"]) == z and d["luminosity_mpc"][1] == d["luminosity_mpc"][3]
       and d["luminosity_mpc"][0] > d["luminosity_mpc"][2] > d["luminosity_mpc"][1],
       "redshifts keep their order, repeats allowed")
d1 = lantern.distance("lcdm-flat", 0.5, omega_m=0.3)
report(all(isinstance(v, np.ndarray) and v.shape == (1,) for v in d1.values()),
       "a scalar redshift gives arrays of one")
report(set(lantern.MODELS) == {"lcdm-flat", "lcdm", "wcdm-flat", "wcdm", "w0wa-flat", "w0wa"},
       "MODELS lists the six models", ",".join(lantern.MODELS))

# bad input: ValueError with the command line's message
cases = [
    ("an unknown model", lambda: lantern.distance("lcdm-flatt", [0.1]),
     ["distance", "--model", "lcdm-flatt", "--z", "0.1"]),
    ("an unknown parameter", lambda: lantern.distance("lcdm", [0.1], omega_x=0.3),
     ["distance", "--model", "lcdm", "--set", "omega_x=0.3", "--z", "0.1"]),
    ("a parameter out of its range", lambda: lantern.distance("lcdm-flat", [0.1], h0=-5),
     ["distance", "--model", "lcdm-flat", "--set", "h0=-5", "--z", "0.1"]),
    ("a universe with no distance at z", lambda: lantern.distance("lcdm", [3.0], omega_m=0.1,
                                                                  omega_de=1.5),
     ["distance", "--model", "lcdm", "--set", "omega_m=0.1,omega_de=1.5", "--z", "3"]),
]
for name, call, args in cases:
    want = cli(*args)
    try:
        call()
        report(False, f"{name} raises ValueError", "nothing raised")
    except ValueError as e:
        good = want.returncode == 2 and same_message(str(e), want.stderr)
        report(good, f"{name} raises ValueError with the command line's message", str(e))
try:
    lantern.distance("lcdm-flat", [0.1, -0.2], omega_m=0.3)
    report(False, "a negative redshift raises ValueError", "nothing raised")
except ValueError as e:
    report("z[1] = -0.2" in str(e), "a negative redshift raises ValueError naming it", str(e))
sys.exit(1 if failures else 0)
