#!/usr/bin/env bash
# End-to-end tests of "lantern sample --sampler mcmc" (the chains; the
# importance sampler is test_importance.sh's): the acceptance command, chain files
# read by astropy, the same chains with 1 and 2 threads, interrupt and
# resume, the step cap, and the refusals.
source "$(dirname "$0")/lib.sh"
P="${LANTERN_SHARED:-$ROOT/../shared}/data/pantheon2018"
DATA=(--data "$P/lcparam_DS17f.txt" --columns z=zcmb,zhel=zhel,mag=mb,err=dmb --cov "$P/sys_DS17f.txt")

# The acceptance command of issue 5.
run "$LANTERN" sample --sampler mcmc "${DATA[@]}" --model lcdm --out "$E2E_TMP/a" --format json
if [ "$STATUS" -eq 0 ] && /usr/bin/python3 - "$OUT" "$E2E_TMP/a" <<'PY'
import json, sys
import numpy as np
from astropy.io import fits
j = json.load(open(sys.argv[1]))
c = j["convergence"]
assert c["rhat_max"] < 1.01 and c["ess_min"] >= 1000 and c["chains"] == 4, c
assert c["draws"] == 4 * c["draws_per_chain"]
for name in ("omega_m", "omega_de"):
    p = j["params"][name]
    for k in ("best", "mean", "sd", "median", "lo68", "hi68", "lo95", "hi95",
              "hpd68_lo", "hpd68_hi", "hpd95_lo", "hpd95_hi"):
        assert k in p, (name, k)
    assert p["lo95"] < p["lo68"] < p["median"] < p["hi68"] < p["hi95"]
    assert p["hpd95_lo"] < p["hpd68_lo"] < p["hpd68_hi"] < p["hpd95_hi"]
assert set(j["derived"]) == {"omega_k", "q0", "z_t"}
assert j["converged"] is True and j["dof"] == 37 and abs(j["chi2_min"] - 39.10) < 0.01
assert json.load(open(sys.argv[2] + "/summary.json")) == j
# the chains, as astropy reads them, give the summary's numbers
with fits.open(sys.argv[2] + "/chains.fits") as h:
    t = h[1].data
    hdr = h[1].header
    assert len(t) == c["draws"] and hdr["MODEL"] == "lcdm" and hdr["CONVERGD"] is True
    om = np.asarray(t["omega_m"], dtype=float)
    assert abs(om.mean() - j["params"]["omega_m"]["mean"]) < 1e-12
    assert abs(np.percentile(om, 50) - j["params"]["omega_m"]["median"]) < 1e-12
    assert abs(om.std(ddof=1) - j["params"]["omega_m"]["sd"]) < 1e-12
    # equal-tailed 95%: numpy's default percentile is the same definition (linear, type 7)
    assert abs(np.percentile(om, 2.5) - j["params"]["omega_m"]["lo95"]) < 1e-12
    assert sorted(set(t["chain"])) == [1, 2, 3, 4]
csv = np.genfromtxt(sys.argv[2] + "/chains.csv", delimiter=",", names=True)
assert np.array_equal(csv["omega_m"], om) and np.array_equal(csv["chi2"], np.asarray(t["chi2"]))
PY
then pass "sample Pantheon 2018 curved LCDM: converged, contract fields, chains in astropy"; else fail "sample Pantheon 2018 curved LCDM: converged, contract fields, chains in astropy"; fi
[ -s "$E2E_TMP/a/checkpoint/state.bin" ] && [ -s "$E2E_TMP/a/checkpoint/settings.ini" ] && pass "--out keeps the checkpoint" || fail "--out keeps the checkpoint"

# Same seed, one thread and two: identical chain files.
run "$LANTERN" sample --sampler mcmc "${DATA[@]}" --model lcdm-flat --threads 1 --seed 7 --out "$E2E_TMP/t1" --quiet
run "$LANTERN" sample --sampler mcmc "${DATA[@]}" --model lcdm-flat --threads 2 --seed 7 --out "$E2E_TMP/t2" --quiet
if cmp -s "$E2E_TMP/t1/chains.csv" "$E2E_TMP/t2/chains.csv" && cmp -s "$E2E_TMP/t1/chains.fits" "$E2E_TMP/t2/chains.fits" &&
   cmp -s "$E2E_TMP/t1/summary.json" "$E2E_TMP/t2/summary.json"; then
    pass "1 and 2 threads give byte-identical chains and summary"
else
    fail "1 and 2 threads give byte-identical chains and summary"
fi
run "$LANTERN" sample --sampler mcmc "${DATA[@]}" --model lcdm-flat --threads 2 --seed 8 --out "$E2E_TMP/t3" --quiet
cmp -s "$E2E_TMP/t1/chains.csv" "$E2E_TMP/t3/chains.csv" && fail "another seed, other chains" || pass "another seed, other chains"

# Interrupt (SIGINT) and resume: the same chains as an uninterrupted run.
LONG=(--model lcdm --target-ess 25000 --seed 3 --threads 2 --quiet)
run "$LANTERN" sample --sampler mcmc "${DATA[@]}" "${LONG[@]}" --out "$E2E_TMP/full"
expect_status "a long reference run" 0
interrupt "$E2E_TMP/cut" "$LANTERN" sample --sampler mcmc "${DATA[@]}" "${LONG[@]}" --out "$E2E_TMP/cut"
if [ "$STATUS" -eq 1 ] && [ -s "$E2E_TMP/cut/checkpoint/state.bin" ] && [ ! -e "$E2E_TMP/cut/summary.json" ] &&
   [ ! -e "$E2E_TMP/cut/chains.csv" ] && grep -q "resume" "$ERR"; then
    pass "SIGINT: status 1, a checkpoint and no final files"
else
    fail "SIGINT: status 1, a checkpoint and no final files"
fi
run "$LANTERN" sample --resume "$E2E_TMP/cut" --quiet
if [ "$STATUS" -eq 0 ] && cmp -s "$E2E_TMP/full/chains.csv" "$E2E_TMP/cut/chains.csv" &&
   cmp -s "$E2E_TMP/full/summary.json" "$E2E_TMP/cut/summary.json"; then
    pass "--resume ends with the uninterrupted run's chains and summary"
else
    fail "--resume ends with the uninterrupted run's chains and summary"
fi

# Killed again and again, by each signal lantern catches, and resumed each
# time: still the uninterrupted run's chains and summary. A kill may land
# in the best fit, the warm-up or the sampling; a run that ends before its
# kill is simply resumed to the same end (--resume of a finished run only
# rewrites its outputs).
"$LANTERN" sample --sampler mcmc "${DATA[@]}" "${LONG[@]}" --out "$E2E_TMP/multi" >"$OUT" 2>"$ERR" &
pid=$!
wait_for "$E2E_TMP/multi/checkpoint/settings.ini"
sleep 0.1
kill -TERM $pid
wait $pid
first=$?
kills=0
for sig in HUP INT TERM HUP; do
    "$LANTERN" sample --resume "$E2E_TMP/multi" --quiet >"$OUT" 2>>"$ERR" &
    pid=$!
    sleep 0.3
    kill -$sig $pid 2>/dev/null && kills=$((kills + 1))
    wait $pid
done
run "$LANTERN" sample --resume "$E2E_TMP/multi" --quiet
if [ "$first" -eq 1 ] && [ "$kills" -ge 2 ] && [ "$STATUS" -eq 0 ] &&
   cmp -s "$E2E_TMP/full/chains.csv" "$E2E_TMP/multi/chains.csv" &&
   cmp -s "$E2E_TMP/full/chains.fits" "$E2E_TMP/multi/chains.fits" &&
   cmp -s "$E2E_TMP/full/summary.json" "$E2E_TMP/multi/summary.json"; then
    pass "SIGTERM, SIGHUP, SIGINT at five points ($kills resumed runs killed): the same chains and summary"
else
    fail "SIGTERM, SIGHUP, SIGINT at five points (first status $first, $kills resumed runs killed): the same chains and summary"
fi

# The step cap: status 3, results written and marked unconverged.
run "$LANTERN" sample --sampler mcmc "${DATA[@]}" --model lcdm --max-steps 200 --check-every 100 --out "$E2E_TMP/cap" --format json
if [ "$STATUS" -eq 3 ] && grep -q '"converged":[[:space:]]*false' "$E2E_TMP/cap/summary.json" && grep -q "did not converge" "$ERR"; then
    pass "the step cap: status 3 and \"converged\": false"
else
    fail "the step cap: status 3 and \"converged\": false"
fi
# ... and the cap it suggests is the one the ESS rate in summary.json gives
# (linear growth of ESS with draws: the usual extrapolation, no source).
want=$(/usr/bin/python3 -c '
import json, math, sys
c = json.load(open(sys.argv[1]))["convergence"]
print(math.ceil(1.1 * c["draws_per_chain"] * 1000 / c["ess_min"] / 1000) * 1000)' "$E2E_TMP/cap/summary.json")
if grep -q -- "--max-steps $want should reach 1000" "$ERR"; then
    pass "the step cap: the suggested --max-steps ($want) follows from the ESS rate"
else
    fail "the step cap: the suggested --max-steps ($want) follows from the ESS rate: $(cat "$ERR")"
fi

# Issue 16 item 3: a posterior that fills its prior went unwarned (its 2.5%
# and 97.5% quantiles lie more than 2% of the width from the edges). On
# these data omega_m = 0.298 +- 0.022 (Scolnic et al. 2018, abstract; from
# memory); as a Gaussian on U(0.3, 0.32) its density is highest at 0.3 and
# exp(-(0.022^2 - 0.002^2) / (2 0.022^2)) = 0.61 of that at 0.32. The real
# posterior is skewed (lantern fit: 0.296 +- 0.022, giving 0.56), so the
# upper ratio may lie anywhere in 0.3-0.75; the lower must be near 1.
run "$LANTERN" sample --sampler mcmc "${DATA[@]}" --model lcdm-flat --prior omega_m=uniform:0.3:0.32 --target-ess 400 \
    --seed 4 --out "$E2E_TMP/fill" --quiet
if [ "$STATUS" -eq 0 ] && grep -q "lantern: warning \[prior-edge\]: lcdm-flat: the posterior of omega_m reaches both edges of its prior U(0.3, 0.32)" "$ERR" &&
   /usr/bin/python3 - "$E2E_TMP/fill/summary.json" <<'PY'
import json, re, sys
w = [x for x in json.load(open(sys.argv[1]))["warnings"] if "omega_m reaches both edges" in x]
assert len(w) == 1, w
lo, hi = map(int, re.search(r"density there (\d+)% and (\d+)% of its peak", w[0]).groups())
assert lo >= 95 and 30 <= hi <= 75, (lo, hi)
PY
then pass "a posterior that fills its prior is warned about, on stderr and in the summary"
else fail "a posterior that fills its prior is warned about, on stderr and in the summary"; fi
run "$LANTERN" sample --sampler mcmc "${DATA[@]}" --model lcdm-flat --target-ess 400 --seed 4 --out "$E2E_TMP/inside" --quiet
if [ "$STATUS" -eq 0 ] && ! grep -q "reaches" "$ERR"; then
    pass "a posterior well inside its prior draws no edge warning"
else fail "a posterior well inside its prior draws no edge warning"; fi

# Refusals.
run "$LANTERN" sample --resume "$E2E_TMP/nowhere"
expect_error "--resume without a checkpoint" 2 "no checkpoint here"
run "$LANTERN" sample --resume "$E2E_TMP/a" --chains 8
expect_error "--resume takes no other settings" 2 "takes no other options"
cp -r "$E2E_TMP/a" "$E2E_TMP/bad"
printf 'garbage' | dd of="$E2E_TMP/bad/checkpoint/state.bin" bs=1 seek=300 conv=notrunc 2>/dev/null
run "$LANTERN" sample --resume "$E2E_TMP/bad"
expect_error "a damaged checkpoint is refused" 2 "damaged or truncated"
cp -r "$E2E_TMP/a" "$E2E_TMP/other"
sed -i 's/^seed = .*/seed = 99/' "$E2E_TMP/other/checkpoint/settings.ini"
run "$LANTERN" sample --resume "$E2E_TMP/other"
expect_error "a checkpoint of other settings is refused" 2 "belongs to another run"
cp -r "$E2E_TMP/a" "$E2E_TMP/othermodel"
sed -i 's/^name = lcdm$/name = wcdm/' "$E2E_TMP/othermodel/checkpoint/settings.ini"
run "$LANTERN" sample --resume "$E2E_TMP/othermodel"
expect_error "a checkpoint of another model is refused" 2 "belongs to another run"
cp -r "$E2E_TMP/a" "$E2E_TMP/otherdata"
awk 'NR == 5 { $5 = $5 + 0.01 } { print }' "$(sed -n 's/^file = //p' "$E2E_TMP/a/checkpoint/settings.ini")" >"$E2E_TMP/changed.txt"
sed -i "s|^file = .*|file = $E2E_TMP/changed.txt|" "$E2E_TMP/otherdata/checkpoint/settings.ini"
run "$LANTERN" sample --resume "$E2E_TMP/otherdata"
expect_error "a checkpoint of other data (one magnitude changed) is refused" 2 "belongs to another run"
# Issue 17: the fingerprint covers the whole covariance, not only its
# diagonal. One off-diagonal pair of the systematic covariance changes
# (element (1,2) and (2,1), lines 3 and 42 of the file: "40", then the
# 40 x 40 values row after row), staying symmetric and, at 4% of the pair,
# positive definite; resuming on it is refused, naming the covariance.
cp -r "$E2E_TMP/a" "$E2E_TMP/othercov"
awk 'NR == 3 || NR == 42 { $1 = $1 * 1.04 } { print }' "$P/sys_DS17f.txt" >"$E2E_TMP/cov_offdiag.txt"
sed -i "s|^cov = .*|cov = $E2E_TMP/cov_offdiag.txt|" "$E2E_TMP/othercov/checkpoint/settings.ini"
run "$LANTERN" inspect "${DATA[@]/$P\/sys_DS17f.txt/$E2E_TMP/cov_offdiag.txt}" --format json
if [ "$STATUS" -eq 0 ] && grep -q '"positive_definite":[[:space:]]*true' "$OUT"; then
    pass "the changed covariance is still positive definite"
else fail "the changed covariance is still positive definite"; fi
run "$LANTERN" sample --resume "$E2E_TMP/othercov"
expect_error "a checkpoint whose covariance differs only off the diagonal is refused" 2 \
    "belongs to another run: the covariance differs"
run "$LANTERN" sample --sampler mcmc "${DATA[@]}" --model lcdm --chains 0
expect_error "bad --chains" 2 "--chains: '0' is not a whole number from 1 to 256"
run "$LANTERN" sample --sampler mcmc "${DATA[@]}" --model lcdm --target-ess x
expect_error "bad --target-ess" 2 "--target-ess: 'x'"
run "$LANTERN" sample --sampler mcmc "${DATA[@]}" --model lcdm --out "$E2E_TMP/a"
expect_error "an earlier run is refused without --force" 2 "pass --force"
run "$LANTERN" sample --help
expect_stdout "sample --help explains the stopping rule" 'R-hat - 1 < 0.01'

# The compression checked on the posterior (issue 16, item 5): the 82
# objects above z = 0.8 in curved w0-wa, where closed, low-omega_m draws near
# the bounce boundary (1/E(z) sharply peaked) were off by 1.6e-3 in chi2
# while the set-up's own check saw 1.3e-5. Every draw's chi2 in chains.csv
# must agree within the promised 1e-3 with an independent numpy chi2:
# E^2 = Om (1+z)^3 + Ok (1+z)^2 + Ode (1+z)^(3(1+w0+wa)) exp(-3 wa z/(1+z))
# (w(a) = w0 + wa (1 - a): Chevallier & Polarski 2001, IJMPD 10, 213; Linder
# 2003, PRL 90, 091301, eq. 3), D_M by sin/sinh of sqrt|Ok| D_C (Hogg 1999,
# astro-ph/9905116, eq. 16), mu = 5 log10((1 + zhel) D_M) + const, the offset
# marginalised analytically (chi2 = A - B^2/C, Goliath et al. 2001).
PANTHEON=(--data "$P/lcparam_full_long_zhel.txt" --columns z=zcmb,zhel=zhel,mag=mb,err=dmb --zmin 0.8)
run "$LANTERN" sample --sampler mcmc "${PANTHEON[@]}" --model w0wa --seed 1 --threads 2 --out "$E2E_TMP/z08" --quiet
if [ "$STATUS" -eq 0 ] && /usr/bin/python3 - "$P/lcparam_full_long_zhel.txt" "$E2E_TMP/z08" <<'PY'
import json, sys
import numpy as np
rows = [l.split() for l in open(sys.argv[1]) if not l.startswith("#") and l.strip()]
z = np.array([float(r[1]) for r in rows]); zh = np.array([float(r[2]) for r in rows])
mb = np.array([float(r[4]) for r in rows]); err = np.array([float(r[5]) for r in rows])
keep = z >= 0.8
z, zh, mb, iv = z[keep], zh[keep], mb[keep], 1.0 / err[keep] ** 2
assert len(z) == 82
c = np.genfromtxt(sys.argv[2] + "/chains.csv", delimiter=",", names=True)
om, ode, w0, wa = c["omega_m"], c["omega_de"], c["w0"], c["wa"]
ok = 1.0 - om - ode
# D_C(z) in units of c/H0: composite 16-point Gauss-Legendre on 8 panels between successive objects in
# ln(1+z) (dz = (1+z) dx), cumulated up to each object
zs = np.sort(np.unique(np.concatenate([[0.0], z])))
xs = np.log1p(zs)
t, wt = np.polynomial.legendre.leggauss(16)
worst = 0.0
for lo in range(0, len(om), 2000):
    s = slice(lo, lo + 2000)
    O, D, W0, WA, K = om[s, None], ode[s, None], w0[s, None], wa[s, None], ok[s, None]
    dc = np.zeros((len(O), len(zs)))
    for k in range(1, len(zs)):
        a, b = xs[k - 1], xs[k]
        edges = np.linspace(a, b, 9)
        x = ((edges[:-1, None] + edges[1:, None]) / 2 + (edges[1:, None] - edges[:-1, None]) / 2 * t).ravel()
        ww = ((edges[1:, None] - edges[:-1, None]) / 2 * wt).ravel()
        zz = np.expm1(x)[None, :]
        e2 = O * (1 + zz) ** 3 + K * (1 + zz) ** 2 + D * (1 + zz) ** (3 * (1 + W0 + WA)) * np.exp(-3 * WA * zz / (1 + zz))
        dc[:, k] = dc[:, k - 1] + ((1 + zz) / np.sqrt(e2) * ww).sum(axis=1)
    dc = dc[:, np.searchsorted(zs, z)]
    sk = np.sqrt(np.abs(K))
    dm = np.where(K > 1e-12, np.sinh(sk * dc) / np.where(sk > 0, sk, 1),
                  np.where(K < -1e-12, np.sin(sk * dc) / np.where(sk > 0, sk, 1), dc))
    r = mb - 5 * np.log10((1 + zh) * dm)
    A = (r * r * iv).sum(1); B = (r * iv).sum(1); C = iv.sum()
    worst = max(worst, np.abs(A - B * B / C - c["chi2"][s]).max())
print("# max |chi2_chains - chi2_numpy| over %d draws: %.2e" % (len(om), worst), file=sys.stderr)
assert worst < 1e-3, worst
j = json.load(open(sys.argv[2] + "/summary.json"))["compression"]
assert j["max_abs_dchi2_posterior"] < 1e-3 and j["checked_draws"] == 400
assert j["max_abs_dchi2_posterior"] <= worst + 1e-4  # what it saw is what the draws show
PY
then pass "zmin 0.8 w0wa: every draw's chi2 within 1e-3 of an independent numpy chi2"; else fail "zmin 0.8 w0wa: every draw's chi2 within 1e-3 of an independent numpy chi2"; fi
