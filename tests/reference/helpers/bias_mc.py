"""The bias of Omega_m estimates expected for a survey design, computed
independently of lantern, for the campaign tests to compare with.

Reads one simulated survey (survey.csv and modes.csv from lantern simulate:
its redshifts, errors and calibration modes, not its magnitudes), then draws
R noise vectors from the full covariance around flat LCDM (H0 = 70,
Omega_m = truth) computed with astropy.cosmology.FlatLambdaCDM, and for each
finds, with the offset profiled out analytically (chi2 projected orthogonal
to the constant vector in the metric C^-1; the same as marginalising it with
a flat prior, which adds a constant), the best fit (the minimum of chi2 on a
fine Omega_m grid, refined by a parabola) and the posterior mean under a
flat prior (a sum over the grid). Prints JSON: the mean bias of both and its
Monte Carlo error, the scatter of the best fits, the Fisher error, and the
second-order bias of a maximum-likelihood estimate with Gaussian errors of
fixed covariance, b = -<mu', mu''> / (2 F^2) (Cox & Snell 1968, J. R. Stat.
Soc. B 30, 248; the formula from memory, derived again in the comment below).

  /usr/bin/python3 bias_mc.py SURVEY_DIR TRUTH R SEED

(A helper, not a test: tests/e2e/test_coverage.sh calls it. tests/run.sh runs
only the scripts directly in tests/reference/.)

Second-order bias, one parameter: with e the noise and <a, b> = a^T P b (P
the projected inverse covariance), the score equation <mu'(t), y - mu(t)> = 0
expanded to second order in d = t - t0 gives
F d2 = d1 <mu'', e> - (3/2) d1^2 <mu', mu''>, d1 = <mu', e>/F, F = <mu', mu'>;
E[d1 <mu'', e>] = <mu', mu''>/F and E[d1^2] = 1/F, so E[d2] = -<mu', mu''>/(2F^2).
"""
import csv
import json
import sys

import numpy as np
from astropy.cosmology import FlatLambdaCDM

folder, truth, R, seed = sys.argv[1], float(sys.argv[2]), int(sys.argv[3]), int(sys.argv[4])
rows = list(csv.DictReader(open(folder + "/survey.csv")))
z = np.array([float(r["z"]) for r in rows])
zhel = np.array([float(r["zhel"]) for r in rows])
err = np.array([float(r["err"]) for r in rows])
m = list(csv.reader(open(folder + "/modes.csv")))
assert m[1][0] == "amplitude" and [r[0] for r in m[2:]] == [r["id"] for r in rows]
amp = np.array([float(x) for x in m[1][1:]])
U = np.array([[float(x) for x in r[1:]] for r in m[2:]])
C = np.diag(err**2) + (U * amp**2) @ U.T
W = np.linalg.inv(np.linalg.cholesky(C))  # whitening: W C W^T = 1


def mu(om):
    c = FlatLambdaCDM(H0=70, Om0=om)  # radiation off, as lantern's default
    return 5 * np.log10((1 + zhel) * c.comoving_transverse_distance(z).value) + 25


one = W @ np.ones(len(z))
one /= np.linalg.norm(one)


def proj(a):  # remove the offset's direction in whitened space (last axis)
    return a - np.multiply.outer(a @ one, one)


h = 1e-3
d1 = proj(W @ (mu(truth + h) - mu(truth - h))) / (2 * h)
d2 = proj(W @ (mu(truth + h) - 2 * mu(truth) + mu(truth - h))) / h**2
F = d1 @ d1
sigma = 1 / np.sqrt(F)

grid = truth + sigma * np.linspace(-7, 7, 701)
Mp = proj(np.array([W @ mu(g) for g in grid]))
y0 = proj(W @ mu(truth))
norm2 = (Mp**2).sum(1)
rng = np.random.default_rng(seed)
best, mean = [], []
dg = grid[1] - grid[0]
for start in range(0, R, 500):
    k = min(500, R - start)
    Y = y0 + proj(rng.standard_normal((k, len(z))))
    chi = norm2[None, :] - 2 * Y @ Mp.T  # chi2 up to a constant per draw
    i = np.clip(chi.argmin(1), 1, len(grid) - 2)
    a, b, c = (chi[np.arange(k), i + j] for j in (-1, 0, 1))
    best.append(grid[i] + dg * 0.5 * (a - c) / (a - 2 * b + c))
    w = np.exp(-(chi - chi.min(1, keepdims=True)) / 2)
    mean.append((w * grid).sum(1) / w.sum(1))
best, mean = np.concatenate(best), np.concatenate(mean)
print(json.dumps({
    "sigma_fisher": sigma,
    "cox_snell_bias": -(d1 @ d2) / (2 * F * F),
    "fit_bias": best.mean() - truth, "fit_bias_err": best.std(ddof=1) / np.sqrt(R),
    "fit_scatter": best.std(ddof=1),
    "mean_bias": mean.mean() - truth, "mean_bias_err": mean.std(ddof=1) / np.sqrt(R),
}))
