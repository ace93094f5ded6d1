#!/usr/bin/env python3
"""JLA supernova standardisation fits computed with numpy/scipy, independently
of lantern's C code, for lantern's tests to compare with.

Data: jla_lcparams.txt of the JLA release (Betoule et al. 2014, A&A 568, A22),
740 SNe Ia; default path /work/shared/data/jla2014/jla_lcparams.txt (see
SOURCE.md in that folder), or argv[1].  The published JLA numbers quoted in
SOURCE.md are NOT comparable with what this script computes: they use the
full systematic covariance matrix, which is not in that file; here only the
per-object statistical errors (dmb, dx1, dcolor, cov_m_s, cov_m_c, cov_s_c)
are used.

Sources, formula by formula:
- Background: flat LCDM without radiation, E(z) = sqrt(Om (1+z)^3 + 1 - Om),
  H0 = 70 km/s/Mpc, c = 299792.458 km/s; D_M = (c/H0) int_0^z dz'/E(z');
  mu = 5 log10((1 + zhel) D_M(zcmb) / Mpc) + 25.  The integral is done by
  Gauss-Legendre quadrature (numpy.polynomial.legendre.leggauss, 64 nodes on
  [0, z] per object, vectorised); --check-limit compares it with
  scipy.integrate.quad (epsrel 1e-13) and requires relative agreement 1e-11.
- Standardisation: Tripp 1998, A&A 331, 815: mb = mu + M - alpha x1 +
  beta color, plus gamma P with P = 1 if log10 host mass (3rdvar) >= 10
  (host-mass step as used by Betoule et al. 2014, SOURCE.md).
- Redshift-error magnitude: sigma_z = (5/ln 10) sqrt(dz^2 + (150/c)^2)
  (1+z) / (z (1 + z/2)), z = zcmb (150 km/s peculiar velocities), as
  lantern specifies it: (5/ln 10) sigma_z d ln d_L / dz for the q0 = 0
  form d_L ~ z (1 + z/2), since d ln(z (1 + z/2))/dz = (1+z)/(z (1+z/2)).
- Lensing: sigma_lens = 0.055 z (Jonsson et al. 2010, MNRAS 405, 535).
- Method "chi2": Conley et al. 2011, ApJS 192, 1, the usual chi2 with the
  per-object variance v = dmb^2 + alpha^2 dx1^2 + beta^2 dcolor^2
  + 2 alpha cov_m_s - 2 beta cov_m_c - 2 alpha beta cov_s_c + sig_g^2
  + sigma_z^2 + sigma_lens^2, no ln det term; sig_g per sample (set 1..4)
  tuned so that chi2_g = N_g (1 - p/N), p = 5, iterated with the fit.
  Minimisation: scipy.optimize.minimize (L-BFGS-B) then Newton steps with a
  central-difference Hessian; Laplace errors sqrt(diag(2 H^-1)).
- Method "latent": March et al. 2011, MNRAS 418, 2308: true x1, color with
  Gaussian populations N(xm_g, xs_g^2), N(cm_g, cs_g^2) per sample,
  integrated out analytically: o = (mb, x1, color) ~ N(m, Sigma) with
  m = (mu + M + gamma P - alpha xm + beta cm, xm, cm),
  Sigma = C + A D A^T + diag(sigma_z^2 + sigma_lens^2, 0, 0),
  A = [[1, -alpha, beta], [0, 1, 0], [0, 0, 1]], D = diag(sig^2, xs^2, cs^2);
  -2 ln L = sum (o-m)^T Sigma^-1 (o-m) + ln det(2 pi Sigma), evaluated with
  numpy.linalg.solve and numpy.linalg.slogdet on the (740, 3, 3) stack (no
  factorisation of the model).  5 + 4 + 16 = 25 parameters.  Minimisation:
  scipy.optimize.minimize (L-BFGS-B, bounds Om in (0,1), sig >= 0, xs, cs > 0)
  then Newton steps; a sig_g whose optimum is 0 is reported "at_bound" and
  its row/column is dropped from the Hessian.
- Self-checks (--check-limit): as xs, cs -> 1e4 the Gaussian conditional of
  mb given (x1, color) under the latent model (conditional mean
  m1 + S12 S22^-1 (y - m2), variance S11 - S12 S22^-1 S21, standard Gaussian
  conditioning) tends to the chi2 method's prediction mu + M + gamma P
  - alpha x1 + beta color and variance v.

Hessian step check (recorded on stderr at every run; the run fails if the
Laplace errors from steps 0.02 and 0.01 conditional sds differ by more than
1e-4 relative).  Observed on the JLA file: chi2 method max relative
difference 5e-8; latent method 5e-5 for sigma_int@4 (9 objects, a very
non-quadratic direction), 2e-5 for color_sd@4, <= 7e-6 for the rest.  With
steps 0.1 and 0.05 the latent sigma_int@4 differed by 1.3e-3, which is why
the smaller steps are used.

Observed on the JLA file: sig_1..3 (SNLS, SDSS, low-z) are 0 in both
methods (chi2_g at sig_g = 0 is already below dof_g; the latent -2lnL rises
from sig_g = 0), only sig_4 (HST, 9 SNe) is > 0.  The dmb column (median
0.09-0.14 per sample) seems to include an intrinsic-dispersion term already;
SOURCE.md does not say.

Usage: jla_standardise_numpy.py [DATA] [--method chi2|latent] [--check-limit]
Prints one JSON object on stdout; diagnostics on stderr; exit status 1 if
any internal convergence/accuracy check fails.
"""

import json
import math
import sys
import time

import numpy as np
from scipy import integrate, optimize

C_KMS = 299792.458
H0 = 70.0
DH = C_KMS / H0  # Mpc
DEFAULT_DATA = "/work/shared/data/jla2014/jla_lcparams.txt"
NGROUP = 4

FAILURES = []


def log(msg):
    print(msg, file=sys.stderr, flush=True)


def require(cond, msg):
    if not cond:
        FAILURES.append(msg)
        log("CHECK FAILED: " + msg)


# ---------------------------------------------------------------- data
def load(path):
    with open(path) as fh:
        header = fh.readline()
        if not header.startswith("#name"):
            raise SystemExit("unexpected header in " + path)
        names = header.lstrip("#").rstrip("\n").split("\t")
        rows = [ln.rstrip("\n").split("\t") for ln in fh if ln.strip()]
    cols = {n: [r[k] for r in rows] for k, n in enumerate(names)}
    d = {n: np.array(cols[n], dtype=float) for n in names if n != "name"}
    return d


class Data:
    def __init__(self, path):
        d = load(path)
        self.n = len(d["zcmb"])
        self.zcmb = d["zcmb"]
        self.zhel = d["zhel"]
        self.mb = d["mb"]
        self.x1 = d["x1"]
        self.c = d["color"]
        self.dmb2 = d["dmb"] ** 2
        self.dx12 = d["dx1"] ** 2
        self.dc2 = d["dcolor"] ** 2
        self.cms = d["cov_m_s"]
        self.cmc = d["cov_m_c"]
        self.csc = d["cov_s_c"]
        self.P = (d["3rdvar"] >= 10.0).astype(float)
        self.grp = d["set"].astype(int) - 1
        assert set(np.unique(self.grp)) == set(range(NGROUP))
        z = self.zcmb
        self.sz2 = ((5.0 / math.log(10.0)) * np.sqrt(d["dz"] ** 2 + (150.0 / C_KMS) ** 2)
                    * (1.0 + z) / (z * (1.0 + z / 2.0))) ** 2
        self.sl2 = (0.055 * z) ** 2
        self.extra = self.sz2 + self.sl2
        # Gauss-Legendre nodes on [0, zcmb_i]
        t, w = np.polynomial.legendre.leggauss(64)
        zz = 0.5 * z[:, None] * (t[None, :] + 1.0)
        self.opz3 = (1.0 + zz) ** 3
        self.glw = 0.5 * z[:, None] * w[None, :]
        self.lumfac = 1.0 + self.zhel
        # per-object measurement covariance C_i
        C = np.empty((self.n, 3, 3))
        C[:, 0, 0] = self.dmb2
        C[:, 1, 1] = self.dx12
        C[:, 2, 2] = self.dc2
        C[:, 0, 1] = C[:, 1, 0] = self.cms
        C[:, 0, 2] = C[:, 2, 0] = self.cmc
        C[:, 1, 2] = C[:, 2, 1] = self.csc
        self.C = C
        self.obs = np.stack([self.mb, self.x1, self.c], axis=1)
        self.ng = np.bincount(self.grp, minlength=NGROUP)

    def dm_over_dh(self, om):
        return np.sum(self.glw / np.sqrt(om * self.opz3 + 1.0 - om), axis=1)

    def mu(self, om):
        return 5.0 * np.log10(self.lumfac * DH * self.dm_over_dh(om)) + 25.0


# ---------------------------------------------------------------- numerics
def hessian(f, x, h):
    """Central-difference Hessian: diagonal (f(x+h)-2f(x)+f(x-h))/h^2,
    off-diagonal (f(++)-f(+-)-f(-+)+f(--))/(4 hj hk)."""
    n = len(x)
    f0 = f(x)
    H = np.empty((n, n))
    E = np.diag(h)
    fp = np.array([f(x + E[j]) for j in range(n)])
    fm = np.array([f(x - E[j]) for j in range(n)])
    for j in range(n):
        H[j, j] = (fp[j] - 2.0 * f0 + fm[j]) / h[j] ** 2
        for k in range(j):
            v = (f(x + E[j] + E[k]) - f(x + E[j] - E[k])
                 - f(x - E[j] + E[k]) + f(x - E[j] - E[k])) / (4.0 * h[j] * h[k])
            H[j, k] = H[k, j] = v
    g = (fp - fm) / (2.0 * h)
    return H, g


def gradient(f, x, h):
    """Central-difference gradient (f(x+h) - f(x-h)) / 2h; used with steps
    1e-3 of the conditional sd so that its truncation error (relative
    ~h^2) does not limit the Newton decrement."""
    E = np.diag(h)
    return np.array([(f(x + E[j]) - f(x - E[j])) / (2.0 * h[j]) for j in range(len(x))])


def steps_for(x, scale, frac, lower):
    h = frac * scale
    # do not step across a lower bound
    for j in range(len(x)):
        if lower[j] is not None and x[j] - h[j] <= lower[j]:
            h[j] = 0.5 * (x[j] - lower[j])
    return h


def newton_polish(f, x, scale, lower, upper, iters=40, tag=""):
    """Newton iterations with a central-difference Hessian (steps 0.1 of the
    conditional sd) and gradient (steps 1e-3), backtracking; stops when the Newton decrement
    g^T H^-1 g / 2 (the predicted remaining decrease of f) < 1e-10."""
    x = x.copy()
    fx = f(x)
    dec = np.inf
    for it in range(iters):
        h = steps_for(x, scale, 0.1, lower)
        H, _ = hessian(f, x, h)
        g = gradient(f, x, steps_for(x, scale, 1e-3, lower))
        try:
            np.linalg.cholesky(H)  # raises if H is not positive definite
            step = -np.linalg.solve(H, g)
        except np.linalg.LinAlgError:
            step = -g * scale ** 2 * 0.1
        dec = -0.5 * float(g @ step)
        d = np.sqrt(np.abs(np.diag(H)))
        scale = np.where(d > 0, np.sqrt(2.0) / np.maximum(d, 1e-300), scale)
        if dec < 1e-10:
            break
        t = 1.0
        for _ in range(60):
            xn = x + t * step
            ok = all((lower[j] is None or xn[j] > lower[j]) and
                     (upper[j] is None or xn[j] < upper[j]) for j in range(len(x)))
            if ok:
                fn = f(xn)
                if fn <= fx:
                    break
            t *= 0.5
        else:
            break
        x, fx = xn, fn
    log(f"{tag} newton: iterations {it}, final decrement {dec:.3e}")
    return x, fx, dec, scale


def minimise(f, x0, scale, lower, upper, tag="", polish=True):
    """L-BFGS-B on the scaled variables u = (x - x0)/scale, then Newton."""
    x0 = np.asarray(x0, float)

    def fu(u):
        return f(x0 + u * scale)

    bnds = []
    for j in range(len(x0)):
        lo = None if lower[j] is None else (lower[j] - x0[j]) / scale[j]
        hi = None if upper[j] is None else (upper[j] - x0[j]) / scale[j]
        bnds.append((lo, hi))
    res = optimize.minimize(fu, np.zeros_like(x0), method="L-BFGS-B", bounds=bnds,
                            options=dict(maxiter=20000, maxfun=10 ** 6, ftol=1e-15,
                                         gtol=1e-9, eps=1e-7))
    x = x0 + res.x * scale
    log(f"{tag} L-BFGS-B: f = {res.fun:.10f}, nfev {res.nfev}, {res.message}")
    if not polish:
        return x, float(res.fun)
    return newton_polish(f, x, scale, lower, upper, tag=tag)


def laplace(f, x, scale, lower, free, tag):
    """sd = sqrt(diag(2 H^-1)) over the free parameters, with the Hessian
    by central differences at steps 0.02 and 0.01 of the conditional sd; the
    two must agree to 1e-4 relative."""
    idx = np.flatnonzero(free)

    def fsub(y):
        xx = x.copy()
        xx[idx] = y
        return f(xx)

    low = [lower[j] for j in idx]
    out = []
    for frac in (0.02, 0.01):
        h = steps_for(x[idx], scale[idx].copy(), frac, low)
        H, _ = hessian(fsub, x[idx], h)
        cov = 2.0 * np.linalg.inv(H)
        out.append(np.sqrt(np.diag(cov)))
    relv = np.abs(out[0] / out[1] - 1.0)
    rel = float(np.max(relv))
    log(f"{tag} per-parameter rel. sd differences: {np.array2string(relv, precision=1)}")
    log(f"{tag} Hessian step check: max rel. sd difference (0.02 vs 0.01 sd steps) = {rel:.2e}")
    require(rel < 1e-4, f"{tag}: Hessian step check {rel:.2e}")
    sd = np.full(len(x), np.nan)
    sd[idx] = out[1]
    return sd, rel


# ---------------------------------------------------------------- chi2 method
PNAMES5 = ["omega_m", "alpha", "beta", "gamma", "offset"]


def chi2_parts(D, theta, sig):
    om, a, b, g, M = theta
    r = D.mb - (D.mu(om) + M + g * D.P - a * D.x1 + b * D.c)
    v = (D.dmb2 + a * a * D.dx12 + b * b * D.dc2 + 2 * a * D.cms - 2 * b * D.cmc
         - 2 * a * b * D.csc + sig[D.grp] ** 2 + D.extra)
    return r, v


def chi2_function(D, sig):
    """chi2(theta) = sum r^2 / v with the sig_g held fixed."""
    sig = np.array(sig, float)

    def f(theta):
        r, v = chi2_parts(D, theta, sig)
        return float(np.sum(r * r / v))

    return f


def tune_sig(D, theta, dof):
    om, a, b, g, M = theta
    r, v0 = chi2_parts(D, theta, np.zeros(NGROUP))
    sig = np.zeros(NGROUP)
    for k in range(NGROUP):
        m = D.grp == k
        rk, vk = r[m] ** 2, v0[m]

        def h(s):
            return np.sum(rk / (vk + s * s)) - dof[k]

        if h(0.0) <= 0.0:
            sig[k] = 0.0
            continue
        hi = 0.5
        while h(hi) > 0:
            hi *= 2.0
        sig[k] = optimize.brentq(h, 0.0, hi, xtol=1e-14, rtol=1e-14)
    return sig


def run_chi2(D):
    N, p = D.n, 5
    dof = D.ng * (1.0 - p / N)
    lower = [1e-9, None, None, None, None]
    upper = [1 - 1e-9, None, None, None, None]
    scale = np.array([0.03, 0.01, 0.1, 0.02, 0.02])
    theta = np.array([0.3, 0.14, 3.1, -0.05, -19.05])
    sig = np.full(NGROUP, 0.1)
    for it in range(100):
        f = chi2_function(D, sig)
        theta, fx, dec, scale = minimise(f, theta, scale, lower, upper, tag=f"chi2 it{it}")
        new = tune_sig(D, theta, dof)
        change = float(np.max(np.abs(new - sig)))
        log(f"chi2 it{it}: sig = {new}, change {change:.2e}")
        sig = new
        if change < 1e-6:
            break
    else:
        require(False, "chi2: sigma_int iteration did not converge")
    # final fit at the converged sig_g, then the chi2 at the best fit
    f = chi2_function(D, sig)
    theta, chi2, dec, scale = newton_polish(f, theta, scale, lower, upper, tag="chi2 final")
    require(dec < 1e-8, f"chi2: Newton decrement {dec:.2e}")
    sd, rel = laplace(f, theta, scale, lower, np.ones(5, bool), "chi2")
    # consistency: each group's chi2 at the reported point equals dof_g
    # (where sig_g > 0), by construction of the iteration
    r, v = chi2_parts(D, theta, sig)
    for k in range(NGROUP):
        m = D.grp == k
        cg = float(np.sum(r[m] ** 2 / v[m]))
        if sig[k] > 0:
            require(abs(cg - dof[k]) < 1e-3, f"chi2: group {k+1} chi2 {cg} vs dof {dof[k]}")
        else:
            require(cg <= dof[k] + 1e-3, f"chi2: group {k+1} at sig 0 has chi2 {cg} > dof")
    out = {"params": {n: {"best": float(theta[j]), "sd": float(sd[j])} for j, n in enumerate(PNAMES5)},
           "sigma_int": {str(k + 1): float(sig[k]) for k in range(NGROUP)},
           "chi2": float(chi2), "n": int(D.n)}
    return out


# ---------------------------------------------------------------- latent method
def latent_names():
    names = list(PNAMES5)
    names += [f"sigma_int@{k+1}" for k in range(NGROUP)]
    names += [f"x1_mean@{k+1}" for k in range(NGROUP)]
    names += [f"x1_sd@{k+1}" for k in range(NGROUP)]
    names += [f"color_mean@{k+1}" for k in range(NGROUP)]
    names += [f"color_sd@{k+1}" for k in range(NGROUP)]
    return names


def latent_moments(D, x):
    om, a, b, g, M = x[:5]
    sig, xm, xs, cm, cs = (x[5 + 4 * q: 9 + 4 * q] for q in range(5))
    G = D.grp
    mean = np.empty((D.n, 3))
    mean[:, 0] = D.mu(om) + M + g * D.P - a * xm[G] + b * cm[G]
    mean[:, 1] = xm[G]
    mean[:, 2] = cm[G]
    A = np.array([[1.0, -a, b], [0.0, 1.0, 0.0], [0.0, 0.0, 1.0]])
    Dg = np.zeros((NGROUP, 3, 3))
    Dg[:, 0, 0] = sig ** 2
    Dg[:, 1, 1] = xs ** 2
    Dg[:, 2, 2] = cs ** 2
    ADA = A[None] @ Dg @ A.T[None]  # (4, 3, 3)
    S = D.C + ADA[G]
    S[:, 0, 0] += D.extra
    return mean, S


def latent_m2lnl(D, x, parts=False):
    mean, S = latent_moments(D, x)
    res = D.obs - mean
    sol = np.linalg.solve(S, res[:, :, None])[:, :, 0]
    quad = float(np.sum(res * sol))
    sign, ld = np.linalg.slogdet(S)
    if np.any(sign <= 0):
        return (np.inf, np.inf) if parts else np.inf
    tot = quad + float(np.sum(ld)) + 3 * D.n * math.log(2 * math.pi)
    return (tot, quad) if parts else tot


def latent_fit(f, x0, scale, lower, upper, tag):
    """L-BFGS-B, then decide which sig_g sit at the boundary 0, then Newton
    on the remaining parameters.  A sig_g is at the boundary when the fit
    put it below 1e-3 and -2lnL rises from sig_g = 0 to 1e-4 with all else
    at the fit (-2lnL depends on sig_g^2 only, so at 0 its slope in sig_g is
    0 and the sign of this change is that of d(-2lnL)/d(sig_g^2));
    re-checked at the final point."""
    npar = len(x0)
    x, fx = minimise(f, x0, scale, lower, upper, tag=tag, polish=False)
    free = np.ones(npar, bool)

    def rises(x, j):
        xz = x.copy()
        xz[j] = 0.0
        xe = x.copy()
        xe[j] = 1e-4
        return f(xe) > f(xz)

    for k in range(NGROUP):
        j = 5 + k
        if x[j] < 1e-3 and rises(x, j):
            free[j] = False
            x[j] = 0.0
    idx = np.flatnonzero(free)

    def fsub(y):
        xx = x.copy()
        xx[idx] = y
        return f(xx)

    y, fx, dec, sc = newton_polish(fsub, x[idx], scale[idx].copy(), [lower[j] for j in idx],
                                   [upper[j] for j in idx], tag=tag)
    x[idx] = y
    scale = scale.copy()
    scale[idx] = sc
    for j in np.flatnonzero(~free):
        require(rises(x, j), f"{tag}: parameter {j} no longer at its bound after Newton")
    log(f"{tag}: at bound: {[int(j) - 4 for j in np.flatnonzero(~free)]} (groups)")
    return free, x, fx, dec, scale


def run_latent(D):
    names = latent_names()
    f = lambda x: latent_m2lnl(D, x)
    G = D.grp
    xm0 = np.array([D.x1[G == k].mean() for k in range(NGROUP)])
    xs0 = np.array([D.x1[G == k].std() for k in range(NGROUP)])
    cm0 = np.array([D.c[G == k].mean() for k in range(NGROUP)])
    cs0 = np.array([D.c[G == k].std() for k in range(NGROUP)])
    x0 = np.concatenate([[0.3, 0.14, 3.1, -0.05, -19.05], np.full(NGROUP, 0.1), xm0, xs0, cm0, cs0])
    scale = np.concatenate([[0.03, 0.01, 0.1, 0.02, 0.02], np.full(NGROUP, 0.01),
                            np.full(NGROUP, 0.1), np.full(NGROUP, 0.05),
                            np.full(NGROUP, 0.01), np.full(NGROUP, 0.005)])
    npar = len(x0)
    lower = [1e-9] + [None] * 4 + [0.0] * 4 + [None] * 4 + [1e-6] * 4 + [None] * 4 + [1e-6] * 4
    upper = [1 - 1e-9] + [None] * (npar - 1)
    free, x, fx, dec, scale = latent_fit(f, x0, scale, lower, upper, "latent")
    # Newton converged: predicted remaining decrease of -2lnL
    require(dec < 1e-6, f"latent: Newton decrement {dec:.2e}")
    # a second, perturbed start must reach the same -2lnL
    pert = np.where(np.arange(npar) < 5, 0.5, 0.3) * scale * np.tile([1, -1], npar)[:npar]
    free2, x2, f2, _, _ = latent_fit(f, x0 + pert, scale, lower, upper, "latent restart")
    log(f"latent restart: -2lnL difference {f2 - fx:.3e}, max |dx|/sd "
        f"{np.max(np.abs(x2 - x)[free] / scale[free]):.2e}")
    require(abs(f2 - fx) < 1e-6 and np.array_equal(free, free2),
            f"latent: restart reached a different -2lnL ({f2 - fx:.3e})")
    sd, rel = laplace(f, x, scale, lower, free, "latent")
    m2, quad = latent_m2lnl(D, x, parts=True)
    params = {}
    for j, n in enumerate(names):
        e = {"best": float(x[j]), "sd": None if not free[j] else float(sd[j])}
        if n.startswith("sigma_int@"):
            e["at_bound"] = bool(not free[j])
        params[n] = e
    return {"params": params, "m2lnl": float(m2), "chi2": float(quad)}


# ---------------------------------------------------------------- self-check
def check_limit(D):
    rng = np.random.default_rng(20110901)
    out = {}
    # distances: Gauss-Legendre vs scipy.integrate.quad
    worst = 0.0
    for om in (0.05, 0.3, 0.7, 1.0):
        gl = D.dm_over_dh(om)
        for i in range(0, D.n, 37):
            q, _ = integrate.quad(lambda z: 1.0 / math.sqrt(om * (1 + z) ** 3 + 1 - om),
                                  0.0, D.zcmb[i], epsabs=0.0, epsrel=1e-13)
            worst = max(worst, abs(gl[i] / q - 1.0))
    out["dm_gl_vs_quad_max_rel"] = worst
    require(worst < 1e-11, f"check-limit: D_M Gauss-Legendre vs quad {worst:.2e}")
    # Conditional of mb given (x1, color): the difference from the chi2
    # method's mean/variance falls as 1/width^2 (O(dx1^2/xs^2) relative);
    # at width 1e4 the variance is limited by float64 rounding in the Schur
    # complement S11 - S12 S22^-1 S21, since S11 ~ (alpha^2 + beta^2) 1e8:
    # the floor eps * max S11 is reported as well.
    base = np.concatenate([[0.3, 0.14, 3.1, -0.06, -19.05], rng.uniform(0.0, 0.15, NGROUP),
                           rng.normal(0, 0.5, NGROUP), np.zeros(NGROUP),
                           rng.normal(0, 0.05, NGROUP), np.zeros(NGROUP)])
    for big in (1e2, 1e3, 1e4):
        x = base.copy()
        x[13:17] = big
        x[21:25] = big
        mean, S = latent_moments(D, x)
        y = D.obs[:, 1:] - mean[:, 1:]
        S12 = S[:, 0, 1:]
        S22 = S[:, 1:, 1:]
        w = np.linalg.solve(S22, S12[:, :, None])[:, :, 0]  # S22^-1 S21
        cmean = mean[:, 0] + np.sum(w * y, axis=1)
        cvar = S[:, 0, 0] - np.sum(S12 * w, axis=1)
        r, v = chi2_parts(D, x[:5], x[5:9])
        pred = D.mb - r
        out[f"width_{big:g}"] = {"max_abs_mean_diff": float(np.max(np.abs(cmean - pred))),
                                 "max_abs_var_diff": float(np.max(np.abs(cvar - v))),
                                 "var_rounding_floor": float(np.finfo(float).eps * np.max(S[:, 0, 0]))}
    w2, w3, w4 = out["width_100"], out["width_1000"], out["width_10000"]
    require(w4["max_abs_mean_diff"] < 1e-7 and w4["max_abs_var_diff"] < 5 * w4["var_rounding_floor"],
            "check-limit: latent conditional does not reduce to the chi2 residual/variance")
    # and the check can fail: from width 1e2 to 1e3 the differences fall ~100x
    require(w3["max_abs_mean_diff"] < w2["max_abs_mean_diff"] / 50
            and w3["max_abs_var_diff"] < w2["max_abs_var_diff"] / 50,
            "check-limit: no 1/width^2 convergence")
    out["ok"] = not FAILURES
    return out


# ---------------------------------------------------------------- main
def main(argv):
    path = DEFAULT_DATA
    methods = ["chi2", "latent"]
    limit = False
    args = list(argv[1:])
    i = 0
    while i < len(args):
        a = args[i]
        if a == "--method":
            m = args[i + 1]
            if m not in ("chi2", "latent"):
                raise SystemExit("--method must be chi2 or latent")
            methods = [m]
            i += 2
            continue
        if a.startswith("--method="):
            methods = [a.split("=", 1)[1]]
        elif a == "--check-limit":
            limit = True
        elif a.startswith("--"):
            raise SystemExit("unknown option " + a)
        else:
            path = a
        i += 1
    D = Data(path)
    t0 = time.time()
    if limit:
        out = check_limit(D)
    else:
        out = {}
        for m in methods:
            t = time.time()
            out[m] = run_chi2(D) if m == "chi2" else run_latent(D)
            log(f"{m}: {time.time() - t:.1f} s")
    print(json.dumps(out, indent=1))
    log(f"total {time.time() - t0:.1f} s")
    return 1 if FAILURES else 0


if __name__ == "__main__":
    sys.exit(main(sys.argv))
