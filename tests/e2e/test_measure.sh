#!/usr/bin/env bash
# End-to-end tests of --measure NAME=MEAN:SD and a run file's [measurements]
# (issue 17): a Gaussian measurement of a parameter (h0) and of a derived
# quantity (omega_k) with the binned Pantheon sample (Scolnic et al. 2018,
# ApJ 859, 101), in fit, sample and compare, against an independent numpy/scipy
# grid of the same posterior computed here; measurement-only fits against the
# closed form of two Gaussian constraints; usage errors; the run-file form.
#
# Run sizes: sample --target-ess 1000 (the default; each run takes about a
# second here) and compare --live-points 400. Tolerances on posterior means
# and sds: max(0.1, 4/sqrt(ESS)) sigma (the Monte Carlo error of a mean is
# sigma/sqrt(ESS), and that of an sd about sigma/sqrt(2 ESS), so 4/sqrt(ESS)
# is a 4-sigma bound); ln Z within 3 ln_z_err + 0.05 (ln_z_err is nested
# sampling's sqrt(H/N_live) (Skilling 2006); 0.05 covers the grid's own error,
# below 1e-3 here). The grids span more than 6 sigma of every parameter (the
# weights at their edges are checked to be < 1e-6 of the peak) with steps of
# 0.05 sigma or less, so their moments and integrals are exact to far better
# than these tolerances.
source "$(dirname "$0")/lib.sh"
P="${LANTERN_SHARED:-$ROOT/../shared}/data/pantheon2018"
DATA=(--data "$P/lcparam_DS17f.txt" --columns z=zcmb,zhel=zhel,mag=mb,err=dmb --cov "$P/sys_DS17f.txt")
PY=/usr/bin/python3
export PYTHONPATH="$E2E_TMP${PYTHONPATH:+:$PYTHONPATH}"

# The reference likelihood, from the release files and the definitions only.
cat >"$E2E_TMP/pref.py" <<'PY'
"""The binned Pantheon likelihood from numpy/scipy: total covariance
diag(dmb^2) + sys (the release's SOURCE.md), mag = mu(z; h0) + offset,
d_L = (1 + zhel) D_M(zcmb), flat or curved LCDM without radiation (lantern's
default: t_cmb 0, see 'lantern distance --help')."""
import math, os
import numpy as np
from scipy import integrate

C_KMS = 299792.458  # km/s, exact (SI)


def load(pdir):
    path = os.path.join(pdir, "lcparam_DS17f.txt")
    with open(path) as f:
        names = f.readline().lstrip("#").split()
    # 19 names, 18 fields a row (the trailing name biascor is empty): the
    # first six columns are name zcmb zhel dz mb dmb
    t = np.loadtxt(path, comments="#", usecols=range(6), dtype=str)
    col = {n: i for i, n in enumerate(names[:6])}
    get = lambda n: t[:, col[n]].astype(float)
    v = np.loadtxt(os.path.join(pdir, "sys_DS17f.txt"))
    n = int(v[0])
    return get("zcmb"), get("zhel"), get("mb"), np.diag(get("dmb") ** 2) + v[1:].reshape(n, n)


class Pantheon:
    def __init__(self, pdir, nodes=40):
        self.z, self.zhel, self.mb, self.cov = load(pdir)
        self.n = len(self.z)
        self.icov = np.linalg.inv(self.cov)
        self.C = self.icov.sum()
        self.logdet = np.linalg.slogdet(self.cov)[1]
        # Gauss-Legendre nodes on [0, z_i] (numpy leggauss), checked against
        # scipy.integrate.quad by the test
        x, w = np.polynomial.legendre.leggauss(nodes)
        self.zn = 0.5 * self.z[:, None] * (x[None, :] + 1)
        self.wn = 0.5 * self.z[:, None] * w[None, :]

    def dc(self, om, ode):
        """H0 D_C / c = int_0^z dz'/E(z') at every z, for arrays om, ode"""
        om = np.asarray(om, float)[..., None, None]
        ode = np.asarray(ode, float)[..., None, None]
        zp = 1 + self.zn
        return np.sum(self.wn / np.sqrt(om * zp ** 3 + (1 - om - ode) * zp ** 2 + ode), axis=-1)

    def dc_quad(self, om, ode):
        ok = 1 - om - ode
        f = lambda x: 1 / math.sqrt(om * (1 + x) ** 3 + ok * (1 + x) ** 2 + ode)
        return np.array([integrate.quad(f, 0, zi, epsabs=0, epsrel=1e-12)[0] for zi in self.z])

    def mu70(self, om, ode):
        """5 log10(d_L / 10 pc) for h0 = 70; D_M = sinh(sqrt(ok) D_C)/sqrt(ok)
        (sin for ok < 0), in units of c/H0 (Hogg 1999, astro-ph/9905116, eq. 16)"""
        om, ode = np.asarray(om, float), np.asarray(ode, float)
        dc = self.dc(om, ode)
        ok = (1 - om - ode)[..., None] * np.ones_like(dc)
        r = np.sqrt(np.abs(ok))
        safe = np.where(r > 0, r, 1.0)
        dm = np.where(ok > 1e-14, np.sinh(r * dc) / safe, np.where(ok < -1e-14, np.sin(r * dc) / safe, dc))
        return 5 * np.log10((1 + self.zhel) * dm * C_KMS / 70.0) + 25

    def abc(self, om, ode):
        """chi2 = A - 2 s B + s^2 C, s = offset - 5 log10(h0/70): h0 and the
        offset enter mu + offset only through s, since
        5 log10(c/h0 ...) = 5 log10(c/70 ...) - 5 log10(h0/70)"""
        d = self.mb - self.mu70(om, ode)
        return np.einsum("...i,ij,...j->...", d, self.icov, d), d @ self.icov.sum(axis=1), self.C

    def chi2_marg(self, om, ode):
        """-2 ln of the likelihood integrated over the offset with a flat prior
        of unit density, without the Gaussian normalisation:
        A - B^2/C + ln(C / 2 pi) (Conley et al. 2011, ApJS 192, 1, appendix C)"""
        A, B, C = self.abc(om, ode)
        return A - B * B / C + math.log(C / (2 * math.pi))

    def lognorm(self):
        """ln of the Gaussian likelihood's normalisation, -(N ln 2 pi + ln det Cov)/2"""
        return -0.5 * (self.n * math.log(2 * math.pi) + self.logdet)


def wstats(w, x):
    w = w / w.sum()
    m = np.sum(w * x)
    return float(m), float(math.sqrt(np.sum(w * (x - m) ** 2)))


def edges_small(w):
    """the grid's weights on every face are < 1e-6 of its peak"""
    top = w.max()
    for ax in range(w.ndim):
        for i in (0, -1):
            assert np.take(w, i, axis=ax).max() < 1e-6 * top, (ax, i)


def close(name, got, ref, sigma, ess):
    """|got - ref| within max(0.1, 4/sqrt(ESS)) sigma"""
    tol = max(0.1, 4 / math.sqrt(ess)) * sigma
    assert abs(got - ref) <= tol, (name, got, ref, tol)
    return "%s %.5g vs %.5g" % (name, got, ref)
PY

# The reference distances: Gauss-Legendre against scipy.integrate.quad.
$PY - "$P" <<'PY' && pass "reference D_C (numpy Gauss-Legendre) = scipy.integrate.quad to 1e-12" || fail "reference D_C (numpy Gauss-Legendre) = scipy.integrate.quad to 1e-12"
import sys
import numpy as np
import pref
p = pref.Pantheon(sys.argv[1])
for om, ode in ((0.3, 0.7), (0.15, 0.6), (0.45, 0.9), (0.3, 0.69)):
    assert np.max(np.abs(p.dc(om, ode) - p.dc_quad(om, ode))) < 1e-12, (om, ode)
PY

# ---- 1. h0 = 73.04 +- 1.04 (Riess et al. 2022, ApJL 934, L7, abstract) with a
# sampled offset, flat LCDM. The 3-D grid over (h0, offset, omega_m) with the
# default priors h0 U(40,100), offset U(-21,-17), omega_m U(0,1), summed where
# the posterior is not negligible.
$PY - "$P" "$E2E_TMP/ref1.json" <<'PY' || fail "reference grid of test 1"
import json, sys
import numpy as np
import pref
p = pref.Pantheon(sys.argv[1])
om = np.arange(0.15, 0.47 + 1e-9, 0.001)
h0 = np.arange(65.0, 81.0 + 1e-9, 0.04)
off = np.arange(-19.53, -18.98 + 1e-9, 0.002)
A, B, C = p.abc(om, 1 - om)
s = off[None, :] - 5 * np.log10(h0[:, None] / 70)
chi = (A[:, None, None] - 2 * s[None] * B[:, None, None] + s[None] ** 2 * C
       + ((h0 - 73.04) / 1.04)[None, :, None] ** 2)
w = np.exp(-0.5 * (chi - chi.min()))
pref.edges_small(w)
ref = {n: pref.wstats(w, np.broadcast_to(x, w.shape)) for n, x in
       (("omega_m", om[:, None, None]), ("h0", h0[None, :, None]), ("offset", off[None, None, :]))}
json.dump(ref, open(sys.argv[2], "w"))
PY

run "$LANTERN" sample "${DATA[@]}" --model lcdm-flat --offset sampled --measure h0=73.04:1.04 \
    --target-ess 1000 --seed 3 --quiet --format json --out "$E2E_TMP/s1"
if [ "$STATUS" -eq 0 ] && msg=$($PY - "$E2E_TMP/s1/summary.json" "$E2E_TMP/ref1.json" <<'PY'
import json, sys
import pref
j = json.load(open(sys.argv[1]))
ref = json.load(open(sys.argv[2]))
assert j["converged"] is True and set(j["params"]) == {"h0", "omega_m", "offset"}, j["params"].keys()
assert j["params"]["h0"]["prior"] == "U(40, 100)" and j["params"]["offset"]["prior"] == "U(-21, -17)"
out = []
for n, (m, sd) in ref.items():
    cp = j["convergence"]["params"][n]  # chains: bulk ESS; weighted draws: their IS ESS
    ess = cp.get("ess_bulk", cp.get("ess_weighted"))
    out.append(pref.close(n + " mean", j["params"][n]["mean"], m, sd, ess))
    out.append(pref.close(n + " sd", j["params"][n]["sd"], sd, sd, ess))
print("; ".join(out))
PY
); then pass "sample h0=73.04:1.04, sampled offset: posterior = numpy grid ($msg)"
else fail "sample h0=73.04:1.04, sampled offset: posterior = numpy grid ($msg)"; fi

# The acceptance check of issue 17.
run "$LANTERN" fit "${DATA[@]}" --model lcdm-flat --offset sampled --measure h0=73.04:1.04 --format json
cp "$OUT" "$E2E_TMP/fit1.json"
if [ "$STATUS" -eq 0 ] && $PY - "$OUT" <<'PY'
import json, sys
j = json.load(open(sys.argv[1]))
assert abs(j["params"]["h0"]["best"] - 73.04) < 0.5, j["params"]["h0"]
m = j["measurements"]
assert len(m) == 1 and m[0]["name"] == "h0" and m[0]["mean"] == 73.04 and m[0]["sd"] == 1.04, m
PY
then pass "fit h0=73.04:1.04, sampled offset: best h0 within 0.5 of 73.04"
else fail "fit h0=73.04:1.04, sampled offset: best h0 within 0.5 of 73.04"; fi

# ---- 2. omega_k = 0.001 +- 0.002, a value of our own choosing (near flat, not
# exactly 0, so that a sign slip shows), on curved LCDM with the offset
# marginalised. The grid is over (omega_m, omega_k), omega_de = 1 - omega_m -
# omega_k: a linear map of unit Jacobian, so the prior density stays
# 1/(1 x 1.6) of omega_m U(0,1), omega_de U(0,1.6).
$PY - "$P" "$E2E_TMP/ref2.json" <<'PY' || fail "reference grid of test 2"
import json, math, sys
import numpy as np
from scipy import optimize
import pref
p = pref.Pantheon(sys.argv[1])
MK, SK = 0.001, 0.002
dm, dk = 0.001, 0.0001
om = np.arange(0.15, 0.47 + 1e-9, dm)
ok = np.arange(MK - 8 * SK, MK + 8 * SK + 1e-12, dk)
OM, OK = np.meshgrid(om, ok, indexing="ij")
ODE = 1 - OM - OK
chi = np.array([p.chi2_marg(OM[i], ODE[i]) for i in range(len(om))]) + ((OK - MK) / SK) ** 2
m0 = chi.min()
w = np.exp(-0.5 * (chi - m0))
pref.edges_small(w)
ref = {n: pref.wstats(w, x) for n, x in (("omega_m", OM), ("omega_de", ODE), ("omega_k", OK))}
# evidence of the normalised likelihood (the survey's Gaussian normalisation,
# the measurement's -ln(2 pi sd^2)/2, the offset's flat prior of unit
# density inside chi2_marg) over the prior
norm = p.lognorm() - 0.5 * math.log(2 * math.pi * SK ** 2)
ref["lnz_lcdm"] = norm + math.log(w.sum() * dm * dk / 1.6) - 0.5 * m0
# flat: omega_k = 0 exactly, so the measurement adds (0.001/0.002)^2 everywhere
omf = np.arange(0.00025, 1, 0.0005)
chif = p.chi2_marg(omf, 1 - omf) + (MK / SK) ** 2
ref["lnz_lcdm-flat"] = norm + math.log(np.exp(-0.5 * (chif - chif.min())).sum() * 0.0005) - 0.5 * chif.min()
# the best fit, polished from the grid's best point; chi2_min is A - B^2/C
lnC = math.log(p.C / (2 * math.pi))
f = lambda x: float(p.chi2_marg(x[0], x[1])) + ((1 - x[0] - x[1] - MK) / SK) ** 2
i, j = np.unravel_index(np.argmin(chi), chi.shape)
r = optimize.minimize(f, [OM[i, j], ODE[i, j]], method="Nelder-Mead",
                      options=dict(xatol=1e-10, fatol=1e-12, maxiter=4000))
ref["best"] = list(r.x) + [1 - r.x.sum()]
ref["chi2_lcdm"] = r.fun - lnC
rf = optimize.minimize_scalar(lambda x: float(p.chi2_marg(x, 1 - x)), bounds=(0.1, 0.5),
                              method="bounded", options=dict(xatol=1e-10))
ref["chi2_lcdm-flat"] = rf.fun - lnC + (MK / SK) ** 2
# the curvature: Hessian of chi2/2 at the best fit by central differences
h = 1e-4
E = np.eye(2) * h
H = np.array([[(f(r.x + E[a] + E[b]) - f(r.x + E[a] - E[b]) - f(r.x - E[a] + E[b]) + f(r.x - E[a] - E[b]))
               / (8 * h * h) for b in range(2)] for a in range(2)])
cov = np.linalg.inv(H)
g = np.array([-1.0, -1.0])  # omega_k = 1 - omega_m - omega_de
ref["laplace_sd"] = list(np.sqrt(np.diag(cov))) + [math.sqrt(g @ cov @ g)]
json.dump(ref, open(sys.argv[2], "w"))
PY

# fit: the optimiser's best point and Laplace sds against the polished grid
# maximum and the grid's curvature. Tolerances: a point off by 0.01 sigma
# costs 1e-4 in chi2, well above what an optimiser that converged leaves;
# the finite-difference Hessian (step 1e-4, 0.005 sigma) is good to ~1e-5 of
# its value, so 1% in the sd is for lantern's own Hessian steps.
run "$LANTERN" fit "${DATA[@]}" --model lcdm --measure omega_k=0.001:0.002 --format json
if [ "$STATUS" -eq 0 ] && msg=$($PY - "$OUT" "$E2E_TMP/ref2.json" <<'PY'
import json, sys
j = json.load(open(sys.argv[1]))
ref = json.load(open(sys.argv[2]))
assert j["offset"]["mode"] == "marginal" and "h0" not in j["params"]
out = []
for k, (n, sec) in enumerate((("omega_m", "params"), ("omega_de", "params"), ("omega_k", "derived"))):
    got, sd = j[sec][n]["best"], j[sec][n]["sd"]
    rsd = ref["laplace_sd"][k]
    assert abs(got - ref["best"][k]) < 0.01 * rsd, (n, got, ref["best"][k])
    assert abs(sd / rsd - 1) < 0.01, (n, sd, rsd)
    out.append("%s %.6f +- %.6f vs %.6f +- %.6f" % (n, got, sd, ref["best"][k], rsd))
assert abs(j["chi2_min"] - ref["chi2_lcdm"]) < 1e-3, (j["chi2_min"], ref["chi2_lcdm"])
print("; ".join(out) + "; chi2_min %.5f vs %.5f" % (j["chi2_min"], ref["chi2_lcdm"]))
PY
); then pass "fit lcdm omega_k=0.001:0.002: best fit and Laplace sds = numpy grid ($msg)"
else fail "fit lcdm omega_k=0.001:0.002: best fit and Laplace sds = numpy grid ($msg)"; fi

run "$LANTERN" sample "${DATA[@]}" --model lcdm --measure omega_k=0.001:0.002 \
    --target-ess 1000 --seed 3 --quiet --format json --out "$E2E_TMP/s2"
if [ "$STATUS" -eq 0 ] && msg=$($PY - "$E2E_TMP/s2/summary.json" "$E2E_TMP/ref2.json" <<'PY'
import json, sys
import pref
j = json.load(open(sys.argv[1]))
ref = json.load(open(sys.argv[2]))
assert j["converged"] is True and set(j["params"]) == {"omega_m", "omega_de"}, j["params"].keys()
out = []
for n, sec in (("omega_m", "params"), ("omega_de", "params"), ("omega_k", "derived")):
    m, sd = ref[n]
    # a derived quantity has no ESS of its own: the smallest over the parameters
    cp = j["convergence"]["params"].get(n, {})
    ess = cp.get("ess_bulk", cp.get("ess_weighted")) if sec == "params" else j["convergence"]["ess_min"]
    out.append(pref.close(n + " mean", j[sec][n]["mean"], m, sd, ess))
    out.append(pref.close(n + " sd", j[sec][n]["sd"], sd, sd, ess))
print("; ".join(out))
PY
); then pass "sample lcdm omega_k=0.001:0.002: posterior = numpy grid ($msg)"
else fail "sample lcdm omega_k=0.001:0.002: posterior = numpy grid ($msg)"; fi

# compare: a measurement applies to every model, and a flat model's omega_k is 0.
run "$LANTERN" compare "${DATA[@]}" --models lcdm-flat,lcdm --measure omega_k=0.001:0.002 \
    --live-points 400 --seed 3 --quiet --format json
if [ "$STATUS" -eq 0 ] && msg=$($PY - "$OUT" "$E2E_TMP/ref2.json" <<'PY'
import json, sys
j = json.load(open(sys.argv[1]))
ref = json.load(open(sys.argv[2]))
assert j["evidence_convention"].startswith("ln Z of the normalised Gaussian likelihood"), j["evidence_convention"]
assert "unit width" in j["evidence_convention"], j["evidence_convention"]
out = []
assert [m["model"] for m in j["models"]] == ["lcdm-flat", "lcdm"]
for m in j["models"]:
    e = m["evidence"]
    lz = ref["lnz_" + m["model"]]
    assert abs(e["ln_z"] - lz) <= 3 * e["ln_z_err"] + 0.05, (m["model"], e, lz)
    assert abs(m["chi2_min"] - ref["chi2_" + m["model"]]) < 1e-3, (m["model"], m["chi2_min"])
    out.append("%s ln Z %.3f +- %.3f vs %.3f, chi2_min %.4f vs %.4f" % (
        m["model"], e["ln_z"], e["ln_z_err"], lz, m["chi2_min"], ref["chi2_" + m["model"]]))
print("; ".join(out))
PY
); then pass "compare lcdm-flat,lcdm omega_k=0.001:0.002: ln Z and chi2_min = numpy grid ($msg)"
else fail "compare lcdm-flat,lcdm omega_k=0.001:0.002: ln Z and chi2_min = numpy grid ($msg)"; fi

# ---- 3. Measurements alone (no --data): omega_m = 0.3 +- 0.02 and omega_k =
# 0 +- 0.01 on curved LCDM. chi2 = ((om - 0.3)/0.02)^2 + ((1 - om - ode)/0.01)^2
# is zero at om = 0.3, ode = 0.7 (no radiation by default), and its inverse
# Fisher matrix is J^-1 diag(0.02^2, 0.01^2) J^-T with J = d(om, ok)/d(om, ode):
# sd(om) = 0.02, sd(ode) = sqrt(0.02^2 + 0.01^2), sd(ok) = 0.01. For LCDM
# q0 = om/2 - ode and z_t = (2 ode/om)^(1/3) - 1 (common-practice closed
# forms from the Friedmann equations, no source cited).
run "$LANTERN" fit --model lcdm --measure omega_m=0.3:0.02 --measure omega_k=0:0.01 --format json
if [ "$STATUS" -eq 0 ] && $PY - "$OUT" <<'PY'
import json, math, sys
j = json.load(open(sys.argv[1]))
p, d = j["params"], j["derived"]
assert set(p) == {"omega_m", "omega_de"} and j["n_data"] == 2 and j["dof"] == 0, (p.keys(), j["n_data"])
assert abs(p["omega_m"]["best"] - 0.3) < 1e-6 and abs(p["omega_de"]["best"] - 0.7) < 1e-6, p
assert abs(d["omega_k"]["best"]) < 1e-6 and j["chi2_min"] < 1e-8, (d, j["chi2_min"])
assert abs(p["omega_m"]["sd"] / 0.02 - 1) < 1e-4, p
assert abs(p["omega_de"]["sd"] / math.hypot(0.02, 0.01) - 1) < 1e-4, p
assert abs(d["omega_k"]["sd"] / 0.01 - 1) < 1e-4, d
# q0 = om/2 - ode: var = var(om)/4 + var(ode) - cov(om, ode), cov(om, ode) = -var(om)
assert abs(d["q0"]["best"] + 0.55) < 1e-6 and abs(d["q0"]["sd"] / math.sqrt(1e-4 + 5e-4 + 4e-4) - 1) < 1e-4, d["q0"]
assert abs(d["z_t"]["best"] - ((2 * 0.7 / 0.3) ** (1 / 3) - 1)) < 1e-6, d["z_t"]
PY
then pass "fit, measurements only: omega_m 0.3 +- 0.02, omega_de 0.7 +- 0.02236, omega_k 0 +- 0.01, q0, z_t (closed form)"
else fail "fit, measurements only: omega_m 0.3 +- 0.02, omega_de 0.7 +- 0.02236, omega_k 0 +- 0.01, q0, z_t (closed form)"; fi

# ---- 4. Usage errors: status 2, nothing on stdout, the flag or file:line named.
run "$LANTERN" fit --model lcdm-flat --measure h0
expect_error "--measure h0 (no =)" 2 "--measure: 'h0' is not NAME=MEAN:SD"
run "$LANTERN" fit --model lcdm-flat --measure h0=73
expect_error "--measure h0=73 (no sd)" 2 "--measure: h0 = '73' is not MEAN:SD"
run "$LANTERN" fit --model lcdm-flat --measure h0=73:0
expect_error "--measure h0=73:0 (sd 0)" 2 "--measure: the measurement of h0 needs a finite mean and an sd > 0"
run "$LANTERN" fit --model lcdm-flat --measure h0=73:-1
expect_error "--measure h0=73:-1 (sd < 0)" 2 "--measure: the measurement of h0 needs a finite mean and an sd > 0"
run "$LANTERN" fit --model lcdm-flat --measure nope=1:1
expect_error "--measure nope=1:1 (nothing called nope)" 2 "--measure: nothing called 'nope' to measure"
run "$LANTERN" sample "${DATA[@]}" --model lcdm-flat --measure h0=73:1:2
expect_error "sample --measure h0=73:1:2" 2 "--measure: h0 = '73:1:2' is not MEAN:SD"
run "$LANTERN" compare "${DATA[@]}" --models lcdm-flat,lcdm --measure omega_k=x:1
expect_error "compare --measure omega_k=x:1" 2 "--measure: omega_k = 'x:1' is not MEAN:SD"
printf '[model]\nname = lcdm\n\n[measurements]\nh0 = 73.04:1.04\nomega_m = 0.3\n' >"$E2E_TMP/bad.ini"
run "$LANTERN" fit "$E2E_TMP/bad.ini"
expect_error "[measurements] omega_m = 0.3 names the run file and line" 2 "bad.ini:6: omega_m = '0.3' is not MEAN:SD"
printf '[model]\nname = lcdm\n[measurements]\nh0 = 73:0\n' >"$E2E_TMP/bad0.ini"
run "$LANTERN" fit "$E2E_TMP/bad0.ini"
expect_error "[measurements] h0 = 73:0 names the run file and line" 2 "bad0.ini:4: the measurement of h0 needs a finite mean and an sd > 0"
# A run-file measurement of an unknown name names the file and line (this test
# found it reported as "--measure: ..." at first).
printf '[model]\nname = lcdm\n[measurements]\nnope = 1:1\n' >"$E2E_TMP/badname.ini"
run "$LANTERN" fit "$E2E_TMP/badname.ini"
expect_error "[measurements] nope = 1:1 names the run file and line" 2 \
    "badname.ini:4: nothing called 'nope' to measure"

# ---- 5. The run-file form gives the same fit as the flag.
printf '[measurements]\nh0 = 73.04:1.04\n' >"$E2E_TMP/m.ini"
run "$LANTERN" fit "$E2E_TMP/m.ini" "${DATA[@]}" --model lcdm-flat --offset sampled --format json
if [ "$STATUS" -eq 0 ] && $PY - "$OUT" "$E2E_TMP/fit1.json" <<'PY'
import json, sys
a, b = (json.load(open(f)) for f in sys.argv[1:])
assert a["params"] == b["params"] and a["derived"] == b["derived"], (a["params"], b["params"])
assert a["measurements"] == b["measurements"] and a["chi2_min"] == b["chi2_min"]
PY
then pass "[measurements] h0 = 73.04:1.04 in a run file: the same fit JSON as --measure"
else fail "[measurements] h0 = 73.04:1.04 in a run file: the same fit JSON as --measure"; fi

# --help of every command that takes --measure names it (it was missing from
# fit, sample and compare --help when the flag came in).
for cmd in fit sample compare; do
    run "$LANTERN" $cmd --help
    expect_stdout "$cmd --help lists --measure NAME=MEAN:SD" '^  --measure NAME=MEAN:SD'
done
run "$LANTERN" fit --help
expect_stdout "fit --help lists the run file's [measurements] section" '\[measurements\]'

# ---- 6. Review findings (issue 17): resume and where errors point.
# A checkpoint's fingerprint does not depend on the order the settings were
# given in: a run file's [fixed] with a flag's --prior resumes (the settings
# file written for --resume lists priors before fixed values).
printf '[model]\nname = wcdm-flat\n[fixed]\nomega_m = 0.3\n' >"$E2E_TMP/ord.ini"
run "$LANTERN" sample "$E2E_TMP/ord.ini" "${DATA[@]}" --prior w0=uniform:-1.5:-0.5 \
    --max-steps 1000 --target-ess 100000 --quiet --out "$E2E_TMP/ord"
first=$STATUS
run "$LANTERN" sample --resume "$E2E_TMP/ord" --quiet
if [ "$first" -eq 3 ] && { [ "$STATUS" -eq 0 ] || [ "$STATUS" -eq 3 ]; }; then
    pass "a fixed value from the run file and a flag's prior: --resume accepts the checkpoint"
else
    fail "a fixed value from the run file and a flag's prior: --resume accepts the checkpoint (status $first then $STATUS: $(cat "$ERR"))"
fi
# Two measurements of one quantity are two terms; they survive --resume
# (one run-file line, NAME = MEAN:SD, MEAN:SD), and the run-file form gives the
# same fit as the flags.
run "$LANTERN" sample --model lcdm-flat --measure h0=73:1 --measure omega_m=0.3:0.02 \
    --measure h0=67.4:0.5 --max-steps 1000 --target-ess 100000 --quiet --out "$E2E_TMP/two"
first=$STATUS
run "$LANTERN" sample --resume "$E2E_TMP/two" --quiet
if [ "$first" -eq 3 ] && { [ "$STATUS" -eq 0 ] || [ "$STATUS" -eq 3 ]; } &&
   grep -q '^h0 = 73:1, 67.4:0.5$' "$E2E_TMP/two/checkpoint/settings.ini"; then
    pass "two measurements of h0: the settings file holds both on one line and --resume works"
else
    fail "two measurements of h0: the settings file holds both on one line and --resume works (status $first then $STATUS: $(cat "$ERR"))"
fi
run "$LANTERN" fit --model lcdm-flat --measure h0=73:1 --measure omega_m=0.3:0.02 \
    --measure h0=67.4:0.5 --format json
cp "$OUT" "$E2E_TMP/twoflags.json"
printf '[model]\nname = lcdm-flat\n[measurements]\nh0 = 67.4:0.5, 73:1\nomega_m = 0.3:0.02\n' >"$E2E_TMP/two.ini"
run "$LANTERN" fit "$E2E_TMP/two.ini" --format json
# two Gaussians in h0 combine to the inverse-variance mean (closed form), in
# either order
if [ "$STATUS" -eq 0 ] && $PY - "$OUT" "$E2E_TMP/twoflags.json" <<'PY'
import json, sys
a, b = (json.load(open(f)) for f in sys.argv[1:])
assert a["params"] == b["params"] and a["chi2_min"] == b["chi2_min"], (a["params"], b["params"])
w1, w2 = 1 / 1.0**2, 1 / 0.5**2
mean = (73 * w1 + 67.4 * w2) / (w1 + w2)
assert abs(a["params"]["h0"]["best"] - mean) < 1e-3, a["params"]["h0"]
assert abs(a["params"]["h0"]["sd"] - (w1 + w2) ** -0.5) < 1e-3 * (w1 + w2) ** -0.5
PY
then pass "[measurements] h0 = 67.4:0.5, 73:1 = the flags in the other order = inverse-variance mean"
else fail "[measurements] h0 = 67.4:0.5, 73:1 = the flags in the other order = inverse-variance mean"; fi
# Errors the likelihood finds name the run file and line.
printf '[model]\nname = lcdm-flat\n[measurements]\noffset = -19.3:0.1\n' >"$E2E_TMP/moff.ini"
run "$LANTERN" fit "$E2E_TMP/moff.ini" "${DATA[@]}"
expect_error "[measurements] offset with a marginalised offset names the file and line" 2 \
    "moff.ini:4: the offset is marginalised here"
printf '[model]\nname = lcdm-flat\n[priors]\nh0 = uniform:60:80\n' >"$E2E_TMP/ph0.ini"
run "$LANTERN" fit "$E2E_TMP/ph0.ini" "${DATA[@]}"
expect_error "[priors] h0 against a marginalised offset names the file and line" 2 \
    "ph0.ini:4: h0 is degenerate"
# Options that would be lost are refused.
run "$LANTERN" fit --data "$P/lcparam_DS17f.txt" --columns z=zcmb,zhel=zhel,mu=mb,err=dmb \
    --model lcdm-flat --offset none --prior offset=gauss:-19.3:0.1
expect_error "--offset none with a prior on offset" 2 "needs the offset mode 'sampled'"
run "$LANTERN" fit --model lcdm --measure omega_k=0:0.1 --cov "$P/sys_DS17f.txt"
expect_error "--cov without --data (measurements alone)" 2 "need a --data file"
run "$LANTERN" fit --model lcdm --measure omega_k=0:0.1 --offset sampled
expect_error "--offset sampled without a survey" 2 "there is no survey, so no offset"
