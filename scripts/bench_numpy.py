#!/usr/bin/env python3
"""The exact dense likelihood written the way a careful user would in numpy
and scipy: the covariance factorised once (scipy.linalg.cho_factor), per call
the comoving distance by cumulative trapezoids on a fine grid (scipy's
cumulative_trapezoid) interpolated to the objects, the offset marginalised
analytically (A - B^2/C), one cho_solve. The side-by-side baseline for
make bench; never part of lantern.

usage: bench_numpy.py DATA.csv|txt ZCOL ZHELCOL MAGCOL ERRCOL COV MODEL EVALS
prints: evals_per_s setup_s
"""
import sys
import time

import numpy as np
from scipy.integrate import cumulative_trapezoid
from scipy.linalg import cho_factor, cho_solve


def read_table(path, cols):
    with open(path) as f:
        head = f.readline().lstrip("#").strip()
    sep = "," if "," in head else None
    names = head.split(sep)
    data = np.genfromtxt(path, delimiter=sep, skip_header=1, usecols=[names.index(c) for c in cols],
                         invalid_raise=False)
    return [data[:, i] for i in range(len(cols))]


def read_cov(path, n):
    if path.endswith(".fits"):
        from astropy.io import fits
        return np.asarray(fits.getdata(path), dtype=float)
    v = np.loadtxt(path).ravel() if not path.endswith(".npy") else np.load(path)
    return v[1:].reshape(n, n)


def main():
    data, zc, zh, mc, ec, covp, model, evals = sys.argv[1:9]
    z, zhel, mag, err = read_table(data, [zc, zh, mc, ec])
    n = len(z)
    t0 = time.perf_counter()
    cov = np.diag(err ** 2) + (read_cov(covp, n) if covp != "none" else 0.0)
    cf = cho_factor(cov)
    ones_s = cho_solve(cf, np.ones(n))
    c_tot = ones_s.sum()
    grid = np.linspace(0, z.max() * 1.001, 2000)
    setup = time.perf_counter() - t0

    def chi2(om, w0=-1.0, wa=0.0):
        y = 1 + grid
        de = (1 - om) * y ** (3 * (1 + w0 + wa)) * np.exp(-3 * wa * grid / y)
        e = np.sqrt(om * y ** 3 + de)
        dc = cumulative_trapezoid(1 / e, grid, initial=0) * 299792.458 / 70.0
        dl = (1 + zhel) * np.interp(z, grid, dc)
        r = mag - (5 * np.log10(dl) + 25)
        s = cho_solve(cf, r)
        a, b = r @ s, ones_s @ r
        return a - b * b / c_tot

    rng = np.random.default_rng(1)
    pts = [(0.3 + 0.02 * rng.standard_normal(), -1 + 0.1 * rng.standard_normal(),
            0.1 * rng.standard_normal()) for _ in range(50)]
    n_eval = int(evals)
    t1 = time.perf_counter()
    for k in range(n_eval):
        om, w0, wa = pts[k % 50]
        chi2(om) if model == "lcdm-flat" else chi2(om, w0, wa)
    rate = n_eval / (time.perf_counter() - t1)
    print(f"{rate:.6g} {setup:.6g}")


if __name__ == "__main__":
    main()
