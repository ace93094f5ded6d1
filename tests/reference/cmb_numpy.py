#!/usr/bin/env python3
"""Early-universe quantities for lantern's CMB and BAO terms, computed with
numpy/scipy from the published formulas, independently of lantern's C code.

Sources, formula by formula:
- Photon density: the Stefan-Boltzmann law, rho_gamma = 4 sigma_SB T^4 / c^3,
  over the critical density 3 H0^2 / (8 pi G); sigma_SB = 2 pi^5 k^4 /
  (15 h^3 c^2) from the exact SI constants in scipy.constants (scipy's own
  `sigma` is CODATA's value rounded to 10 digits, 3e-11 from the exact one),
  G (CODATA 2018) and the parsec (IAU 2015 B2: au * 648000 / pi) from
  scipy.constants. astropy.cosmology computes Ogamma0 the same way; the
  self-test below requires agreement to 1e-12.
- Neutrinos: T_nu0 = (4/11)^(1/3) T_CMB; N_eff shared equally by 3 species;
  the sum of masses m_nu in ONE massive state, the other two massless; the
  density by the fitting function of Komatsu et al. 2011 (ApJS 192, 18,
  eq. 26) as astropy.cosmology.FLRW.nu_relative_density implements it:
  Omega_nu(z) = Omega_gamma (1+z)^4 0.22710731766 (N_eff/3)
                [n_massless + f(y/(1+z))],
  f(y) = (1 + (0.3173 y)^1.83)^(1/1.83), y = m_nu / (k_B T_nu0).
  (astropy writes 1/1.83 as 0.54644808743; the 1.7e-12 relative difference
  changes E(z) by less than 1e-12 for m_nu <= 1 eV.) m_nu = 0 means three
  massless species, as in astropy.
- lantern's conventions (DESIGN.md of the project): omega_m includes the
  massive neutrinos today, omega_m = Omega_cb + Omega_nu_massive(0);
  omega_r = Omega_gamma (1 + 0.22710731766 (N_eff/3) n_massless); flat
  models close with omega_de = 1 - omega_m - omega_r; curved ones have
  omega_k = 1 - omega_m - omega_de - omega_r; w0-wa dark energy
  rho_de ~ (1+z)^(3(1+w0+wa)) exp(-3 wa z/(1+z)) (Chevallier & Polarski 2001,
  Linder 2003). With radiation off, E^2 = omega_m (1+z)^3 + omega_k (1+z)^2
  + omega_de rho_de(z)/rho_de(0).
- Sound horizon at the drag epoch: Aubourg et al. 2015 (PRD 92, 123516,
  eq. 16), r_d = 55.154 exp[-72.3 (omega_nu h^2 + 0.0006)^2] /
  ((omega_cb h^2)^0.25351 (omega_b h^2)^0.12807) Mpc, omega_nu h^2 =
  m_nu / 93.14 eV, omega_cb h^2 = omega_m h^2 - omega_nu h^2.
- Decoupling redshift: Hu & Sugiyama 1996 (ApJ 471, 542, eqs. E1-E3), with
  omega_m h^2 including massive neutrinos.
- r_s(z_*) = int_{z_*}^inf c_s / H dz, c_s = c / sqrt(3 (1 + R_b)),
  R_b = 3 omega_b h^2 / (4 omega_gamma h^2 (1+z)); R = sqrt(omega_m) H0
  D_M(z_*) / c and l_A = pi D_M(z_*) / r_s(z_*) (the definitions in Chen,
  Huang & Wang 2019, JCAP 02, 028, as /work/shared/data/cmb_distance_priors/
  SOURCE.md states them).
- Integrals: scipy.integrate.quad (QUADPACK) at epsabs 0, epsrel 1e-11, in
  the scale factor a = 1/(1+z), where int dz / E = int da / sqrt(a^4 E^2)
  and a^4 E^2 tends to the radiation density as a -> 0, so the infinite
  upper limit of r_s becomes a finite, smooth integral on [0, a_*].

Use:
  /usr/bin/python3 cmb_numpy.py MODEL PARAMS_JSON   (a JSON object or a file)
      prints {"z_star", "rs_star_mpc", "shift_r", "acoustic_l", "rd_mpc"}
      for lantern parameters h0, omega_m, [omega_de], [w0], [wa], omega_b_h2,
      [m_nu = 0.06], [t_cmb = 2.7255], [n_eff = 3.046].
  /usr/bin/python3 cmb_numpy.py planck   the Planck 2018 best fit, beside
      the numbers of SOURCE.md.
  /usr/bin/python3 cmb_numpy.py          self-checks, one "ok"/"not ok" line
      each (tests/run.sh runs it this way).
bao_numpy.py and astropy_neutrinos.py import the background from here.
"""
import json
import math
import os
import sys

import numpy as np
import scipy.constants as sc
from scipy.integrate import quad

C_KM_S = sc.c / 1e3                       # 299792.458, exact
T_CMB = 2.7255
N_EFF = 3.046
M_NU_DEFAULT = 0.06
NU_PREFAC = 0.22710731766                 # 7/8 (4/11)^(4/3), Komatsu et al. 2011 eq. 26 / astropy
KOMATSU_P, KOMATSU_K = 1.83, 0.3173       # Komatsu et al. 2011, eq. 26
EV_PER_NU_H2 = 93.14                      # Aubourg et al. 2015, below eq. 16
EPSREL = 1e-11
MODELS = ("lcdm-flat", "lcdm", "wcdm-flat", "wcdm", "w0wa-flat", "w0wa")


def omega_gamma_h2(t_cmb):
    """Omega_gamma h^2 from the Stefan-Boltzmann law (SI throughout)."""
    sigma_sb = 2 * math.pi ** 5 * sc.k ** 4 / (15 * sc.h ** 3 * sc.c ** 2)
    rho_gamma = 4 * sigma_sb * t_cmb ** 4 / sc.c ** 3               # kg m^-3
    h100_s = 1e5 / (1e6 * sc.parsec)                                # 100 km/s/Mpc in s^-1
    rho_crit_h2 = 3 * h100_s ** 2 / (8 * math.pi * sc.G)            # kg m^-3 per h^2
    return rho_gamma / rho_crit_h2


def nu_y(m_nu, t_cmb):
    """m_nu / (k_B T_nu0) for the one massive state."""
    kb_ev = sc.k / sc.e
    return m_nu / (kb_ev * (4.0 / 11.0) ** (1.0 / 3.0) * t_cmb)


def komatsu_f(y):
    """Komatsu et al. 2011 eq. 26: massive-species density over its massless value."""
    return (1.0 + (KOMATSU_K * y) ** KOMATSU_P) ** (1.0 / KOMATSU_P)


class Background:
    """E(z) of lantern's conventions. Parameters may be numpy arrays that
    broadcast against each other and against z (used by the BAO grids)."""

    def __init__(self, model, p, radiation=True):
        if model not in MODELS:
            raise ValueError(f"unknown model {model}")
        h = np.asarray(p["h0"], dtype=float) / 100.0 if "h0" in p else None
        self.omega_m = np.asarray(p["omega_m"], dtype=float)
        self.w0 = p.get("w0", -1.0) if model.startswith("w") else -1.0
        self.wa = p.get("wa", 0.0) if model.startswith("w0wa") else 0.0
        self.radiation = radiation
        if radiation:
            t_cmb, n_eff = p.get("t_cmb", T_CMB), p.get("n_eff", N_EFF)
            m_nu = p.get("m_nu", M_NU_DEFAULT)
            self.og = omega_gamma_h2(t_cmb) / h ** 2
            self.nu_unit = self.og * NU_PREFAC * n_eff / 3.0   # one massless species today
            self.n_massless = 2 if m_nu > 0 else 3
            self.y = nu_y(m_nu, t_cmb) if m_nu > 0 else 0.0
            self.onu_massive0 = self.nu_unit * komatsu_f(self.y) if m_nu > 0 else 0.0 * self.og
            self.omega_r = self.og + self.nu_unit * self.n_massless
        else:
            self.og = self.nu_unit = self.onu_massive0 = self.omega_r = 0.0
        self.omega_cb = self.omega_m - self.onu_massive0
        if model.endswith("-flat"):
            self.omega_de = 1.0 - self.omega_m - self.omega_r
            self.omega_k = 0.0 * self.omega_de
        else:
            self.omega_de = np.asarray(p["omega_de"], dtype=float)
            self.omega_k = 1.0 - self.omega_m - self.omega_de - self.omega_r

    def de_scale(self, zp1):
        """rho_de(z) / rho_de(0) for w0-wa (constant w and Lambda as cases)."""
        return zp1 ** (3 * (1 + self.w0 + self.wa)) * np.exp(-3 * self.wa * (1 - 1 / zp1))

    def nu_density(self, zp1):
        """Omega_nu(z) (all three species) in units of the critical density today."""
        if not self.radiation:
            return 0.0
        rel = self.n_massless + (komatsu_f(self.y / zp1) if self.n_massless == 2 else 0.0)
        return self.nu_unit * zp1 ** 4 * rel

    def e2(self, z):
        zp1 = 1.0 + np.asarray(z, dtype=float)
        return (self.omega_cb * zp1 ** 3 + self.og * zp1 ** 4 + self.nu_density(zp1)
                + self.omega_k * zp1 ** 2 + self.omega_de * self.de_scale(zp1))

    def a4e2(self, a):
        """a^4 E^2(a), finite as a -> 0 (radiation domination)."""
        rel = 0.0
        if self.radiation:
            rel = self.n_massless + (komatsu_f(self.y * a) if self.n_massless == 2 else 0.0)
        return (self.omega_cb * a + self.og + self.nu_unit * rel + self.omega_k * a ** 2
                + self.omega_de * a ** (1 - 3 * (self.w0 + self.wa)) * np.exp(-3 * self.wa * (1 - a)))


def comoving_h0_over_c(bg, z):
    """H0 D_C / c = int_0^z dz'/E, by quad in a (scalar parameters only)."""
    a_lo = 1.0 / (1.0 + z)
    val, _ = quad(lambda a: 1.0 / math.sqrt(bg.a4e2(a)), a_lo, 1.0,
                  epsabs=0.0, epsrel=EPSREL, limit=200)
    return val


def transverse_h0_over_c(bg, z):
    """H0 D_M / c: D_C bent by the curvature."""
    dc = comoving_h0_over_c(bg, z)
    ok = float(bg.omega_k)
    if abs(ok) < 1e-300:
        return dc
    s = math.sqrt(abs(ok))
    return (math.sinh(s * dc) if ok > 0 else math.sin(s * dc)) / s


def z_star(wb, wm):
    """Hu & Sugiyama 1996, eqs. E1-E3."""
    g1 = 0.0783 * wb ** -0.238 / (1 + 39.5 * wb ** 0.763)
    g2 = 0.560 / (1 + 21.1 * wb ** 1.81)
    return 1048 * (1 + 0.00124 * wb ** -0.738) * (1 + g1 * wm ** g2)


def r_s(zs, bg, h0, omega_b_h2, t_cmb=T_CMB):
    """Comoving sound horizon at zs, int_zs^inf c_s/H dz, in Mpc."""
    ratio = 3.0 * omega_b_h2 / (4.0 * omega_gamma_h2(t_cmb))     # R_b = ratio * a

    def integrand(a):
        return 1.0 / (math.sqrt(3.0 * (1.0 + ratio * a)) * math.sqrt(bg.a4e2(a)))
    val, _ = quad(integrand, 0.0, 1.0 / (1.0 + zs), epsabs=0.0, epsrel=EPSREL, limit=200)
    return C_KM_S / h0 * val


def shift_r(bg, h0, zs):
    """R = sqrt(omega_m) H0 D_M(z_*) / c."""
    return math.sqrt(float(bg.omega_m)) * transverse_h0_over_c(bg, zs)


def acoustic_l(bg, h0, zs, rs):
    """l_A = pi D_M(z_*) / r_s(z_*)."""
    return math.pi * C_KM_S / h0 * transverse_h0_over_c(bg, zs) / rs


def rd_aubourg(omega_b_h2, omega_m_h2, m_nu):
    """Aubourg et al. 2015 eq. 16 (Mpc); omega_m_h2 includes the neutrinos."""
    onu = m_nu / EV_PER_NU_H2
    ocb = omega_m_h2 - onu
    return 55.154 * np.exp(-72.3 * (onu + 0.0006) ** 2) / (ocb ** 0.25351 * omega_b_h2 ** 0.12807)


def cmb_quantities(model, p):
    p = dict(p)
    p.setdefault("m_nu", M_NU_DEFAULT)
    p.setdefault("t_cmb", T_CMB)
    p.setdefault("n_eff", N_EFF)
    bg = Background(model, p, radiation=True)
    h0, wb = p["h0"], p["omega_b_h2"]
    wm = p["omega_m"] * (h0 / 100.0) ** 2
    zs = z_star(wb, wm)
    rs = r_s(zs, bg, h0, wb, p["t_cmb"])
    return {"z_star": zs, "rs_star_mpc": rs, "shift_r": shift_r(bg, h0, zs),
            "acoustic_l": acoustic_l(bg, h0, zs, rs),
            "rd_mpc": float(rd_aubourg(wb, wm, p["m_nu"]))}


def planck2018():
    """Planck 2018 VI table 2 best fit (values from memory, as in the brief)."""
    h0, wb, wc, m_nu = 67.36, 0.02237, 0.1200, 0.06
    return {"h0": h0, "omega_m": (wb + wc + m_nu / EV_PER_NU_H2) / (h0 / 100) ** 2,
            "omega_b_h2": wb, "m_nu": m_nu}


class Report:
    """Prints one "ok"/"not ok" line per check and counts the failures."""

    def __init__(self):
        self.failures = 0

    def __call__(self, good, text):
        print(f"{'ok' if good else 'not ok'} - {text}")
        self.failures += not good


def self_checks():
    """Checks of this module against independent routes; returns failures."""
    from astropy import cosmology as ac
    report = Report()

    # 1. D_M(z_*) by quad in a against astropy's comoving_transverse_distance
    #    (quad at its default 1.5e-8), curved w0-wa with a massive neutrino.
    p = {"h0": 70.0, "omega_m": 0.3, "omega_de": 0.65, "w0": -0.9, "wa": -0.3,
         "omega_b_h2": 0.0224, "m_nu": 0.3}
    bg = Background("w0wa", p)
    ref = ac.w0waCDM(H0=70.0, Om0=0.3 - float(bg.onu_massive0), Ode0=0.65, w0=-0.9, wa=-0.3,
                     Tcmb0=T_CMB, Neff=N_EFF, m_nu=[0.0, 0.0, 0.3])
    zs = z_star(0.0224, 0.3 * 0.49)
    have = C_KM_S / 70.0 * transverse_h0_over_c(bg, zs)
    want = ref.comoving_transverse_distance(zs).value
    rel = abs(have / want - 1)
    report(rel < 1e-7, f"D_M(z_*={zs:.2f}) equals astropy w0waCDM comoving_transverse_distance "
           f"(relative {rel:.1e} < 1e-7)")

    # 2. r_s by quad in a against quad in ln(1+z) up to z = 1e11 plus the
    #    analytic radiation-era tail beyond (c_s = c/sqrt(3), H = H0 sqrt(a4e2(0)) (1+z)^2).
    pl = planck2018()
    bg = Background("lcdm-flat", pl)
    zs = z_star(pl["omega_b_h2"], pl["omega_m"] * 0.6736 ** 2)
    rs_a = r_s(zs, bg, 67.36, pl["omega_b_h2"])
    ratio = 3 * pl["omega_b_h2"] / (4 * omega_gamma_h2(T_CMB))
    zmax = 1e11

    def dlnz(u):
        zp1 = math.exp(u)
        return zp1 / (math.sqrt(3 * (1 + ratio / zp1)) * math.sqrt(float(bg.e2(zp1 - 1))))
    body, _ = quad(dlnz, math.log1p(zs), math.log1p(zmax), epsabs=0, epsrel=1e-12, limit=400)
    tail = 1 / (math.sqrt(3) * math.sqrt(float(bg.a4e2(0.0))) * (1 + zmax))
    rs_z = C_KM_S / 67.36 * (body + tail)
    rel = abs(rs_a / rs_z - 1)
    report(rel < 1e-10, f"r_s(z_*) by quad in a equals quad in ln(1+z) plus radiation tail "
           f"(relative {rel:.1e} < 1e-10)")

    # 3. The Planck 2018 best fit against SOURCE.md's own numpy check
    #    (R = 1.7500, l_A = 302.12, z_* = 1091.9 to the digits it quotes) and
    #    r_d against Planck 2018 VI table 2 (147.09 Mpc, from memory; eq. 16 is a
    #    fit, so 0.1 % is asked, not more).
    q = cmb_quantities("lcdm-flat", pl)
    report(abs(q["shift_r"] - 1.7500) < 6e-5 and abs(q["acoustic_l"] - 302.12) < 6e-3
           and abs(q["z_star"] - 1091.9) < 0.06,
           f"Planck 2018 best fit: R = {q['shift_r']:.5f} (SOURCE.md 1.7500), "
           f"l_A = {q['acoustic_l']:.4f} (302.12), z_* = {q['z_star']:.3f} (1091.9)")
    rel = q["rd_mpc"] / 147.09 - 1
    report(abs(rel) < 1e-3, f"Aubourg eq. 16 r_d = {q['rd_mpc']:.3f} Mpc vs Planck 2018 VI "
           f"147.09 (relative {rel:+.1e})")

    # 4. Hu & Sugiyama E1-E3 against a second transcription of the same
    #    equations (in logs, written separately from the paper); it catches a
    #    mistyped exponent in one of them, nothing more.
    zs = z_star(0.02, 0.15)
    report(abs(zs - z_star_by_hand()) < 1e-9, f"z_*(0.02, 0.15) = {zs:.4f}")
    return report.failures


def z_star_by_hand():
    """E1-E3 spelt out step by step with logs, a second transcription."""
    wb, wm = 0.02, 0.15
    lwb = math.log(wb)
    e1 = 1 + 0.00124 * math.exp(-0.738 * lwb)
    g1 = 0.0783 * math.exp(-0.238 * lwb) / (1 + 39.5 * math.exp(0.763 * lwb))
    g2 = 0.560 / (1 + 21.1 * math.exp(1.81 * lwb))
    return 1048 * e1 * (1 + g1 * math.exp(g2 * math.log(wm)))


def against_lantern(report):
    """lantern distance's "early_universe" (radiation on) against this
    module for random parameters of every model: r_d, z_*, r_s(z_*), R and
    l_A to 1e-6 relative (lantern's quadratures are checked at 1e-10 against
    GSL in tests/reference/test_early.c; 1e-6 is the issue's tolerance)."""
    import random
    import subprocess
    from astropy_distances import run_lantern
    rng = random.Random(20261203)
    for model in ["lcdm-flat", "lcdm", "wcdm-flat", "wcdm", "w0wa-flat", "w0wa"]:
        worst = 0.0
        for _ in range(3):
            p = {"h0": rng.uniform(60, 78), "omega_m": rng.uniform(0.22, 0.4),
                 "omega_b_h2": rng.uniform(0.019, 0.025), "m_nu": rng.choice([0.0, 0.06, 0.4])}
            if not model.endswith("-flat"):
                p["omega_de"] = rng.uniform(0.55, 0.8)
            if model.startswith("w"):
                p["w0"] = rng.uniform(-1.3, -0.7)
            if model.startswith("w0wa"):
                p["wa"] = rng.uniform(-1.0, 0.2)
            try:
                got = run_lantern(model, p, T_CMB, [0.0])["early_universe"]
            except subprocess.CalledProcessError as e:
                report(False, f"{model}: lantern failed: {e.stderr.strip()}")
                break
            want = cmb_quantities(model, p)
            for k, v in want.items():
                worst = max(worst, abs(got[k] / v - 1))
        report(worst < 1e-6, f"lantern distance early_universe = numpy for {model} "
               f"(r_d, z_*, r_s, R, l_A; worst relative {worst:.1e} < 1e-6)")


def main(argv):
    if len(argv) == 1:
        report = Report()
        against_lantern(report)
        return 1 if self_checks() + report.failures else 0
    if argv[1] == "planck":
        q = cmb_quantities("lcdm-flat", planck2018())
        q["source_md"] = {"shift_r": 1.7500, "acoustic_l": 302.12, "z_star": 1091.9}
        q["planck2018_rd_mpc"] = 147.09
        print(json.dumps(q, indent=1))
        return 0
    if len(argv) != 3:
        print(__doc__.split("Use:")[1], file=sys.stderr)
        return 2
    text = argv[2]
    if os.path.exists(text):
        with open(text) as f:
            text = f.read()
    print(json.dumps(cmb_quantities(argv[1], json.loads(text)), indent=1))
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv))
