#!/usr/bin/env bash
# Coverage of the 68% and 95% intervals of omega_m over simulated surveys of
# the demo design (configs/campaign-coverage.ini): each must be consistent
# with its nominal probability by the exact two-sided binomial test at the
# 0.001 level, computed here by scipy.stats.binomtest, an outside reference.
# The nominal probability is what the interval is defined to hold: 0.6827 =
# Phi(1) - Phi(-1) (scipy.stats.norm) for best +- 1 sd and the 15.87-84.13%
# quantiles, 0.95 for best +- 1.96 sd and the 2.5-97.5% quantiles.
# CI runs the first COVERAGE_REALIZATIONS (40) realizations; make test-long
# runs all 200.
source "$(dirname "$0")/lib.sh"
R=${COVERAGE_REALIZATIONS:-40}
C="$E2E_TMP/coverage.ini"
sed -e "s|^realizations = .*|realizations = $R|" -e "s|^scenario = \.\./|scenario = $ROOT/|" \
    "$ROOT/configs/campaign-coverage.ini" >"$C"
start=$(date +%s)
run "$LANTERN" campaign "$C" --out "$E2E_TMP/cov" --quiet
took=$(( $(date +%s) - start ))
if [ "$STATUS" -eq 0 ] && /usr/bin/python3 - "$E2E_TMP/cov/summary.json" "$R" <<'PY'
import json, sys
from scipy.stats import binomtest, norm
s = json.load(open(sys.argv[1])); R = int(sys.argv[2])
assert s["done"] == 2 * R and s["unconverged"] == 0, s["done"]
methods = set()
for g in s["bias"]:
    b = g["params"]["omega_m"]
    assert b["n"] == R and b["truth"] == 0.31 and g["dropped"] == 0
    for lvl, nominal in ((68, norm.cdf(1) - norm.cdf(-1)), (95, 0.95)):
        c = b["coverage%d" % lvl]
        assert abs(c["nominal"] - nominal) < 1e-15, (c["nominal"], nominal)
        p = binomtest(c["covered"], R, nominal).pvalue
        print("  %s: %d%% intervals hold the truth in %d of %d, p = %.3g" % (g["method"], lvl, c["covered"], R, p))
        assert p > 1e-3, (g["method"], lvl, c["covered"], p)
        assert abs(c["p_value"] - p) <= 1e-9 * p
    methods.add(g["method"])
assert methods == {"sample", "fit"}
PY
then pass "omega_m coverage over $R demo-design surveys is consistent with 0.6827 and 0.95 (exact binomial test, p > 0.001; $took s)"
else fail "omega_m coverage over $R demo-design surveys is consistent with 0.6827 and 0.95 (exact binomial test, p > 0.001)"; fi

# The bias itself: what the demo design should give, by a Monte Carlo of
# 10000 surveys independent of lantern (tests/reference/helpers/bias_mc.py:
# astropy distances, numpy draws from the full covariance, a grid fit), for
# the best fit and for the posterior mean; lantern's mean bias over its R
# realizations must agree within 3 combined standard errors.
"$LANTERN" simulate "$ROOT/data/lamplighter.ini" --out "$E2E_TMP/design" >/dev/null 2>&1
if /usr/bin/python3 "$ROOT/tests/reference/helpers/bias_mc.py" "$E2E_TMP/design" 0.31 10000 1 >"$E2E_TMP/mc.json" &&
    /usr/bin/python3 - "$E2E_TMP/cov/summary.json" "$E2E_TMP/mc.json" <<'PY'
import json, math, sys
s = json.load(open(sys.argv[1])); mc = json.load(open(sys.argv[2]))
for g in s["bias"]:
    b = g["params"]["omega_m"]
    want, werr = (mc["fit_bias"], mc["fit_bias_err"]) if g["method"] == "fit" else \
                 (mc["mean_bias"], mc["mean_bias_err"])
    tol = 3 * math.hypot(b["bias_err"], werr)
    print("  %s: bias %+.5f +- %.5f, independent Monte Carlo %+.5f +- %.5f" %
          (g["method"], b["bias_mean"], b["bias_err"], want, werr))
    assert abs(b["bias_mean"] - want) < tol
PY
then pass "the omega_m bias of the best fit and the posterior mean agree with an independent Monte Carlo (numpy, astropy)"
else fail "the omega_m bias of the best fit and the posterior mean agree with an independent Monte Carlo (numpy, astropy)"; fi
