"""Calibrators and H0 in closed form (issue 21), an independent reference.

Writes a simulated light-curve table (seeded numpy draws, no real data):
calibrators whose host distance moduli are known, a Hubble flow, and a few
low-redshift objects that a --zmin cut must drop, then prints (JSON) the
generalised-least-squares solution for M and H0 with omega_m, alpha, beta
and sigma_int fixed (Aitken 1935; any regression text: theta =
(X^T W X)^-1 X^T W y, Cov theta = (X^T W X)^-1).

With alpha = beta = 0 the magnitudes are linear in (M, y), y = 5 log10(h0 /
70): Hubble flow mb = mu_70(z) - y + M, calibrators mb = calib_mu + M, mu_70
from astropy.cosmology.FlatLambdaCDM(H0=70, Om0=0.3, Tcmb0=0).distmod. The
variances are err_mb^2 + sigma_int^2 + (0.055 z)^2 for the Hubble flow
(lensing, Jonsson et al. 2010; no peculiar velocities: the fit is run with
--velocity-dispersion 0) and err_mb^2 + sigma_int^2 + err_calib_mu^2 for a
calibrator. H0 = 70 10^(y/5); its sd by the delta method (exact for the
Laplace error at the mode, where the gradient vanishes). Under "mag": the
same table read as standardised magnitudes (mag = mb), whose variances are
err_mb^2, plus err_calib_mu^2 for a calibrator. Under "calib_cov": the
light-curve case with the calibrators' covariance given as a matrix (their
errors squared plus a shared 0.02^2), written to TABLE.calib_cov.txt.

usage: calibrators_gls.py TABLE.csv > reference.json
"""
import json
import math
import sys

import numpy as np
from astropy.cosmology import FlatLambdaCDM

H0_TRUE, M_TRUE, SIG, OM, ZMIN = 73.0, -19.25, 0.1, 0.3, 0.015


def main(path):
    rng = np.random.default_rng(20261204)
    ncal, nhf, nlow = 40, 300, 12
    z_cal = rng.uniform(0.002, 0.008, ncal)
    z_hf = rng.uniform(0.02, 0.8, nhf)
    z_low = rng.uniform(0.005, 0.012, nlow)  # below the cut, not calibrators
    truth = FlatLambdaCDM(H0=H0_TRUE, Om0=OM, Tcmb0=0)
    mu_cal = truth.distmod(z_cal).value
    e_cal = rng.uniform(0.03, 0.08, ncal)
    calib_mu = mu_cal + rng.normal(0, 1, ncal) * e_cal
    z = np.concatenate([z_cal, z_hf, z_low])
    cal = np.concatenate([np.ones(ncal, int), np.zeros(nhf + nlow, int)])
    n = z.size
    err_mb = rng.uniform(0.08, 0.15, n)
    lens = np.where(cal == 1, 0.0, 0.055 * z)
    mu_true = truth.distmod(z).value
    mb = mu_true + M_TRUE + rng.normal(0, 1, n) * np.sqrt(err_mb**2 + SIG**2 + lens**2)
    x1 = rng.normal(0.0, 1.0, n)
    c = rng.normal(0.0, 0.1, n)
    with open(path, "w") as f:
        f.write("name,z,mb,dmb,x1,dx1,c,dc,cal,mu_ext,dmu_ext\n")
        for i in range(n):
            mu_ext = "%.6f" % calib_mu[i] if cal[i] else "nan"
            dmu = "%.6f" % e_cal[i] if cal[i] else "nan"
            f.write("lamp%03d,%.6f,%.6f,%.6f,%.6f,0.1,%.6f,0.03,%d,%s,%s\n"
                    % (i, z[i], mb[i], err_mb[i], x1[i], c[i], cal[i], mu_ext, dmu))

    # the GLS on the values as written (six decimals)
    t = np.genfromtxt(path, delimiter=",", names=True, dtype=None, encoding="ascii")
    z, mb, err_mb, cal = t["z"], t["mb"], t["dmb"], t["cal"]
    calib_mu, e_cal = np.nan_to_num(t["mu_ext"]), np.nan_to_num(t["dmu_ext"])
    keep = (cal == 1) | (z >= ZMIN)
    mu70 = FlatLambdaCDM(H0=70.0, Om0=OM, Tcmb0=0).distmod(z).value
    var = err_mb**2 + SIG**2 + np.where(cal == 1, e_cal**2, (0.055 * z)**2)
    X = np.column_stack([np.ones(n), np.where(cal == 1, 0.0, -1.0)])[keep]
    base = np.where(cal == 1, calib_mu, mu70)[keep]

    def gls(var):
        W = 1.0 / var[keep]
        A = X.T @ (W[:, None] * X)
        theta = np.linalg.solve(A, X.T @ (W * (mb[keep] - base)))
        cov = np.linalg.inv(A)
        M, y = theta
        h0 = 70.0 * 10 ** (y / 5)
        sd_m, sd_y = np.sqrt(np.diag(cov))
        sd_h0 = h0 * np.log(10) / 5 * sd_y
        corr = cov[0, 1] / (sd_m * sd_y)  # h0 rises with y: the same sign
        return {"M": M, "sd_M": sd_m, "h0": h0, "sd_h0": sd_h0, "corr": corr,
                "n_kept": int(keep.sum()), "n_cal": ncal, "h0_true": H0_TRUE,
                "M_true": M_TRUE}

    out = gls(var)
    # the calibrators' own covariance instead of err_calib_mu: their
    # errors plus a shared 0.02 mag anchor (written beside the table, for
    # --calib-cov); the GLS then needs the full matrix
    kcal = np.diag(e_cal[cal == 1] ** 2) + 0.02 ** 2
    with open(path + ".calib_cov.txt", "w") as f:
        f.write("%d\n" % kcal.shape[0])
        for row in kcal:
            f.write(" ".join(repr(v) for v in row) + "\n")
    C = np.diag(np.where(cal == 1, err_mb**2 + SIG**2, var))
    ic = np.flatnonzero(cal == 1)
    C[np.ix_(ic, ic)] += kcal
    C = C[np.ix_(keep, keep)]
    Ci = np.linalg.inv(C)
    A = X.T @ Ci @ X
    theta = np.linalg.solve(A, X.T @ Ci @ (mb[keep] - base))
    cv = np.linalg.inv(A)
    h0 = 70.0 * 10 ** (theta[1] / 5)
    out["calib_cov"] = {"M": theta[0], "sd_M": math.sqrt(cv[0, 0]), "h0": h0,
                        "sd_h0": h0 * np.log(10) / 5 * math.sqrt(cv[1, 1])}
    # the same table read as standardised magnitudes (mag = mb, err = dmb):
    # no scatter or lensing is added, only a calibrator's distance error
    out["mag"] = gls(err_mb**2 + np.where(cal == 1, e_cal**2, 0.0))
    json.dump(out, sys.stdout)


if __name__ == "__main__":
    main(sys.argv[1])
