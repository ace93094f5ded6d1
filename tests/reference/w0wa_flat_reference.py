#!/usr/bin/env python3
"""The flat w0-wa posterior of the 1048-object Pantheon 2018 table, computed
with numpy/scipy independently of lantern's C code (issue 20), for
tests/e2e/test_w0wa_reference.sh to compare lantern sample with.

Data: lcparam_full_long_zhel.txt in $LANTERN_SHARED/data/pantheon2018 (else
ROOT/../shared/...), Scolnic et al. 2018 (ApJ 859, 101), as that folder's
SOURCE.md describes it: zcmb, zhel, mb (standardised magnitude = distance
modulus + M), dmb (statistical error); statistical errors only, so the
covariance is diag(dmb^2). The header names 19 columns, rows have 18 fields
(the trailing name biascor is empty): the reader checks both and takes the
columns by name.

Model and likelihood, each with its source:
- Flat w0-wa (Chevallier & Polarski 2001; Linder 2003, PRL 90, 091301):
  w(a) = w0 + wa (1 - a), rho_de(z)/rho_de(0) = (1+z)^(3(1+w0+wa))
  exp(-3 wa z/(1+z)), E^2(z) = Om (1+z)^3 + (1 - Om) rho_de/rho_de(0).
  Radiation off: lantern's fit/sample --format json report "fixed":
  {"h0": 70, "t_cmb": 0, "n_eff": 3.046} for this data (DESIGN.md: radiation
  is off unless t_cmb is set or a term needs the early universe), so n_eff
  does not enter.
- d_L = (1 + zhel) D_M(zcmb), D_M = (c/H0) int_0^zcmb dz/E (SOURCE.md; flat).
  The integral is a linear functional of 1/E at the N Gauss-Legendre nodes
  of [0, zmax] (the interpolating Legendre series integrated exactly:
  numpy.polynomial.legendre); 1/E is analytic on [0, zmax] with its nearest
  singularity at z = -1, so N = 40 nodes converge far past 1e-10. Checked
  below against astropy.cosmology.Flatw0waCDM (Tcmb0 = 0).comoving_distance
  at the prior's corners.
- Offset marginalised analytically with a flat prior (DESIGN.md, "offset"):
  r = mb - mu, A = r^T C^-1 r, B = 1^T C^-1 r, Cs = 1^T C^-1 1,
  chi2 = A - B^2/Cs (DESIGN.md, "chi2_min (A - B^2/C ...)"). lantern's log
  likelihood also adds ln(Cs / 2 pi) to chi2 (src/likelihood/sn.c,
  finish_point: chi2_eff = chi2 + ln_c_term); Cs depends on the errors only,
  not on the parameters, so that term is a constant and the posterior's
  shape needs none: it is left out here. For the same reason h0 (fixed at 70)
  and the constant 25 + 5 log10(c/H0) drop out of A - B^2/Cs.
- Priors: lantern's defaults for w0wa-flat (bin/lantern sample --help,
  src/likelihood/params.c): omega_m U(0,1), w0 U(-2,0), wa U(-3,2); no other
  cut (w0 + wa < 0 only applies with CMB or r_d terms: DESIGN.md).

Integration: the posterior is cut by the prior's faces (Omega_m = 0 and both
wa faces carry 10-13% of the peak's marginal density: printed as
edge_density_over_peak), so the grid's faces
are the prior's faces where the posterior reaches them and the 3-D sums use
composite Simpson weights up to them. A coarse scan of the whole prior box
first finds where the posterior is above exp(-25) of its peak; the fine box
is that region (one coarse cell wider, cut at the prior). Means and sds are
Simpson sums; each 1-D marginal density is interpolated by a cubic spline
(scipy.interpolate.CubicSpline) whose antiderivative gives the quantiles
(brentq). Everything is computed at two resolutions; the differences, in
units of each parameter's sd, must be below 0.005 (checked and printed).

Output: JSON on stdout (chi2_min and its point, by scipy.optimize.minimize
inside the prior from the grid's best point and its best on each face; the fine grid's means, sds, quantiles
q2.5, q5, q16, q50, q84, q95, q97.5 and the marginal density at each quantile, in units of
1/sd, which the e2e test uses for the quantiles' Monte Carlo errors), and one
"ok"/"not ok" line per self-check on stderr (tests/run.sh counts them).
Exit status 1 if any check fails.
"""
import json
import math
import os
import sys
import time

# One core: the machine is shared, and BLAS threads only spin on these sizes.
for _v in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS"):
    os.environ.setdefault(_v, "1")
import numpy as np
from scipy import integrate
from scipy.interpolate import CubicSpline
from scipy.optimize import brentq, minimize

ROOT = os.path.dirname(os.path.dirname(os.path.dirname(os.path.abspath(__file__))))
SHARED = os.environ.get("LANTERN_SHARED", os.path.join(os.path.dirname(ROOT), "shared"))
TABLE = os.path.join(SHARED, "data", "pantheon2018", "lcparam_full_long_zhel.txt")
NAMES = ("omega_m", "w0", "wa")
PRIOR = {"omega_m": (0.0, 1.0), "w0": (-2.0, 0.0), "wa": (-3.0, 2.0)}
QUANTILES = (0.025, 0.05, 0.16, 0.5, 0.84, 0.95, 0.975)
GL_NODES = 40
COARSE_SCAN = (41, 41, 41)  # the whole prior box, to find the posterior's box
RESOLUTIONS = ((65, 65, 45), (85, 85, 57))  # odd counts: Simpson
TOL_GRID = 0.005  # sd units: two resolutions must agree to this
CHUNK = 4096

failures = 0


def report(ok, name, detail=""):
    global failures
    failures += 0 if ok else 1
    print(("ok - " if ok else "not ok - ") + name + (f" ({detail})" if detail else ""),
          file=sys.stderr)


def load_table(path=TABLE):
    with open(path) as f:
        lines = [ln.split() for ln in f if ln.strip()]
    names = [lines[0][0].lstrip("#")] + lines[0][1:]
    rows = lines[1:]
    assert all(len(r) == 18 for r in rows) and len(names) == 19 and names[-1] == "biascor", \
        "SOURCE.md: 19 header names, 18 fields per row, trailing biascor empty"
    col = {n: i for i, n in enumerate(names)}
    get = lambda n: np.array([float(r[col[n]]) for r in rows])  # noqa: E731
    return get("zcmb"), get("zhel"), get("mb"), get("dmb")


class Distances:
    """I(z_i) = int_0^{z_i} dz/E for the data redshifts, as M @ (1/E at the nodes)."""

    def __init__(self, z):
        self.zmax = float(z.max())
        t, _ = np.polynomial.legendre.leggauss(GL_NODES)
        self.nodes = 0.5 * self.zmax * (t + 1.0)
        # Legendre coefficients from node values: c = V^-1 f; the integral of
        # P_k from -1 to t_i, times the Jacobian zmax/2.
        v = np.polynomial.legendre.legvander(t, GL_NODES - 1)
        ti = 2.0 * z / self.zmax - 1.0
        q = np.empty((len(z), GL_NODES))
        for k in range(GL_NODES):
            e = np.zeros(GL_NODES)
            e[k] = 1.0
            q[:, k] = np.polynomial.legendre.legval(ti, np.polynomial.legendre.legint(e, lbnd=-1))
        self.m = 0.5 * self.zmax * np.linalg.solve(v.T, q.T).T
        zn = self.nodes
        self.matter = (1.0 + zn) ** 3
        self.ln1z = np.log1p(zn)
        self.y = zn / (1.0 + zn)

    def inv_e(self, om, w0, wa):
        """1/E at the nodes: shape (GL_NODES, P) for parameter arrays of length P."""
        de = np.exp(3.0 * np.outer(self.ln1z, 1.0 + w0 + wa) - 3.0 * np.outer(self.y, wa))
        return 1.0 / np.sqrt(np.outer(self.matter, om) + (1.0 - om) * de)

    def integral(self, om, w0, wa):
        return self.m @ self.inv_e(np.atleast_1d(om), np.atleast_1d(w0), np.atleast_1d(wa))


class Chi2:
    """chi2 = A - B^2/Cs for r = y - 5 log10 I; y = mb - 5 log10(1+zhel) (constants drop)."""

    def __init__(self, zcmb, zhel, mb, dmb):
        self.dist = Distances(zcmb)
        self.w = 1.0 / dmb ** 2
        self.y = mb - 5.0 * np.log10(1.0 + zhel)
        self.cs = self.w.sum()
        self.wy = self.w * self.y
        self.a0, self.b0 = float(self.wy @ self.y), float(self.wy.sum())

    def from_integral(self, integral):
        mu = 5.0 * np.log10(integral)
        a = self.a0 - 2.0 * (self.wy @ mu) + self.w @ (mu * mu)
        b = self.b0 - self.w @ mu
        return a - b * b / self.cs

    def __call__(self, om, w0, wa):
        om, w0, wa = np.broadcast_arrays(*(np.asarray(x, dtype=float).ravel() for x in (om, w0, wa)))
        out = np.empty(om.size)
        for s in range(0, om.size, CHUNK):
            sl = slice(s, s + CHUNK)
            out[sl] = self.from_integral(self.dist.integral(om[sl], w0[sl], wa[sl]))
        return out


def check_distances(chi2, zcmb, zhel, mb, dmb):
    """Fast distances against astropy (Debian python3-astropy, Flatw0waCDM with
    Tcmb0 = 0: scipy quad at its default tolerance) and chi2 against a direct
    scipy.integrate.quad sum over every object."""
    from astropy.cosmology import Flatw0waCDM
    corners = [(0.0, -2.0, -3.0), (0.0, 0.0, 2.0), (1.0, -2.0, 2.0), (0.0, -2.0, 2.0),
               (0.0, 0.0, -3.0), (0.3, -1.0, 0.0), (0.33, -1.18, 0.38)]
    zs = np.array([0.01, 0.1, 0.5, 1.0, 1.5, chi2.dist.zmax])
    worst = 0.0
    hubble = 299792.458 / 70.0
    for om, w0, wa in corners:
        cosmo = Flatw0waCDM(H0=70.0, Om0=om, w0=w0, wa=wa, Tcmb0=0.0)
        ref = cosmo.comoving_distance(zs).value / hubble
        d = Distances(zs)
        got = d.integral(om, w0, wa)[:, 0]
        worst = max(worst, float(np.max(np.abs(got / ref - 1.0))))
    report(worst < 1e-7, "int dz/E at the prior's corners against astropy Flatw0waCDM.comoving_distance",
           f"max relative difference {worst:.1e}")
    # the whole chi2 at two points, with each object's distance by scipy quad
    worst = 0.0
    for om, w0, wa in corners[-2:]:
        def inv_e(z):
            de = (1 + z) ** (3 * (1 + w0 + wa)) * math.exp(-3 * wa * z / (1 + z))
            return 1.0 / math.sqrt(om * (1 + z) ** 3 + (1 - om) * de)
        integral = np.array([integrate.quad(inv_e, 0.0, z, epsabs=0, epsrel=1e-12)[0] for z in zcmb])
        mu = 5 * np.log10((1 + zhel) * integral * hubble) + 25
        r = mb - mu
        w = 1 / dmb ** 2
        direct = np.sum(w * r * r) - np.sum(w * r) ** 2 / np.sum(w)
        worst = max(worst, abs(float(chi2(om, w0, wa)[0]) - direct))
    report(worst < 1e-6, "chi2 = A - B^2/C against a per-object scipy.integrate.quad sum",
           f"max difference {worst:.1e}")


def simpson_weights(n, h):
    assert n % 2 == 1
    w = np.ones(n)
    w[1:-1:2], w[2:-1:2] = 4.0, 2.0
    return w * h / 3.0


def find_box(chi2, zcmb, zhel, mb, dmb):
    """The posterior's box inside the prior: where a coarse scan of the whole
    prior has a point above exp(-25) of the peak, one coarse cell wider.
    The scan also checks the node count: twice the nodes change no chi2 of
    the whole prior box by more than 1e-5."""
    axes = [np.linspace(*PRIOR[n], k) for n, k in zip(NAMES, COARSE_SCAN)]
    g = np.meshgrid(*axes, indexing="ij")
    c2 = chi2(*g)
    lp = -0.5 * c2.reshape(g[0].shape)
    global GL_NODES
    GL_NODES *= 2
    twice = Chi2(zcmb, zhel, mb, dmb)(*g)
    GL_NODES //= 2
    worst = float(np.max(np.abs(twice - c2)))
    report(worst < 1e-5, f"{GL_NODES} against {2 * GL_NODES} Gauss-Legendre nodes over the whole prior box",
           f"max chi2 difference {worst:.1e}")
    keep = lp > lp.max() - 25.0
    box = []
    for i, ax in enumerate(axes):
        hit = np.flatnonzero(keep.any(axis=tuple(j for j in range(3) if j != i)))
        step = ax[1] - ax[0]
        lo, hi = PRIOR[NAMES[i]]
        box.append((max(lo, ax[hit[0]] - step), min(hi, ax[hit[-1]] + step)))
    # what the box leaves out: the scan's mass outside it, relative
    inside = np.ones_like(keep)
    for i, (ax, (lo, hi)) in enumerate(zip(axes, box)):
        shape = [1, 1, 1]
        shape[i] = -1
        inside &= ((ax >= lo) & (ax <= hi)).reshape(shape)
    p = np.exp(lp - lp.max())
    return box, float(p[~inside].sum() / p.sum())


def posterior(chi2, box, counts):
    axes = [np.linspace(lo, hi, n) for (lo, hi), n in zip(box, counts)]
    g = np.meshgrid(*axes, indexing="ij")
    lp = -0.5 * chi2(*g).reshape(g[0].shape)
    dens = np.exp(lp - lp.max())
    w = [simpson_weights(n, ax[1] - ax[0]) for n, ax in zip(counts, axes)]
    wd = dens * w[0][:, None, None] * w[1][None, :, None] * w[2][None, None, :]
    total = wd.sum()
    out = {}
    for i, name in enumerate(NAMES):
        others = tuple(j for j in range(3) if j != i)
        x = axes[i]
        pm = wd.sum(axis=others) / total  # Simpson-weighted marginal mass at the nodes
        mean = float(pm @ x)
        sd = math.sqrt(float(pm @ (x - mean) ** 2))
        # the marginal density at the nodes: the other axes' Simpson sums
        dm = wd.sum(axis=others) / w[i] / total
        spline = CubicSpline(x, dm)
        cdf = spline.antiderivative()
        norm = float(cdf(x[-1]))
        qs, dens_q = {}, {}
        for q in QUANTILES:
            v = brentq(lambda t: float(cdf(t)) / norm - q, x[0], x[-1], xtol=1e-12)
            qs[f"q{100 * q:g}"] = v
            dens_q[f"q{100 * q:g}"] = float(spline(v)) / norm * sd  # per unit sd
        out[name] = {"mean": mean, "sd": sd, **qs, "density_at_quantile_per_sd": dens_q,
                     "edge_density_over_peak": [float(dm[0] / dm.max()), float(dm[-1] / dm.max())]}
    # the grid's best point, and its best on each face of the box: the
    # likelihood has a minimum inside and a lower one on the omega_m = 0 face
    starts = [np.unravel_index(np.argmax(lp), lp.shape)]
    for k in range(3):
        for end in (0, -1):
            face = np.take(lp, end, axis=k)
            j = list(np.unravel_index(np.argmax(face), face.shape))
            j.insert(k, end if end == 0 else lp.shape[k] - 1)
            starts.append(tuple(j))
    out["grid_starts"] = [[float(axes[k][j[k]]) for k in range(3)] for j in starts]
    return out


def best_fit(chi2, starts):
    """The minimum chi2 inside the prior: scipy L-BFGS-B from each start, then
    Nelder-Mead (bounded) from there, since L-BFGS-B's finite-difference
    gradients stop it about 1e-4 in chi2 short of the minimum."""
    best = None
    f = lambda x: float(chi2(*x)[0])  # noqa: E731
    bounds = [PRIOR[n] for n in NAMES]
    for x0 in starts:
        res = minimize(f, x0, method="L-BFGS-B", bounds=bounds)
        res = minimize(f, res.x, method="Nelder-Mead", bounds=bounds,
                       options={"xatol": 1e-10, "fatol": 1e-12, "maxfev": 4000})
        if best is None or res.fun < best.fun:
            best = res
    return {"chi2_min": float(best.fun), "best": dict(zip(NAMES, map(float, best.x)))}


def main():
    t0 = time.time()
    zcmb, zhel, mb, dmb = load_table()
    chi2 = Chi2(zcmb, zhel, mb, dmb)
    check_distances(chi2, zcmb, zhel, mb, dmb)
    box, outside = find_box(chi2, zcmb, zhel, mb, dmb)
    report(outside < 1e-9, "the posterior's box holds all but a negligible part of the prior's mass",
           f"coarse-scan mass outside {outside:.1e}; box {box}")
    coarse = posterior(chi2, box, RESOLUTIONS[0])
    fine = posterior(chi2, box, RESOLUTIONS[1])
    diff = {}
    for n in NAMES:
        keys = ["mean", "sd"] + [f"q{100 * q:g}" for q in QUANTILES]
        diff[n] = {k: abs(fine[n][k] - coarse[n][k]) / fine[n]["sd"] for k in keys}
    worst = max(max(d.values()) for d in diff.values())
    report(worst < TOL_GRID, f"two grid resolutions agree to {TOL_GRID} sd on every mean, sd and quantile",
           f"worst {worst:.1e} sd")
    fine.update(best_fit(chi2, fine.pop("grid_starts")))
    fine["resolution_diff_sd"] = diff
    fine["grids"] = {"box": dict(zip(NAMES, box)), "coarse": RESOLUTIONS[0], "fine": RESOLUTIONS[1],
                     "mass_outside_box": outside}
    fine["n_data"] = len(zcmb)
    fine["seconds"] = round(time.time() - t0, 2)
    print(json.dumps(fine, indent=1))
    return 1 if failures else 0


if __name__ == "__main__":
    sys.exit(main())
