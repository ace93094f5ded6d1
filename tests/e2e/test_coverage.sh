#!/usr/bin/env bash
# Coverage of the 68% and 95% intervals of omega_m over simulated surveys of
# the demo design (configs/campaign-coverage.ini): each must be consistent
# with its nominal probability by the exact two-sided binomial test at the
# 0.001 level, computed here by scipy.stats.binomtest, an outside reference.
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
from scipy.stats import binomtest
s = json.load(open(sys.argv[1])); R = int(sys.argv[2])
assert s["done"] == 2 * R and s["unconverged"] == 0, s["done"]
methods = set()
for g in s["bias"]:
    b = g["params"]["omega_m"]
    assert b["n"] == R and b["truth"] == 0.31
    for lvl, nominal in ((68, 0.68), (95, 0.95)):
        c = b["coverage%d" % lvl]
        p = binomtest(c["covered"], R, nominal).pvalue
        print("  %s: %d%% intervals hold the truth in %d of %d, p = %.3g" % (g["method"], lvl, c["covered"], R, p))
        assert p > 1e-3, (g["method"], lvl, c["covered"], p)
        assert abs(c["p_value"] - p) <= 1e-9 * p
    methods.add(g["method"])
assert methods == {"sample", "fit"}
PY
then pass "omega_m coverage over $R demo-design surveys is consistent with 0.68 and 0.95 (exact binomial test, p > 0.001; $took s)"
else fail "omega_m coverage over $R demo-design surveys is consistent with 0.68 and 0.95 (exact binomial test, p > 0.001)"; fi
