#!/usr/bin/env python3
"""DESI DR1 BAO posteriors computed with numpy/scipy, independently of
lantern's C code, for lantern's BAO tests to compare with.

Data: /work/shared/data/desi2024_bao/ (bao_dr1.csv, bao_dr1_cov.txt); the
12 means are DESI's published values, part of the covariance is from memory
of DESI 2024 VI (arXiv:2404.03002) Table 1: see that folder's SOURCE.md.
The folder is $LANTERN_SHARED/data/desi2024_bao, else ROOT/../shared/....

Sources, formula by formula:
- BAO quantities (SOURCE.md; DESI 2024 III, arXiv:2404.03000, sec. 2):
  dm_over_rd = D_M/r_d, dh_over_rd = D_H/r_d with D_H = c/H(z),
  dv_over_rd = D_V/r_d with D_V = (z D_M^2 D_H)^(1/3), da_over_rd =
  D_M/((1+z) r_d), rd_over_dv = r_d/D_V; chi2 = r^T C^-1 r (Gaussian
  likelihood, the covariance file as given).
- Background E(z), radiation off or on (photons from T_CMB by the
  Stefan-Boltzmann law, neutrinos by Komatsu et al. 2011 eq. 26), and r_d by
  Aubourg et al. 2015 (PRD 92, 123516) eq. 16: cmb_numpy.py beside this file,
  whose docstring names each source.
- The BBN Gaussian omega_b h^2 = 0.02218 +- 0.00055 is from memory of
  DESI 2024 VI, as SOURCE.md says.
- Distances: int_0^z dz'/E by Gauss-Legendre quadrature (numpy.polynomial.
  legendre.leggauss, 64 nodes on [0, z]; smooth integrand, checked against
  scipy.integrate.quad at 1e-12 in the self-checks), vectorised over the
  parameter grids.

Modes (JSON on stdout):
  alone      flat LCDM, radiation off, omega_m ~ U(0,1), rd_h = r_d h ~ U(50,150) Mpc
             (D_M/r_d = (c/100) int dz/E / rd_h): posterior means and sds on a
             uniform 2-D grid, the best fit and chi2_min.
  bbn        flat LCDM, radiation on (T_CMB 2.7255 K, N_eff 3.046, one 0.06 eV
             state), r_d from Aubourg eq. 16, omega_m ~ U(0,1), h0 ~ U(40,100),
             omega_b_h2 ~ U(0.005,0.1) times the BBN Gaussian: means and sds on
             a uniform 3-D grid, best fit and chi2_min (BAO + BBN).
  rd-planck  Aubourg eq. 16 for the Planck 2018 best fit beside Planck 2018 VI
             table 2's r_d = 147.09 Mpc (from memory).
  (none)     self-checks against SOURCE.md's independent numpy check, one
             "ok"/"not ok" line each (tests/run.sh runs it this way).

Grids: the posteriors are sums over uniform grids (the trapezoid rule with
end weights that do not matter, since the boxes are wide enough that the
weight on their faces is below 1e-8 of the peak: printed as edge_weight).
Each result is computed again on a grid about half as fine; the differences
are printed (half_grid_diff) as the grid's own error estimate. The fine box
is narrower than the prior; for `alone` a coarse grid over the whole prior
box measures the posterior mass outside it (mass_outside_box).
"""
import csv
import json
import math
import os
import sys

import numpy as np
from scipy.optimize import minimize, minimize_scalar

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import cmb_numpy as cn  # noqa: E402

ROOT = os.path.dirname(os.path.dirname(os.path.dirname(os.path.abspath(__file__))))
SHARED = os.environ.get("LANTERN_SHARED", os.path.join(os.path.dirname(ROOT), "shared"))
DESI = os.path.join(SHARED, "data", "desi2024_bao")
BBN_MEAN, BBN_SD = 0.02218, 0.00055
GL_NODES = 64
DIRECT = {"dm_over_rd", "dh_over_rd", "dv_over_rd", "da_over_rd"}


def load_bao(folder=DESI):
    with open(os.path.join(folder, "bao_dr1.csv")) as f:
        rows = list(csv.DictReader(f))
    z = np.array([float(r["z"]) for r in rows])
    kind = [r["quantity"] for r in rows]
    value = np.array([float(r["value"]) for r in rows])
    with open(os.path.join(folder, "bao_dr1_cov.txt")) as f:
        n = int(f.readline())
        cov = np.array([[float(x) for x in line.split()] for line in f if line.strip()])
    assert cov.shape == (n, n) == (len(z), len(z)), "covariance matches the table"
    return z, kind, value, cov


def shapes(bg, z, kind):
    """g_i with quantity_i = c / (H0 r_d) * g_i: H0 D_M/c, 1/E, ... for each row.
    bg's parameters broadcast; the row index is the last axis."""
    x, w = np.polynomial.legendre.leggauss(GL_NODES)
    out = []
    for zi, k in zip(z, kind):
        if k not in DIRECT:
            raise ValueError(f"{k}: the grid sums take quantities proportional to 1/r_d")
        # The nodes on [0, zi], then zi itself, along the parameters' trailing axis.
        inv_e = 1.0 / np.sqrt(bg.e2(np.append(0.5 * zi * (x + 1.0), zi)))
        dm = 0.5 * zi * np.sum(w * inv_e[..., :-1], axis=-1)
        dh = inv_e[..., -1]
        out.append({"dm_over_rd": dm, "dh_over_rd": dh, "da_over_rd": dm / (1 + zi),
                    "dv_over_rd": np.cbrt(zi * dm ** 2 * dh)}[k])
    return np.stack(np.broadcast_arrays(*out), axis=-1)


def background(p, radiation):
    """Parameters as arrays that broadcast; an extra trailing axis for the nodes."""
    q = {k: (np.asarray(v)[..., None] if np.ndim(v) else v) for k, v in p.items()}
    return cn.Background("lcdm-flat", q, radiation=radiation)


def quadratic_parts(g, value, icov):
    """chi2(K) = a - 2 K b + K^2 q for model = K g (K = c / (H0 r_d))."""
    return value @ icov @ value, g @ (icov @ value), np.einsum("...i,ij,...j->...", g, icov, g)


def moments(weight, axes_values):
    """Means and sds of each axis under grid weights."""
    total = weight.sum()
    out = []
    for i, v in enumerate(axes_values):
        marg = weight.sum(axis=tuple(j for j in range(weight.ndim) if j != i)) / total
        mean = float(np.sum(marg * v))
        out.append({"mean": mean, "sd": float(math.sqrt(np.sum(marg * (v - mean) ** 2)))})
    return out


def edge_weight(weight):
    """Largest weight on any face of the box over the peak weight."""
    peak, edge = weight.max(), 0.0
    for i in range(weight.ndim):
        edge = max(edge, np.take(weight, 0, axis=i).max(), np.take(weight, -1, axis=i).max())
    return float(edge / peak)


def alone_grid(data, om_axis, rdh_axis):
    z, kind, value, cov = data
    icov = np.linalg.inv(cov)
    g = shapes(background({"omega_m": om_axis}, False), z, kind)
    a, b, q = quadratic_parts(g, value, icov)
    k = (cn.C_KM_S / 100.0) / rdh_axis                           # c / (H0 r_d) = (c/100) / rd_h
    chi2 = a - 2 * b[:, None] * k[None, :] + q[:, None] * k[None, :] ** 2
    return chi2


def alone(data, n=801, box=((0.19, 0.41), (93.0, 111.0))):
    def run(n):
        om, rdh = np.linspace(*box[0], n), np.linspace(*box[1], n)
        chi2 = alone_grid(data, om, rdh)
        w = np.exp(-0.5 * (chi2 - chi2.min()))
        return moments(w, (om, rdh)), w, chi2
    (m_om, m_rd), w, chi2 = run(n)
    (h_om, h_rd), _, _ = run(n // 2 + 1)
    # Mass outside the fine box, from a coarse grid over the whole prior box.
    om_c, rd_c = np.linspace(0.0005, 0.9995, 1000), np.linspace(50.05, 149.95, 1000)
    chi2_c = alone_grid(data, om_c, rd_c)
    w_c = np.exp(-0.5 * (chi2_c - chi2_c.min()))
    inside = np.outer((om_c >= box[0][0]) & (om_c <= box[0][1]),
                      (rd_c >= box[1][0]) & (rd_c <= box[1][1]))
    # Best fit: rd_h profiled exactly (K = b/q), then omega_m by Brent's method.
    z, kind, value, cov = data
    icov = np.linalg.inv(cov)

    def profiled(om):
        a, b, q = quadratic_parts(shapes(background({"omega_m": om}, False), z, kind),
                                  value, icov)
        return float(a - b * b / q), float(b / q)
    i0 = np.unravel_index(np.argmin(chi2), chi2.shape)[0]
    om0 = np.linspace(*box[0], n)[i0]
    best = minimize_scalar(lambda om: profiled(om)[0], bracket=(om0 - 0.01, om0, om0 + 0.01),
                           tol=1e-12)
    chi2_min, kbest = profiled(best.x)
    return {"omega_m": m_om, "rd_h": m_rd,
            "best": {"omega_m": float(best.x), "rd_h": cn.C_KM_S / 100.0 / kbest},
            "chi2_min": chi2_min, "n_points": len(value),
            "grid": {"omega_m": [*box[0], n], "rd_h": [*box[1], n],
                     "edge_weight": edge_weight(w),
                     "mass_outside_box": float(w_c[~inside].sum() / w_c.sum()),
                     "half_grid_diff": {"omega_m_mean": h_om["mean"] - m_om["mean"],
                                        "omega_m_sd": h_om["sd"] - m_om["sd"],
                                        "rd_h_mean": h_rd["mean"] - m_rd["mean"],
                                        "rd_h_sd": h_rd["sd"] - m_rd["sd"]}},
            "source_md": {"omega_m": [0.2951, 0.0146], "rd_h": [101.88, 1.26],
                          "best": [0.2940, 101.93], "chi2_min": 12.73}}


def bbn_chi2(data, om, h, wb, m_nu=0.06):
    """BAO chi2 + BBN chi2 on the grid om x h x wb (1-D axes, or scalars)."""
    z, kind, value, cov = data
    icov = np.linalg.inv(cov)
    om2, h2 = np.meshgrid(np.atleast_1d(om), np.atleast_1d(h), indexing="ij")
    bg = background({"omega_m": om2, "h0": 100.0 * h2, "m_nu": m_nu}, True)
    a, b, q = quadratic_parts(shapes(bg, z, kind), value, icov)
    wb3 = np.atleast_1d(wb)[None, None, :]
    rd = cn.rd_aubourg(wb3, (om2 * h2 ** 2)[..., None], m_nu)
    k = cn.C_KM_S / (100.0 * h2[..., None] * rd)
    return (a - 2 * b[..., None] * k + q[..., None] * k ** 2
            + ((wb3 - BBN_MEAN) / BBN_SD) ** 2)


def bbn(data, n=(121, 121, 61), box=((0.19, 0.41), (0.625, 0.755), (0.01778, 0.02658))):
    def run(n):
        axes = [np.linspace(*box[i], n[i]) for i in range(3)]
        chi2 = bbn_chi2(data, *axes)
        w = np.exp(-0.5 * (chi2 - chi2.min()))
        return moments(w, axes), w, chi2, axes
    (m_om, m_h, m_wb), w, chi2, axes = run(n)
    # the derived r_d and r_d h (Aubourg eq. 16) under the same weights
    om3, h3, wb3 = np.meshgrid(*axes, indexing="ij")
    rd3 = cn.rd_aubourg(wb3, om3 * h3 ** 2, 0.06)
    derived = {}
    for name, v in (("rd", rd3), ("rd_h", rd3 * h3)):
        mean = float(np.sum(w * v) / w.sum())
        derived[name] = {"mean": mean, "sd": float(math.sqrt(np.sum(w * (v - mean) ** 2) / w.sum()))}
    (h_om, h_h, h_wb), _, _, _ = run(tuple(k // 2 + 1 for k in n))
    i = np.unravel_index(np.argmin(chi2), chi2.shape)
    start = [axes[j][i[j]] for j in range(3)]
    fit = minimize(lambda x: float(bbn_chi2(data, x[0], x[1], x[2])[0, 0, 0]), start,
                   method="Nelder-Mead",
                   options={"xatol": 1e-9, "fatol": 1e-11, "maxiter": 20000})

    def scale_h(m):
        return {"mean": 100 * m["mean"], "sd": 100 * m["sd"]}
    return {"h0": scale_h(m_h), "omega_m": m_om, "omega_b_h2": m_wb, **derived,
            "best": {"omega_m": float(fit.x[0]), "h0": 100 * float(fit.x[1]),
                     "omega_b_h2": float(fit.x[2])},
            "chi2_min": float(fit.fun),
            "grid": {"omega_m": [*box[0], n[0]], "h": [*box[1], n[1]],
                     "omega_b_h2": [*box[2], n[2]], "edge_weight": edge_weight(w),
                     "half_grid_diff": {"h0_mean": 100 * (h_h["mean"] - m_h["mean"]),
                                        "h0_sd": 100 * (h_h["sd"] - m_h["sd"]),
                                        "omega_m_mean": h_om["mean"] - m_om["mean"],
                                        "omega_m_sd": h_om["sd"] - m_om["sd"]}},
            "source_md": {"h0": [68.75, 0.81], "omega_m": [0.2955, 0.0147],
                          "published_desi_bbn_h0": [68.53, 0.80]}}


def rd_planck():
    wb, wc, m_nu = 0.02237, 0.1200, 0.06
    rd = float(cn.rd_aubourg(wb, wb + wc + m_nu / cn.EV_PER_NU_H2, m_nu))
    return {"rd_aubourg_mpc": rd, "rd_planck2018_mpc": 147.09,
            "relative_difference": rd / 147.09 - 1}


def self_checks(data):
    report = cn.Report()

    # Gauss-Legendre distances against scipy quad (cmb_numpy), radiation on.
    z = np.array([0.295, 1.317, 2.33])
    p = {"omega_m": 0.31, "h0": 68.0, "m_nu": 0.06}
    g = shapes(background(p, True), z, ["dm_over_rd"] * 3)
    ref = [cn.comoving_h0_over_c(cn.Background("lcdm-flat", p), zi) for zi in z]
    rel = float(np.max(np.abs(g / ref - 1)))
    report(rel < 1e-12, f"Gauss-Legendre D_M equals quad (relative {rel:.1e} < 1e-12)")

    # SOURCE.md's independent numpy check, to the digits it quotes (half a unit
    # of the last digit, plus 1e-4 of the value for a different grid).
    r = alone(data)
    for name, want in (("omega_m", (0.2951, 0.0146)), ("rd_h", (101.88, 1.26))):
        have = (r[name]["mean"], r[name]["sd"])
        tol = [0.5 * 10 ** -(len(f"{v}".split(".")[1])) + 1e-4 * v for v in want]
        report(all(abs(h - v) <= t for h, v, t in zip(have, want, tol)),
               f"BAO alone {name} = {have[0]:.5f} +- {have[1]:.5f} (SOURCE.md "
               f"{want[0]} +- {want[1]})")
    report(abs(r["chi2_min"] - 12.73) <= 0.006 and abs(r["best"]["omega_m"] - 0.2940) <= 6e-5
           and abs(r["best"]["rd_h"] - 101.93) <= 0.006,
           f"BAO alone best fit omega_m {r['best']['omega_m']:.5f}, rd_h "
           f"{r['best']['rd_h']:.4f}, chi2_min {r['chi2_min']:.4f} (SOURCE.md 0.2940, "
           f"101.93, 12.73)")
    # SOURCE.md does not say how its BBN check treated radiation and the
    # neutrino in E(z); this reference differs from it by 0.06 sd in H0 and
    # 0.03 sd in omega_m, so SOURCE.md's numbers serve as a sanity range here
    # (0.1 sd in the means, 2 % in the sds), not as a tight reference.
    report_grid(report, "BAO alone", r["grid"])
    r = bbn(data)
    for name, want in (("h0", (68.75, 0.81)), ("omega_m", (0.2955, 0.0147))):
        have = (r[name]["mean"], r[name]["sd"])
        report(abs(have[0] - want[0]) <= 0.1 * want[1] and abs(have[1] / want[1] - 1) <= 0.02,
               f"BAO + BBN {name} = {have[0]:.5f} +- {have[1]:.5f} (SOURCE.md "
               f"{want[0]} +- {want[1]}; difference {(have[0] - want[0]) / want[1]:+.3f} sd)")
    report_grid(report, "BAO + BBN", r["grid"])
    return report.failures


def report_grid(report, label, grid):
    """The box is wide (face weight, mass outside) and the grid fine (half-grid change)."""
    change = max(abs(v) for v in grid["half_grid_diff"].values())
    outside = grid.get("mass_outside_box")
    note = "" if outside is None else f", mass outside the box {outside:.1e}"
    report(grid["edge_weight"] < 1e-8 and (outside or 0.0) < 1e-8 and change < 1e-6,
           f"{label} grid wide and fine enough (face weight {grid['edge_weight']:.1e}{note}, "
           f"largest half-grid change of a mean or sd {change:.1e})")


def main(argv):
    data = load_bao()
    mode = argv[1] if len(argv) > 1 else None
    if mode is None:
        return 1 if self_checks(data) else 0
    out = {"alone": alone, "bbn": bbn, "rd-planck": lambda d: rd_planck()}.get(mode)
    if out is None:
        print("usage: bao_numpy.py [alone|bbn|rd-planck]", file=sys.stderr)
        return 2
    print(json.dumps(out(data), indent=1))
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv))
