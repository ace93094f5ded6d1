#!/usr/bin/env python3
"""The Pareto k that 'lantern sample' reports for importance-weighted draws
(convergence.pareto_k), recomputed with numpy from the weights in its
chains.csv, independently of lantern's C code.

Sources: the tail and the prior of Vehtari, Simpson, Gelman, Yao & Gabry,
"Pareto smoothed importance sampling" (arXiv:1507.02646): the M =
min(n/5, 3 sqrt(n)) largest weights, their excesses over the next largest,
a generalized Pareto shape fitted to them, shrunk towards 0.5 as if 10
more observations were 0.5. The fit: Zhang & Stephens 2009 (Technometrics
51, 316), the posterior mean of theta over the grid theta_j = 1/x_(n) +
(1 - sqrt(m/(j - 1/2)))/(3 x*), j = 1..m, m = 30 + floor(sqrt(n)), x* the
first quartile x_(floor(n/4 + 1/2)), each weighted by exp of the profile
log-likelihood n (log(theta/k) + k - 1), k(theta) = -mean log(1 - theta x);
the shape (in the paper's sign, heavy tails positive) is
mean log(1 - theta_hat x).

Checked: on three runs (flat LCDM, flat wCDM, flat w0-wa; binned Pantheon
2018 with its systematics) the reported k equals this one to 1e-9.
"""
import csv
import json
import math
import os
import subprocess
import sys
import tempfile

import numpy as np

ROOT = os.path.dirname(os.path.dirname(os.path.dirname(os.path.abspath(__file__))))
LANTERN = os.environ.get("LANTERN_BIN", os.path.join(ROOT, "bin", "lantern"))
SHARED = os.environ.get("LANTERN_SHARED", os.path.join(ROOT, "..", "shared"))
P = os.path.join(SHARED, "data", "pantheon2018")


def zhang_stephens_shape(x):
    """Shape of a generalized Pareto fitted to the excesses x (> 0)."""
    x = np.sort(x)
    n = len(x)
    m = 30 + int(math.floor(math.sqrt(n)))
    xstar = x[int(math.floor(n / 4 + 0.5)) - 1]
    j = np.arange(1, m + 1)
    theta = 1 / x[-1] + (1 - np.sqrt(m / (j - 0.5))) / (3 * xstar)
    k = np.array([-np.mean(np.log1p(-t * x)) for t in theta])
    prof = n * (np.log(theta / k) + k - 1)
    w = np.exp(prof - prof.max())
    w /= w.sum()
    that = np.sum(theta * w)
    return np.mean(np.log1p(-that * x))


def psis_k(weights):
    with np.errstate(divide="ignore"):  # a zero weight (outside the prior): ln 0 = -inf
        lw = np.log(np.asarray(weights, dtype=float))
    n = len(lw)
    M = int(math.floor(min(n / 5, 3 * math.sqrt(n))))
    s = np.sort(lw)
    top, cut = s[-1], s[-1 - M]
    x = np.exp(s[-M:] - top) - np.exp(cut - top)
    x = x[x > 0]
    xi = zhang_stephens_shape(x)
    mt = len(x)
    return (xi * mt + 10 * 0.5) / (mt + 10)


def main():
    if not os.path.exists(os.path.join(P, "lcparam_DS17f.txt")):
        print("# Pareto k: skipped (no %s)" % P)
        return 0
    failures = 0
    for model, seed in (("lcdm-flat", 3), ("wcdm-flat", 4), ("w0wa-flat", 5)):
        with tempfile.TemporaryDirectory() as d:
            out = os.path.join(d, "run")
            subprocess.run([LANTERN, "sample", "--data", os.path.join(P, "lcparam_DS17f.txt"),
                            "--columns", "z=zcmb,zhel=zhel,mag=mb,err=dmb",
                            "--cov", os.path.join(P, "sys_DS17f.txt"), "--model", model,
                            "--sampler", "importance", "--seed", str(seed), "--out", out,
                            "--quiet"], check=True, stdout=subprocess.DEVNULL,
                           stderr=subprocess.DEVNULL)
            summary = json.load(open(os.path.join(out, "summary.json")))
            got = summary["convergence"]["pareto_k"]
            w = [float(r["weight"]) for r in csv.DictReader(open(os.path.join(out, "chains.csv")))]
            ref = psis_k(w)
            ok = abs(got - ref) <= 1e-9
            failures += not ok
            print("%s - Pareto k of %s's weights (%d draws): lantern %.12f, numpy %.12f"
                  % ("ok" if ok else "not ok", model, len(w), got, ref))
    return 1 if failures else 0


if __name__ == "__main__":
    sys.exit(main())
