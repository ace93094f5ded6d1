#!/usr/bin/env bash
# End-to-end tests of "lantern reweight": a DESI 2024 BAO + BBN posterior
# (flat LCDM, r_d from its formula) reweighted by the binned Pantheon 2018
# supernovae against sampling the combination directly; a chain run
# reweighted by a Gaussian measurement against the product of Gaussians;
# the files written; and the refusals (missing parameters named, too few
# effective samples left, a term the run already has, data changed since).
source "$(dirname "$0")/lib.sh"
S="${LANTERN_SHARED:-$ROOT/../shared}/data"
SN=(--data "$S/pantheon2018/lcparam_DS17f.txt" --columns z=zcmb,zhel=zhel,mag=mb,err=dmb
    --cov "$S/pantheon2018/sys_DS17f.txt")
# BBN: omega_b h^2 = 0.02218 +- 0.00055 (the value DESI 2024 VI used beside
# its BAO, after Schoeneberg et al. 2024; from memory)
BAO=(--bao "$S/desi2024_bao/bao_dr1.csv" --bao-cov "$S/desi2024_bao/bao_dr1_cov.txt"
     --measure omega_b_h2=0.02218:0.00055)

run "$LANTERN" sample "${BAO[@]}" --model lcdm-flat --target-ess 4000 --seed 3 --out "$E2E_TMP/bao" --quiet
expect_status "BAO + BBN sampled (flat LCDM)" 0
run "$LANTERN" reweight "$E2E_TMP/bao" "${SN[@]}" --out "$E2E_TMP/rw" --format json
cp "$OUT" "$E2E_TMP/rw.json"
rw_status=$STATUS
run "$LANTERN" sample "${BAO[@]}" "${SN[@]}" --model lcdm-flat --target-ess 4000 --seed 4 --format json --quiet
cp "$OUT" "$E2E_TMP/direct.json"
# The tolerance of the issue: max(0.1, 4/sqrt(ESS)) sigma, ESS the smaller
# of the two posteriors' (two independent estimates differ by about
# sqrt(1/ESS1 + 1/ESS2) sigma: Monte Carlo practice).
if [ "$rw_status" -eq 0 ] && [ "$STATUS" -eq 0 ] && msg=$(/usr/bin/python3 - "$E2E_TMP" <<'PY'
import csv, json, math, sys
d = sys.argv[1]
a, b = json.load(open(d + "/rw.json")), json.load(open(d + "/direct.json"))
assert a["command"] == "reweight" and a["converged"] is True, a["command"]
r = a["reweighted"]
assert r["added"][0].endswith("lcparam_DS17f.txt") and r["draws"] > 0
assert r["ess_after"] == a["convergence"]["ess_min"] <= r["kish_after"]
assert 100 <= r["ess_after"] and r["pareto_k"] <= 0.7, r
# the supernovae's chi2 at the new best fit: the combined chi2 minus the BAO + BBN one
assert 30 < r["chi2_added_at_best"] < 60, r
ess = min(a["convergence"]["ess_min"], b["convergence"]["ess_min"])
out = []
for p in ("omega_m", "h0", "omega_b_h2"):
    pa, pb = a["params"][p], b["params"][p]
    tol = max(0.1, 4 / math.sqrt(ess)) * pb["sd"]
    assert abs(pa["mean"] - pb["mean"]) < tol, (p, "mean", pa["mean"], pb["mean"], tol)
    assert abs(pa["sd"] - pb["sd"]) < tol, (p, "sd", pa["sd"], pb["sd"], tol)
    out.append("%s %.5g+-%.3g vs %.5g+-%.3g" % (p, pa["mean"], pa["sd"], pb["mean"], pb["sd"]))
# the chain file: the run's draws with the new weights (mean 1)
rows = list(csv.DictReader(open(d + "/rw/chains.csv")))
w = [float(x["weight"]) for x in rows]
assert len(rows) == r["draws"] and abs(sum(w) / len(w) - 1) < 1e-9
print("; ".join(out))
PY
); then pass "BAO + BBN reweighted by Pantheon 2018 = the combination sampled directly ($msg)"
else fail "BAO + BBN reweighted by Pantheon 2018 = the combination sampled directly ($msg)"; fi

# A chain run (MCMC) of the supernovae, reweighted by omega_m = 0.28 +- 0.02:
# nearly Gaussian, so the result is the product of two Gaussians, mean
# (m1/s1^2 + m2/s2^2) / (1/s1^2 + 1/s2^2) and sd (1/s1^2 + 1/s2^2)^(-1/2)
# (closed form), with m1, s1 the run's own posterior.
run "$LANTERN" sample "${SN[@]}" --model lcdm-flat --sampler mcmc --seed 2 --out "$E2E_TMP/sn" --quiet
run "$LANTERN" reweight "$E2E_TMP/sn" --measure omega_m=0.28:0.02 --format json
if [ "$STATUS" -eq 0 ] && msg=$(/usr/bin/python3 - "$E2E_TMP/sn/summary.json" "$OUT" <<'PY'
import json, math, sys
a, b = json.load(open(sys.argv[1])), json.load(open(sys.argv[2]))
m1, s1 = a["params"]["omega_m"]["mean"], a["params"]["omega_m"]["sd"]
m2, s2 = 0.28, 0.02
p = 1 / s1 ** 2 + 1 / s2 ** 2
m, s = (m1 / s1 ** 2 + m2 / s2 ** 2) / p, p ** -0.5
got = b["params"]["omega_m"]
cv = b["convergence"]
assert cv["chains"] == 4 and cv["rhat_max"] is None and cv["rhat_max_unweighted"] < 1.01, cv
tol = max(0.1, 4 / math.sqrt(cv["ess_min"])) * s
assert abs(got["mean"] - m) < tol and abs(got["sd"] - s) < tol, (got["mean"], got["sd"], m, s, tol)
print("mean %.5f vs %.5f, sd %.5f vs %.5f" % (got["mean"], m, got["sd"], s))
PY
); then pass "chains reweighted by a Gaussian measurement = the product of Gaussians ($msg)"
else fail "chains reweighted by a Gaussian measurement = the product of Gaussians ($msg)"; fi

# Refusals.
run "$LANTERN" reweight "$E2E_TMP/sn" --bao "$S/desi2024_bao/bao_dr1.csv" --bao-cov "$S/desi2024_bao/bao_dr1_cov.txt"
expect_error "BAO added to a supernova run with a marginalised offset: h0 and omega_b_h2 named" 2 \
    "the added terms need parameters the run did not sample: h0, omega_b_h2"
run "$LANTERN" reweight "$E2E_TMP/sn" --measure omega_m=0.15:0.002 --out "$E2E_TMP/collapse"
if [ "$STATUS" -eq 3 ] && [ ! -s "$OUT" ] && [ ! -e "$E2E_TMP/collapse" ] &&
   grep -qE "^lantern: the reweighted draws keep an effective sample size of [0-9]+ \(of [0-9]+ before\), below --min-ess 100" "$ERR"; then
    pass "too few effective samples left: status 3, the ESS said, nothing written"
else
    fail "too few effective samples left: status 3, the ESS said, nothing written"
fi
run "$LANTERN" reweight "$E2E_TMP/sn" --measure omega_m=0.28:0.02 --min-ess 100000
expect_error "--min-ess above what is left refuses" 3 "below --min-ess 100000: too few of the run's draws"
run "$LANTERN" reweight "$E2E_TMP/sn" "${SN[@]}"
expect_error "a second supernova table refused" 2 "the run already has a supernova table"
run "$LANTERN" reweight "$E2E_TMP/sn"
expect_error "nothing to add refused" 2 "nothing to add"
run "$LANTERN" reweight "$E2E_TMP/sn" --measure omega_m=0.3:0.1 --prior omega_m=uniform:0:1
expect_error "--prior refused" 2 "--prior: reweight adds terms"
run "$LANTERN" reweight "$E2E_TMP/nowhere" --measure omega_m=0.3:0.1
expect_error "a folder without a checkpoint refused" 2 "no checkpoint here"
# data changed since the run: the digests say which part
cp "$S/pantheon2018/lcparam_DS17f.txt" "$E2E_TMP/copy.txt"
run "$LANTERN" sample --data "$E2E_TMP/copy.txt" --columns z=zcmb,zhel=zhel,mag=mb,err=dmb --model lcdm-flat \
    --out "$E2E_TMP/changed" --quiet
sed -i '3s/ 0\.0[0-9]* / 0.5 /' "$E2E_TMP/copy.txt"
run "$LANTERN" reweight "$E2E_TMP/changed" --measure omega_m=0.3:0.1
expect_error "a run whose data file changed refused, naming the data" 2 "the data \\(redshifts, observations or measurements\\) differs"
