#!/usr/bin/env python3
"""lantern distance against astropy.cosmology (Debian python3-astropy).

For random parameters of all six models, with and without radiation,
bin/lantern distance --format json, and the same from Python's
lantern.distance (make python; build/python), must agree with astropy's
comoving_distance, comoving_transverse_distance, luminosity_distance,
angular_diameter_distance, lookback_time and age to 1e-7 relative, distmod
to 1e-6 mag, and H(z) to 1e-10 relative.

astropy integrates with scipy's quad at its default tolerance (1.5e-8
relative), so 1e-7 is about as tight as it can referee; the 1e-9 check of
lantern's own quadrature is tests/reference/test_gsl_quadrature.c.
Python's columns must also equal the command line's exactly (the JSON holds
each double's shortest round-trip text).
Prints one "ok"/"not ok" line per model and radiation setting.
"""
import json
import os
import random
import subprocess
import sys

import numpy as np
from astropy import cosmology as ac

ROOT = os.path.dirname(os.path.dirname(os.path.dirname(os.path.abspath(__file__))))
LANTERN = os.environ.get("LANTERN_BIN", os.path.join(ROOT, "bin", "lantern"))
sys.path.insert(0, os.path.join(ROOT, "build", "python"))
try:
    import lantern
except ImportError as e:  # reported as a failure below, not skipped
    lantern = None
    IMPORT_ERROR = str(e)
TCMB = 2.7255
NEFF = 3.046
DRAWS = 6

COLUMNS = {
    "comoving_mpc": ("comoving_distance", 1e-7),
    "transverse_mpc": ("comoving_transverse_distance", 1e-7),
    "luminosity_mpc": ("luminosity_distance", 1e-7),
    "angular_mpc": ("angular_diameter_distance", 1e-7),
    "lookback_gyr": ("lookback_time", 1e-7),
    "age_gyr": ("age", 1e-7),
    "hubble_km_s_mpc": ("H", 1e-10),
}


def astropy_model(name, p, tcmb):
    kw = dict(H0=p["h0"], Om0=p["omega_m"], Tcmb0=tcmb, Neff=NEFF, m_nu=0.0)
    if name == "lcdm-flat":
        return ac.FlatLambdaCDM(**kw)
    if name == "lcdm":
        return ac.LambdaCDM(Ode0=p["omega_de"], **kw)
    if name == "wcdm-flat":
        return ac.FlatwCDM(w0=p["w0"], **kw)
    if name == "wcdm":
        return ac.wCDM(Ode0=p["omega_de"], w0=p["w0"], **kw)
    if name == "w0wa-flat":
        return ac.Flatw0waCDM(w0=p["w0"], wa=p["wa"], **kw)
    return ac.w0waCDM(Ode0=p["omega_de"], w0=p["w0"], wa=p["wa"], **kw)


def draw_params(rng, name):
    p = {"h0": rng.uniform(55, 85), "omega_m": rng.uniform(0.1, 0.6)}
    if not name.endswith("-flat"):
        p["omega_de"] = rng.uniform(0.3, 1.0)
    if name.startswith("w"):
        p["w0"] = rng.uniform(-1.5, -0.6)
    if name.startswith("w0wa"):
        p["wa"] = rng.uniform(-1.0, 0.5)
    return p


def lantern_params(p, tcmb):
    """The parameters as lantern takes them, radiation included."""
    q = dict(p)
    if tcmb:
        q.update(t_cmb=tcmb, n_eff=NEFF)
        # massless neutrinos, as astropy's m_nu=0.0 here (lantern's default
        # with radiation is one 0.06 eV state: astropy_neutrinos.py)
        q.setdefault("m_nu", 0.0)
    return q


def run_lantern(name, p, tcmb, z):
    sets = ",".join(f"{k}={v!r}" for k, v in lantern_params(p, tcmb).items())
    zs = ",".join(repr(float(v)) for v in z)
    out = subprocess.run(
        [LANTERN, "distance", "--model", name, "--set", sets, "--z", zs, "--format", "json"],
        capture_output=True, text=True, check=True)
    return json.loads(out.stdout)


def check(name, tcmb, rng):
    worst = {}
    for _ in range(DRAWS):
        p = draw_params(rng, name)
        z = np.concatenate([np.sort(rng_array(rng, 20)), [1e-3, 10.0]])
        got = run_lantern(name, p, tcmb, z)
        ref = astropy_model(name, p, tcmb)
        rows = got["rows"]
        assert [r["z"] for r in rows] == [float(v) for v in z], "input order kept"
        py = lantern.distance(name, z, **lantern_params(p, tcmb))
        for col in rows[0]:
            if [r[col] for r in rows] != [float(v) for v in py[col]]:
                return False, f"Python's {col} differs from the command line's for {p}"
        for col, (method, tol) in COLUMNS.items():
            want = getattr(ref, method)(z).value
            have = np.array([r[col] for r in rows], dtype=float)
            rel = np.max(np.abs(have / want - 1))
            worst[col] = max(worst.get(col, 0.0), rel)
            if not rel <= tol:
                return False, f"{col}: relative difference {rel:.3g} > {tol:g} for {p}"
        dmu = np.max(np.abs(np.array([r["distmod"] for r in rows]) - ref.distmod(z).value))
        worst["distmod"] = max(worst.get("distmod", 0.0), dmu)
        if not dmu <= 1e-6:
            return False, f"distmod: difference {dmu:.3g} mag > 1e-6 for {p}"
    summary = ", ".join(f"{k} {v:.1e}" for k, v in worst.items())
    return True, f"worst differences: {summary}"


def rng_array(rng, n):
    return np.array([rng.uniform(0.005, 10.0) for _ in range(n)])


def main():
    rng = random.Random(20261202)
    if lantern is None:
        print(f"not ok - the Python package imports from build/python (make python): {IMPORT_ERROR}")
        return 1
    failures = 0
    for name in ["lcdm-flat", "lcdm", "wcdm-flat", "wcdm", "w0wa-flat", "w0wa"]:
        for tcmb in (0.0, TCMB):
            label = f"{name}, radiation {'on' if tcmb else 'off'}"
            try:
                good, note = check(name, tcmb, rng)
            except Exception as e:  # a crash of lantern or astropy is a failure
                good, note = False, f"error: {e}"
            print(f"{'ok' if good else 'not ok'} - astropy {label}: {note}")
            failures += not good
    return 1 if failures else 0


if __name__ == "__main__":
    sys.exit(main())
