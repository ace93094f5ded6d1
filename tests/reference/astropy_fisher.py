#!/usr/bin/env python3
"""lantern forecast against a Fisher matrix built independently with astropy.

For the demo design (data/lamplighter.ini, the fictional Lamplighter survey)
lantern simulate writes the objects (z, zhel, err) and the calibration modes;
here the Fisher matrix of a Gaussian likelihood with a parameter-free
covariance, F = J^T C^-1 J (Tegmark, Taylor & Heavens 1997, ApJ 480, 22,
eq. 15), is built with J = d mu / d theta from astropy.cosmology
(FlatLambdaCDM, Flatw0waCDM: comoving_transverse_distance, with
mu = 5 log10((1 + zhel) D_M(z) / 10 pc)) by central differences, and
C = diag(err^2) + sum_t a_t^2 u_t u_t^T from the files. The offset M,
marginalised with a flat prior, is projected out:
C^-1 -> C^-1 - C^-1 1 1^T C^-1 / (1^T C^-1 1). lantern's marginal errors and
its figure of merit 1/sqrt(det Cov(w0, wa)) (Albrecht et al. 2009,
arXiv:0901.0721) must agree within 0.1%.
Prints one "ok"/"not ok" line per check.
"""
import csv
import json
import os
import subprocess
import sys
import tempfile

import numpy as np
from astropy.cosmology import FlatLambdaCDM, Flatw0waCDM

ROOT = os.path.dirname(os.path.dirname(os.path.dirname(os.path.abspath(__file__))))
LANTERN = os.environ.get("LANTERN_BIN", os.path.join(ROOT, "bin", "lantern"))
SCENARIO = os.path.join(ROOT, "data", "lamplighter.ini")
failures = 0


def report(good, name, detail=""):
    global failures
    print(("ok - " if good else "not ok - ") + name)
    if not good:
        failures += 1
        print("  " + detail)


def mu(z, zhel, om, w0=None, wa=None):
    if w0 is None:
        c = FlatLambdaCDM(H0=70, Om0=om, Tcmb0=0)
    else:
        c = Flatw0waCDM(H0=70, Om0=om, w0=w0, wa=wa, Tcmb0=0)
    dm = c.comoving_transverse_distance(z).value
    return 5 * np.log10((1 + zhel) * dm) + 25


with tempfile.TemporaryDirectory() as tmp:
    sim = os.path.join(tmp, "sim")
    subprocess.run([LANTERN, "simulate", SCENARIO, "--out", sim], check=True,
                   stdout=subprocess.DEVNULL)
    rows = list(csv.DictReader(open(os.path.join(sim, "survey.csv"))))
    z = np.array([float(r["z"]) for r in rows])
    zhel = np.array([float(r["zhel"]) for r in rows])
    err = np.array([float(r["err"]) for r in rows])
    with open(os.path.join(sim, "modes.csv")) as f:
        lines = list(csv.reader(f))
    amp = np.array([float(x) for x in lines[1][1:]])
    U = np.array([[float(x) for x in r[1:]] for r in lines[2:]])
    C = np.diag(err ** 2) + (U * amp ** 2) @ U.T
    Ci = np.linalg.inv(C)
    one = np.ones(len(z))
    Ci1 = Ci @ one
    P = Ci - np.outer(Ci1, Ci1) / (one @ Ci1)

    for model, fid, steps in (("lcdm-flat", [0.31], [1e-3]),
                              ("w0wa-flat", [0.31, -1.0, 0.0], [1e-3, 1e-3, 1e-3])):
        J = []
        for k in range(len(fid)):
            up, dn = list(fid), list(fid)
            up[k] += steps[k]
            dn[k] -= steps[k]
            J.append((mu(z, zhel, *up) - mu(z, zhel, *dn)) / (2 * steps[k]))
        J = np.array(J).T
        F = J.T @ P @ J
        cov = np.linalg.inv(F)
        out = subprocess.run([LANTERN, "forecast", SCENARIO, "--model", model, "--format", "json"],
                             check=True, capture_output=True, text=True).stdout
        j = json.loads(out)
        names = ["omega_m", "w0", "wa"][: len(fid)]
        ours = np.array([j["params"][n]["sd"] for n in names])
        ref = np.sqrt(np.diag(cov))
        rel = np.abs(ours / ref - 1)
        report(rel.max() < 1e-3, "%s marginal errors equal astropy's Fisher errors within 0.1%% "
               "(worst %.2g)" % (model, rel.max()), "lantern %s astropy %s" % (ours, ref))
        if model == "w0wa-flat":
            fom = 1 / np.sqrt(np.linalg.det(cov[1:, 1:]))
            got = j["figure_of_merit"]["value"]
            report(abs(got / fom - 1) < 1e-3, "w0wa-flat figure of merit %.4g equals astropy's "
                   "%.4g within 0.1%%" % (got, fom), "")
            Fl = np.array(j["fisher"]["matrix"])
            rel = np.abs(Fl - F).max() / np.abs(F).max()
            report(rel < 1e-3, "the Fisher matrix itself equals astropy's within 0.1%% of its "
                   "largest element (%.2g)" % rel, "%s\n%s" % (Fl, F))
sys.exit(1 if failures else 0)
