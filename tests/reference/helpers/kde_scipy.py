#!/usr/bin/env python3
"""Reference for lantern's smoothed densities (tests/reference/test_kde_scipy.c):
reads draws "x y w" from argv[1], evaluates scipy.stats.gaussian_kde (weighted,
Scott's factor n_eff^(-1/6), kernel covariance factor^2 times the weighted data
covariance) at the centres of an nx x ny grid on [x0, x1] x [y0, y1] and
prints one density a line, x-major, as lantern's grid g[ix * ny + iy].
Usage: kde_scipy.py DRAWS x0 x1 y0 y1 nx ny"""
import sys

import numpy as np
from scipy.stats import gaussian_kde

d = np.loadtxt(sys.argv[1])
x0, x1, y0, y1 = map(float, sys.argv[2:6])
nx, ny = int(sys.argv[6]), int(sys.argv[7])
kde = gaussian_kde(d[:, :2].T, bw_method="scott", weights=d[:, 2])
cx = x0 + (np.arange(nx) + 0.5) * (x1 - x0) / nx
cy = y0 + (np.arange(ny) + 0.5) * (y1 - y0) / ny
gx, gy = np.meshgrid(cx, cy, indexing="ij")
v = kde(np.vstack([gx.ravel(), gy.ravel()]))
sys.stdout.write("".join("%.17g\n" % t for t in v))
