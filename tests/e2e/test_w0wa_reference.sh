#!/usr/bin/env bash
# lantern sample's flat w0-wa posterior of the 1048-object Pantheon 2018
# table (statistical errors, offset marginalised, default priors) against an
# independent numpy/scipy grid integration of the same posterior
# (tests/reference/w0wa_flat_reference.py, whose docstring names its sources)
# (issue 20).
#
# Tolerance, for the mean and sd of omega_m, w0 and wa (issue 20):
#   |lantern - reference| <= max(0.1, 4/sqrt(ESS)) reference sd,
# ESS the parameter's bulk ESS from convergence.params (convergence.ess_min
# when the summary has no per-parameter ESS). 4/sqrt(ESS) sd is four Monte
# Carlo standard errors of a mean. The quantiles the summary has (median =
# q50, lo68/hi68 = q16/q84, lo95/hi95 = q2.5/q97.5, equal-tailed) get the same
# four Monte Carlo standard errors, those of a quantile: sqrt(p (1-p) / ESS_q)
# / f(q), ESS_q the smaller of bulk and tail ESS, f the reference's marginal
# density at q (the asymptotic variance of a sample quantile: common
# practice, e.g. Vehtari et al. 2021 sec. 4.3, from memory), never below
# 0.1 sd. (The quantiles' errors are larger than the mean's: 4/sqrt(ESS)
# alone would fail a correct sampler's 2.5% quantile about one time in ten.)
# chi2_min must match the reference's scipy minimum to 1e-3.
# Nothing here depends on the sampler's chain or draw counts, only on its
# reported ESS. LANTERN_W0WA_ARGS (extra options, split at spaces, e.g.
# "--prior wa=uniform:-2.5:2") is for checking that the test fails when
# lantern's posterior is not the reference's.
source "$(dirname "$0")/lib.sh"
P="${LANTERN_SHARED:-$ROOT/../shared}/data/pantheon2018"
read -r -a EXTRA <<<"${LANTERN_W0WA_ARGS:-}"

/usr/bin/python3 "$ROOT/tests/reference/w0wa_flat_reference.py" >"$E2E_TMP/ref.json" 2>"$E2E_TMP/ref.err"
REF_STATUS=$?
sed 's/^/  reference: /' "$E2E_TMP/ref.err"
if [ "$REF_STATUS" -eq 0 ]; then pass "the numpy/scipy reference passes its self-checks"
else STATUS=$REF_STATUS; fail "the numpy/scipy reference passes its self-checks"; fi

run "$LANTERN" sample --data "$P/lcparam_full_long_zhel.txt" --columns z=zcmb,zhel=zhel,mag=mb,err=dmb \
    --model w0wa-flat --seed 20 --format json --quiet "${EXTRA[@]}"
NAME="sample w0wa-flat on Pantheon 2018 (1048 objects, stat only) agrees with the numpy reference"
if [ "$STATUS" -eq 0 ] && [ "$REF_STATUS" -eq 0 ] &&
   /usr/bin/python3 - "$OUT" "$E2E_TMP/ref.json" <<'PY'
import json, math, sys
got = json.load(open(sys.argv[1]))
ref = json.load(open(sys.argv[2]))
conv = got["convergence"]
# the summary's keys and the reference quantile each one is
QUANT = {"median": 0.5, "lo68": 0.16, "hi68": 0.84, "lo95": 0.025, "hi95": 0.975}
bad = []
print("  param    stat     lantern   reference  diff/sd    tol/sd")
for name in ("omega_m", "w0", "wa"):
    r, g = ref[name], got["params"][name]
    per = conv.get("params", {}).get(name, {})
    ess_bulk = per.get("ess_bulk", conv["ess_min"])
    ess_q = min(ess_bulk, per.get("ess_tail", conv["ess_min"]))
    rows = [(k, r[k], max(0.1, 4.0 / math.sqrt(ess_bulk))) for k in ("mean", "sd")]
    for k, p in QUANT.items():
        q = f"q{100 * p:g}"
        mcse = math.sqrt(p * (1 - p) / ess_q) / r["density_at_quantile_per_sd"][q]
        rows.append((k, r[q], max(0.1, 4.0 * mcse)))
    for k, want, tol in rows:
        d = (g[k] - want) / r["sd"]
        flag = "" if abs(d) <= tol else "  <- outside"
        print(f"  {name:8s} {k:7s} {g[k]:9.4f} {want:10.4f} {d:+8.3f} {tol:8.3f}{flag}")
        if abs(d) > tol:
            bad.append(f"{name} {k}")
# chi2_min: the reference minimises the same chi2 (A - B^2/C) inside the
# prior with scipy; 1e-3 is the accuracy lantern's compressed likelihood
# promises (its summary's compression.bound), far below any sampling noise.
d = got["chi2_min"] - ref["chi2_min"]
print(f"  chi2_min         {got['chi2_min']:9.4f} {ref['chi2_min']:10.4f} {d:+8.1e} (absolute; tol 1e-3)")
if abs(d) > 1e-3:
    bad.append("chi2_min")
if got["n_data"] != ref["n_data"]:
    bad.append(f"n_data {got['n_data']} (SOURCE.md: {ref['n_data']} rows)")
sys.exit(f"  outside the tolerance: {', '.join(bad)}" if bad else 0)
PY
then pass "$NAME"; else fail "$NAME"; fi
