#!/usr/bin/env bash
# End-to-end tests of "lantern sample --sampler importance|auto": the
# summary's fields for weighted draws (R-hat null, the importance-sampling
# ESS, Pareto k, every evaluation counted), posterior moments against the
# chains of the MCMC sampler, the same draws with 1 and 2 threads,
# interrupt and resume, and the refused values.
source "$(dirname "$0")/lib.sh"
P="${LANTERN_SHARED:-$ROOT/../shared}/data/pantheon2018"
DATA=(--data "$P/lcparam_DS17f.txt" --columns z=zcmb,zhel=zhel,mag=mb,err=dmb --cov "$P/sys_DS17f.txt")

run "$LANTERN" sample "${DATA[@]}" --model lcdm --sampler importance --out "$E2E_TMP/is" --format json --quiet
cp "$OUT" "$E2E_TMP/is.json"
run "$LANTERN" sample "${DATA[@]}" --model lcdm --sampler mcmc --target-ess 4000 --out "$E2E_TMP/mc" --format json --quiet
cp "$OUT" "$E2E_TMP/mc.json"
# Fields (DESIGN.md: weighted draws have rhat_max null and ess_min the
# importance-sampling ESS), the chain file's weights (their mean is 1 by
# construction), and the moments: the MCMC run (ESS >= 4000) and importance
# sampling agree within the issue's tolerance, max(0.1, 4/sqrt(ESS)) sigma
# with ESS the smaller of the two runs' (a fact of Monte Carlo practice: two
# independent estimates differ by about sqrt(1/ESS1 + 1/ESS2) sigma).
if [ "$STATUS" -eq 0 ] && /usr/bin/python3 - "$E2E_TMP" <<'PY'
import csv, json, math, sys
d = sys.argv[1]
a = json.load(open(d + "/is.json"))
b = json.load(open(d + "/mc.json"))
cv = a["convergence"]
assert a["converged"] is True and a["weighted"] is True, a["converged"]
assert cv["rhat_max"] is None, cv
assert cv["ess_min"] >= 1000, cv["ess_min"]
assert cv["pareto_k"] <= 0.7, cv["pareto_k"]
assert cv["evaluations"] > cv["draws"] * 0.5, cv
assert abs(cv["ess_per_evaluation"] - cv["ess_min"] / cv["evaluations"]) < 1e-12, cv
assert "ess_definition" in cv and "Kish" in cv["ess_definition"], cv
assert b["convergence"]["evaluations"] > b["convergence"]["draws"], b["convergence"]
rows = list(csv.DictReader(open(d + "/is/chains.csv")))
assert len(rows) == cv["draws"], (len(rows), cv["draws"])
w = [float(r["weight"]) for r in rows]
assert abs(sum(w) / len(w) - 1.0) < 1e-9, sum(w) / len(w)
for name in ("omega_m", "omega_de"):
    x = [float(r[name]) for r in rows]
    mean = sum(wi * xi for wi, xi in zip(w, x)) / sum(w)
    assert abs(mean - a["params"][name]["mean"]) < 1e-9 * max(1, abs(mean)), (name, mean)
    sd = b["params"][name]["sd"]
    ess = min(cv["ess_min"], b["convergence"]["ess_min"])
    tol = max(0.1, 4 / math.sqrt(ess)) * sd
    for key in ("mean", "sd", "lo68", "hi68"):
        diff = a["params"][name][key] - b["params"][name][key]
        print(f"# {name} {key}: importance {a['params'][name][key]:.5f} mcmc "
              f"{b['params'][name][key]:.5f} ({diff / sd:+.3f} sd)")
        assert abs(diff) <= tol, (name, key, diff / sd)
assert abs(a["chi2_min"] - b["chi2_min"]) < 1e-6, (a["chi2_min"], b["chi2_min"])
PY
then pass "importance sampling: weighted-draw fields, and moments agree with MCMC"; else fail "importance sampling: weighted-draw fields, and moments agree with MCMC"; fi

# The same draws whatever the thread count.
run "$LANTERN" sample "${DATA[@]}" --model wcdm-flat --sampler importance --threads 1 --seed 5 --out "$E2E_TMP/t1" --quiet
run "$LANTERN" sample "${DATA[@]}" --model wcdm-flat --sampler importance --threads 2 --seed 5 --out "$E2E_TMP/t2" --quiet
if [ "$STATUS" -eq 0 ] && cmp -s "$E2E_TMP/t1/chains.csv" "$E2E_TMP/t2/chains.csv" &&
   cmp -s "$E2E_TMP/t1/summary.json" "$E2E_TMP/t2/summary.json"; then
    pass "importance sampling: 1 and 2 threads give the same files"
else
    fail "importance sampling: 1 and 2 threads give the same files"
fi

# Interrupted (SIGINT) and resumed: the uninterrupted run's files.
LONG=(--model lcdm --sampler importance --target-ess 100000 --seed 3 --threads 2 --quiet)
run "$LANTERN" sample "${DATA[@]}" "${LONG[@]}" --out "$E2E_TMP/full"
full=$STATUS
"$LANTERN" sample "${DATA[@]}" "${LONG[@]}" --out "$E2E_TMP/cut" >"$OUT" 2>"$ERR" &
pid=$!
wait_for "$E2E_TMP/cut/checkpoint/importance.bin"
kill -INT $pid
wait $pid
first=$?
run "$LANTERN" sample --resume "$E2E_TMP/cut" --quiet
if [ "$first" -eq 1 ] && [ "$STATUS" -eq "$full" ] && cmp -s "$E2E_TMP/full/chains.csv" "$E2E_TMP/cut/chains.csv" &&
   cmp -s "$E2E_TMP/full/summary.json" "$E2E_TMP/cut/summary.json"; then
    pass "importance sampling: --resume ends with the uninterrupted run's files"
else
    fail "importance sampling: --resume ends with the uninterrupted run's files (statuses $full, $first)"
fi

# auto on a posterior importance sampling handles: no MCMC after it.
run "$LANTERN" sample "${DATA[@]}" --model lcdm-flat --sampler auto --format json
if [ "$STATUS" -eq 0 ] && grep -q '"pareto_k"' "$OUT" && ! grep -q "sampling by MCMC" "$ERR"; then
    pass "--sampler auto keeps importance sampling where it converges"
else
    fail "--sampler auto keeps importance sampling where it converges"
fi

run "$LANTERN" sample "${DATA[@]}" --model lcdm --sampler gibbs
expect_error "bad --sampler" 2 "--sampler: 'gibbs' is not auto"
printf '[data]\nfile = %s\ncolumns = z=zcmb,mag=mb,err=dmb\n[model]\nname = lcdm\n[sampler]\nmethod = slice\n' \
    "$P/lcparam_DS17f.txt" >"$E2E_TMP/bad.ini"
run "$LANTERN" sample "$E2E_TMP/bad.ini"
expect_error "bad [sampler] method names the file and line" 2 "bad.ini:7: method = 'slice' is not auto"
