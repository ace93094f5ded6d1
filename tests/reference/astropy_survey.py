#!/usr/bin/env python3
"""lantern's survey files and numbers against outside clients.

- A FITS table written by lantern simulate is read by astropy.io.fits
  (Debian python3-astropy), not by our own reader, and must hold exactly the
  values of the CSV table written beside it (parsed by Python's float).
- A covariance.fits image (more than 2000 objects) read by astropy equals
  sum_t a_t^2 u_t u_t^T built by numpy from modes.csv.
- lantern inspect on the Pantheon 2018 binned data (Scolnic et al. 2018,
  ../shared/data/pantheon2018/) reports the smallest and largest eigenvalue
  and the condition number of diag(dmb^2) + sys that numpy.linalg.eigvalsh
  computes.
Prints one "ok"/"not ok" line per check.
"""
import csv
import json
import os
import subprocess
import sys
import tempfile

import numpy as np
from astropy.io import fits

ROOT = os.path.dirname(os.path.dirname(os.path.dirname(os.path.abspath(__file__))))
LANTERN = os.environ.get("LANTERN_BIN", os.path.join(ROOT, "bin", "lantern"))
SHARED = os.environ.get("LANTERN_SHARED", os.path.join(ROOT, "..", "shared"))
failures = 0


def report(ok, name, note=""):
    global failures
    print(f"{'ok' if ok else 'not ok'} - {name}{': ' + note if note else ''}")
    failures += not ok


def simulate(scenario_text, out):
    path = os.path.join(out, "scenario.ini")
    with open(path, "w") as f:
        f.write(scenario_text)
    subprocess.run([LANTERN, "simulate", path, "--out", os.path.join(out, "sim")],
                   check=True, capture_output=True)
    return os.path.join(out, "sim")


def check_table(sim):
    with open(os.path.join(sim, "survey.csv")) as f:
        rows = list(csv.DictReader(f))
    with fits.open(os.path.join(sim, "survey.fits")) as h:
        t = h[1].data
        hdr = h[1].header
        good = len(t) == len(rows)
        for col in ("z", "zhel", "mag", "err"):
            want = np.array([float(r[col]) for r in rows])
            good = good and np.array_equal(np.asarray(t[col], dtype=float), want)
        good = good and [s.strip() for s in t["id"]] == [r["id"] for r in rows]
        good = good and [s.strip() for s in t["tier"]] == [r["tier"] for r in rows]
        good = good and hdr["CREATOR"].startswith("lantern") and hdr["SEED"] == 4242
    report(good, "astropy.io.fits reads survey.fits with the CSV's values, bit for bit",
           f"{len(rows)} rows")


def check_cov_image(sim):
    with fits.open(os.path.join(sim, "covariance.fits")) as h:
        c = np.asarray(h[0].data, dtype=float)
    with open(os.path.join(sim, "modes.csv")) as f:
        lines = list(csv.reader(f))
    amp = np.array([float(v) for v in lines[1][1:]])
    u = np.array([[float(v) for v in row[1:]] for row in lines[2:]])
    want = (u * amp**2) @ u.T
    good = c.shape == want.shape and np.max(np.abs(c - want)) <= 1e-15
    report(good, "covariance.fits (read by astropy) equals the modes' sum a^2 u u^T",
           f"{c.shape[0]} x {c.shape[1]}")


def check_pantheon():
    p = os.path.join(SHARED, "data", "pantheon2018")
    out = subprocess.run(
        [LANTERN, "inspect", "--data", os.path.join(p, "lcparam_DS17f.txt"), "--columns",
         "z=zcmb,zhel=zhel,mag=mb,err=dmb", "--cov", os.path.join(p, "sys_DS17f.txt"),
         "--format", "json"], check=True, capture_output=True, text=True)
    got = json.loads(out.stdout)
    d = np.genfromtxt(os.path.join(p, "lcparam_DS17f.txt"), names=True, usecols=range(18))
    s = np.loadtxt(os.path.join(p, "sys_DS17f.txt"))
    n = int(s[0])
    c = s[1:].reshape(n, n) + np.diag(d["dmb"] ** 2)
    ev = np.linalg.eigvalsh(c)
    cov = got["covariance"]
    good = (got["n_data"] == 40 and cov["positive_definite"] is True
            and abs(cov["min_eigenvalue"] / ev[0] - 1) < 1e-10
            and abs(cov["max_eigenvalue"] / ev[-1] - 1) < 1e-10
            and abs(cov["condition"] / (ev[-1] / ev[0]) - 1) < 1e-10
            and got["z_min"] == d["zcmb"].min() and got["z_max"] == d["zcmb"].max())
    report(good, "Pantheon 2018 binned: inspect's eigenvalues and condition match numpy",
           f"condition {cov['condition']:.6g} (numpy {ev[-1] / ev[0]:.6g})")
    counts = np.histogram(d["zcmb"], bins=np.linspace(d["zcmb"].min(), d["zcmb"].max(), 11))[0]
    report(list(counts) == got["z_histogram"]["counts"],
           "the z histogram matches numpy.histogram", str(list(counts)))
    e = d["dmb"]
    st = got["err"]
    good = (st["median"] == np.median(e) and abs(st["mean"] / e.mean() - 1) < 1e-14
            and st["min"] == e.min() and st["max"] == e.max())
    report(good, "error statistics match numpy (median, mean, min, max)")


SCENARIO = """[survey]
seed = 4242
observable = mag
[cosmology]
model = lcdm-flat
omega_m = 0.3
[tier.low]
z_min = 0.02
z_max = 0.2
count = {n1}
error = 0.1
calibration = 0.02
[tier.high]
z_min = 0.2
z_max = 1.0
count = {n2}
error = 0.15
calibration = 0.03
"""


def main():
    with tempfile.TemporaryDirectory() as tmp:
        small = simulate(SCENARIO.format(n1=120, n2=200), os.path.join(tmp))
        check_table(small)
        os.makedirs(os.path.join(tmp, "big"))
        big = simulate(SCENARIO.format(n1=1000, n2=1100), os.path.join(tmp, "big"))
        check_cov_image(big)
    check_pantheon()
    return 1 if failures else 0


if __name__ == "__main__":
    sys.exit(main())
