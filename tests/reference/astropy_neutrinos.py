#!/usr/bin/env python3
"""lantern distance with massive neutrinos against astropy.cosmology (Debian
python3-astropy).

Cases: astropy's Planck18 (FlatLambdaCDM, H0 67.66, Om0 0.30966, one 0.06 eV
state; Planck 2018 VI table 2 as astropy.cosmology.realizations stores it)
and FlatwCDM, w0waCDM and LambdaCDM with m_nu = 0.06, 0.3 and 1.0 eV and
random other parameters, all with T_CMB = 2.7255 K and N_eff = 3.046.
bin/lantern distance --format json must agree with astropy's
comoving_distance, comoving_transverse_distance, luminosity_distance,
angular_diameter_distance, lookback_time and age to 1e-6 relative, distmod
to 1e-6 mag and H(z) to 1e-9 relative.

The parameter mapping (lantern's conventions, DESIGN.md of the project):
lantern's omega_m includes the massive neutrinos today and astropy's Om0 does
not, so omega_m = Om0 + Omega_nu_massive(0), with the density of the massive
state by Komatsu et al. 2011 (ApJS 192, 18, eq. 26) as
astropy.cosmology.FLRW.nu_relative_density computes it; m_nu in lantern is
the sum of masses in one state, astropy's m_nu = [0, 0, m_nu]; lantern's
omega_de is astropy's Ode0 (curved models), flat models close with
omega_de = 1 - omega_m - omega_r in both. The background formulas are in
cmb_numpy.py beside this file, whose docstring names their sources.

  /usr/bin/python3 astropy_neutrinos.py              compare with lantern
  /usr/bin/python3 astropy_neutrinos.py --self-test  check the mapping alone:
      E(z) of cmb_numpy.Background equals astropy's efunc to 1e-12 relative,
      Ogamma0 to 1e-12 relative, Onu0, Ode0, Ok0 to 1e-12 absolute, so that a
      failure of the comparison is lantern's and not this script's.
Prints one "ok"/"not ok" line per case; exits 1 on any failure.
"""
import os
import random
import sys

import numpy as np
from astropy import cosmology as ac

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import cmb_numpy as cn  # noqa: E402
from astropy_distances import COLUMNS, rng_array, run_lantern  # noqa: E402
from astropy_distances import draw_params as draw_astropy_distances  # noqa: E402

MASSES = (0.06, 0.3, 1.0)
DRAWS = 3
# astropy's methods per lantern column, at this script's tolerances.
TOL = {col: (method, 1e-9 if col == "hubble_km_s_mpc" else 1e-6)
       for col, (method, _) in COLUMNS.items()}
ASTROPY_CLASS = {"lcdm-flat": ac.FlatLambdaCDM, "lcdm": ac.LambdaCDM,
                 "wcdm-flat": ac.FlatwCDM, "w0wa": ac.w0waCDM}
ASTROPY_NAME = {"omega_de": "Ode0", "w0": "w0", "wa": "wa"}


def astropy_model(name, p):
    """astropy's cosmology for lantern parameters p (omega_m with neutrinos)."""
    bg = cn.Background(name, p)
    kw = {ASTROPY_NAME[k]: v for k, v in p.items() if k in ASTROPY_NAME}
    return ASTROPY_CLASS[name](H0=p["h0"], Om0=float(p["omega_m"] - bg.onu_massive0),
                               Tcmb0=cn.T_CMB, Neff=cn.N_EFF, m_nu=[0.0, 0.0, p["m_nu"]], **kw)


def planck18_params():
    """lantern's parameters for astropy's Planck18."""
    ref = ac.Planck18
    m = float(ref.m_nu.value.sum())
    onu = cn.Background("lcdm-flat", {"h0": ref.H0.value, "omega_m": 0.3, "m_nu": m}).onu_massive0
    return {"h0": ref.H0.value, "omega_m": ref.Om0 + float(onu), "m_nu": m}


def draw_params(rng, name, m_nu):
    """astropy_distances' random parameters, kept when E^2 > 0 at all redshifts
    (so that ages exist) with the massive state added."""
    while True:
        p = dict(draw_astropy_distances(rng, name), m_nu=m_nu)
        if np.all(cn.Background(name, p).e2(np.geomspace(1e-4, 1e6, 2000)) > 0):
            return p


def cases():
    """(label, lantern model, parameters), the same list on every run."""
    rng = random.Random(20261219)
    out = [("Planck18", "lcdm-flat", planck18_params())]
    for name in ("wcdm-flat", "w0wa", "lcdm"):
        for m in MASSES:
            for i in range(DRAWS):
                out.append((f"{ASTROPY_CLASS[name].__name__} m_nu={m} draw {i + 1}", name,
                            draw_params(rng, name, m)))
    return out


def ref_for(label, name, p):
    return ac.Planck18 if label == "Planck18" else astropy_model(name, p)


def compare(label, name, p, rng):
    z = np.concatenate([np.sort(rng_array(rng, 20)), [1e-3, 10.0]])
    got = run_lantern(name, p, cn.T_CMB, z)
    ref = ref_for(label, name, p)
    rows = got["rows"]
    assert [r["z"] for r in rows] == [float(v) for v in z], "input order kept"
    worst = []
    for col, (method, tol) in TOL.items():
        want = getattr(ref, method)(z).value
        rel = float(np.max(np.abs(np.array([r[col] for r in rows], dtype=float) / want - 1)))
        worst.append(f"{col} {rel:.1e}")
        if not rel <= tol:
            return False, f"{col}: relative difference {rel:.3g} > {tol:g} for {p}"
    dmu = float(np.max(np.abs(np.array([r["distmod"] for r in rows]) - ref.distmod(z).value)))
    if not dmu <= 1e-6:
        return False, f"distmod: difference {dmu:.3g} mag > 1e-6 for {p}"
    return True, "worst: " + ", ".join(worst) + f", distmod {dmu:.1e}"


def self_check(label, name, p):
    """The mapping alone: densities today and E(z) against astropy."""
    bg = cn.Background(name, p)
    ref = ref_for(label, name, p)
    z = np.concatenate([[0.0], np.geomspace(1e-4, 1e5, 400)])
    rel = float(np.max(np.abs(np.sqrt(bg.e2(z)) / ref.efunc(z) - 1)))
    diffs = {"Ogamma0 (relative)": abs(bg.og / ref.Ogamma0 - 1),
             "Onu0": abs(bg.nu_unit * bg.n_massless + bg.onu_massive0 - ref.Onu0),
             "Ode0": abs(bg.omega_de - ref.Ode0), "Ok0": abs(bg.omega_k - ref.Ok0)}
    worst = max(diffs, key=diffs.get)
    good = rel <= 1e-12 and diffs[worst] <= 1e-12
    return good, (f"E(z) vs astropy efunc on [0, 1e5]: {rel:.1e}; largest density "
                  f"difference today {worst} {diffs[worst]:.1e}")


def main(argv):
    self_test = "--self-test" in argv[1:]
    rng = random.Random(20261220)
    report = cn.Report()
    for label, name, p in cases():
        try:
            good, note = self_check(label, name, p) if self_test else compare(label, name, p, rng)
        except Exception as e:  # a crash of lantern or astropy is a failure
            good, note = False, f"error: {e}"
        report(good, f"{label} ({name}): {note}")
    return 1 if report.failures else 0

if __name__ == "__main__":
    sys.exit(main(sys.argv))
