#!/usr/bin/env bash
# End-to-end tests of "lantern compare": the acceptance command, the
# contract's fields, the Kass & Raftery reading, and the refusals.
source "$(dirname "$0")/lib.sh"
P="${LANTERN_SHARED:-$ROOT/../shared}/data/pantheon2018"
DATA=(--data "$P/lcparam_DS17f.txt" --columns z=zcmb,zhel=zhel,mag=mb,err=dmb --cov "$P/sys_DS17f.txt")

# The acceptance command of issue 7.
start=$(date +%s)
run "$LANTERN" compare "${DATA[@]}" --models lcdm-flat,wcdm-flat --prior w0=uniform:-2:0 --format json --out "$E2E_TMP/c"
took=$(( $(date +%s) - start ))
if [ "$STATUS" -eq 0 ] && /usr/bin/python3 - "$OUT" "$E2E_TMP/c" <<'PY'
import json, math, sys
j = json.load(open(sys.argv[1]))
assert json.load(open(sys.argv[2] + "/summary.json")) == j
a, b = j["models"]
assert a["model"] == "lcdm-flat" and b["model"] == "wcdm-flat"
for m in (a, b):
    e = m["evidence"]
    assert e["ln_z_err"] < 0.1 and math.isfinite(e["ln_z"]), e
    for k in ("k_params", "chi2_min", "delta_chi2", "dof", "aic", "bic", "dic", "ln_b", "reading"):
        assert k in m, k
# k counts the marginalised offset; AIC and BIC from chi2_min
assert a["k_params"] == 2 and b["k_params"] == 3
assert abs(b["aic"] - (b["chi2_min"] + 6)) < 1e-9 and abs(b["bic"] - (b["chi2_min"] + 3 * math.log(40))) < 1e-9
assert abs(b["ln_b"] - (b["evidence"]["ln_z"] - a["evidence"]["ln_z"])) < 1e-12 and a["ln_b"] == 0
# ln B of about -1.2: 2 ln B of -2.5 reads "positive" for the reference (Kass & Raftery 1995)
assert -2.0 < b["ln_b"] < -0.5 and b["reading"] == "for the reference: positive", b["reading"]
assert b["params"]["w0"]["prior"] == "U(-2, 0)"
assert abs(b["delta_chi2"] - (b["chi2_min"] - a["chi2_min"])) < 1e-12 and a["delta_chi2"] == 0
PY
then pass "compare Pantheon lcdm-flat vs wcdm-flat: ln Z errors < 0.1, fields, reading ($took s)"; else fail "compare Pantheon lcdm-flat vs wcdm-flat: ln Z errors < 0.1, fields, reading"; fi
[ -s "$E2E_TMP/c/nested_wcdm-flat.csv" ] && head -1 "$E2E_TMP/c/nested_wcdm-flat.csv" | grep -q "^weight,loglike,omega_m,w0$" &&
    pass "--out keeps the weighted posterior draws" || fail "--out keeps the weighted posterior draws"

run "$LANTERN" compare "${DATA[@]}" --models lcdm-flat,wcdm-flat
expect_stdout "the table names the priors beside it" 'wcdm-flat +omega_m U\(0, 1\), w0 U\(-2, 0\)'

# A posterior that presses on a prior edge is warned about (w0 bounded at -1.2).
run "$LANTERN" compare "${DATA[@]}" --models lcdm-flat,wcdm-flat --prior w0=uniform:-1.2:0 --live-points 200 --quiet
if [ "$STATUS" -eq 0 ] && grep -q "wcdm-flat: the posterior of w0 reaches the lower edge of its prior" "$ERR"; then pass "a prior edge is warned about"; else fail "a prior edge is warned about"; fi
# Issue 16 item 3: a posterior that fills its prior (omega_m 0.30 +- 0.02 on
# Pantheon, as Scolnic et al. 2018 quote in their abstract (0.298 +- 0.022;
# from memory), on U(0.3, 0.32)) was not warned about: its 2.5% and 97.5%
# quantiles lie more than 2% of the width inside.
run "$LANTERN" compare "${DATA[@]}" --models lcdm-flat --prior omega_m=uniform:0.3:0.32 --live-points 200 --quiet --format json
if [ "$STATUS" -eq 0 ] && grep -q "lcdm-flat: the posterior of omega_m reaches both edges of its prior U(0.3, 0.32)" "$ERR" &&
   grep -q '"the posterior of omega_m reaches both edges' "$OUT"; then
    pass "a posterior that fills its prior is warned about (weighted nested draws)"
else fail "a posterior that fills its prior is warned about (weighted nested draws)"; fi

# DIC with p_V = var(D)/2 (Gelman et al. 2013, BDA3 sec. 7.2). With the offset
# sampled and h0 free the two lie on a curved ridge whose posterior mean is off
# the ridge: Spiegelhalter's p_D from the mean made DIC -191 to -321 there.
# p_V cannot go negative, so DIC >= D_mean >= chi2_min (D is the chi2 when the
# offset is sampled); p_V equals half the weighted variance of D = -2 ln L over
# the nested draws (numpy, from nested_MODEL.csv); a Gaussian-like posterior
# of k sampled parameters has p_V near k (chi2_k has variance 2k).
ok=1
for seed in 1 2; do
    run "$LANTERN" compare "${DATA[@]}" --models lcdm-flat,w0wa-flat --prior offset=uniform:-21:-17 \
        --prior h0=uniform:40:100 --seed $seed --live-points 400 --format json --quiet --out "$E2E_TMP/dic$seed"
    [ "$STATUS" -eq 0 ] && /usr/bin/python3 - "$OUT" "$E2E_TMP/dic$seed" <<'PY' || ok=0
import json, sys
import numpy as np
j = json.load(open(sys.argv[1]))
for m in j["models"]:
    assert m["p_d_definition"].startswith("p_V = var(D)/2"), m["p_d_definition"]
    assert m["p_d"] >= 0 and m["dic"] >= m["chi2_min"] + m["p_d"] - 1e-9, (m["model"], m["dic"], m["p_d"])
    t = np.genfromtxt(sys.argv[2] + "/nested_%s.csv" % m["model"], delimiter=",", names=True)
    w = t["weight"] / t["weight"].sum()
    d = -2 * t["loglike"]
    var = np.sum(w * (d - np.sum(w * d)) ** 2)
    assert abs(m["p_d"] - var / 2) < 1e-6 * max(1, var), (m["p_d"], var / 2)
lcdm = j["models"][0]
# three sampled (omega_m, h0, offset), h0 and offset degenerate: p_V near 2
assert 1.5 < lcdm["p_d"] < 3.5, lcdm["p_d"]
PY
done
[ "$ok" -eq 1 ] && pass "DIC: p_V = var(D)/2 >= 0 with a sampled offset and h0 free (numpy), near k" ||
    fail "DIC: p_V = var(D)/2 >= 0 with a sampled offset and h0 free (numpy), near k"
# A posterior cut hard by its prior is far from Gaussian: p_V strays from k and
# the comparison says DIC is a poor guide there.
run "$LANTERN" compare "${DATA[@]}" --models wcdm-flat --prior w0=uniform:-1.2:-1.1 --prior omega_m=uniform:0:0.05 \
    --live-points 200 --format json --quiet
if [ "$STATUS" -eq 0 ] && grep -q "DIC is a poor guide" "$ERR" &&
   grep -q "DIC is a poor guide" "$OUT"; then pass "DIC: |p_V - k| > max(1, k/2) is warned about"; else fail "DIC: |p_V - k| > max(1, k/2) is warned about"; fi

run "$LANTERN" compare "${DATA[@]}"
expect_error "--models is required" 2 "--models M1,M2,... is required"
run "$LANTERN" compare "${DATA[@]}" --models lcdm,foo
expect_error "an unknown model" 2 "unknown model 'foo'"
run "$LANTERN" compare "${DATA[@]}" --models lcdm --live-points 5
expect_error "too few live points" 2 "--live-points: '5'"

# Interrupted by each signal lantern catches, at several points, and resumed
# each time: the same summary, table and weighted draws as an uninterrupted
# comparison, and no final file while it is unfinished.
CMP=(--models lcdm-flat,wcdm-flat,w0wa-flat --live-points 400 --seed 5 --format json --quiet)
run "$LANTERN" compare "${DATA[@]}" "${CMP[@]}" --out "$E2E_TMP/whole"
cp "$OUT" "$E2E_TMP/whole.json"
"$LANTERN" compare "${DATA[@]}" "${CMP[@]}" --out "$E2E_TMP/cut" >/dev/null 2>"$ERR" &
pid=$!
wait_for "$E2E_TMP/cut/checkpoint"
sleep 0.3
kill -INT $pid
wait $pid
first=$?
if [ "$first" -eq 1 ] && grep -q "continue with the same options and --resume" "$ERR" &&
   [ -d "$E2E_TMP/cut/checkpoint" ] && [ ! -e "$E2E_TMP/cut/summary.json" ] &&
   [ -z "$(ls "$E2E_TMP/cut" | grep nested_)" ]; then
    pass "compare, SIGINT: status 1, checkpoints and no final files"
else
    fail "compare, SIGINT: status 1, checkpoints and no final files (status $first)"
fi
kills=0
for sig in TERM HUP INT; do
    "$LANTERN" compare "${DATA[@]}" "${CMP[@]}" --resume "$E2E_TMP/cut" >/dev/null 2>>"$ERR" &
    pid=$!
    sleep 0.4
    kill -$sig $pid 2>/dev/null && kills=$((kills + 1))
    wait $pid
done
run "$LANTERN" compare "${DATA[@]}" "${CMP[@]}" --resume "$E2E_TMP/cut"
same=1
for f in summary.json nested_lcdm-flat.csv nested_wcdm-flat.csv nested_w0wa-flat.csv; do
    cmp -s "$E2E_TMP/whole/$f" "$E2E_TMP/cut/$f" || same=0
done
if [ "$STATUS" -eq 0 ] && [ "$kills" -ge 1 ] && [ "$same" -eq 1 ] && cmp -s "$OUT" "$E2E_TMP/whole.json"; then
    pass "compare killed at four points ($kills resumed runs killed) and resumed: byte-identical results"
else
    fail "compare killed at four points ($kills resumed runs killed) and resumed: byte-identical results"
fi
# The posterior moments are the weighted ones of the draws written beside
# them (nested_MODEL.csv), by numpy: the mean sum(w x)/W and the sd with the
# unbiased divisor W - sum(w^2)/W of reliability weights, as lantern sample
# and campaign records quote them (issue 18 folded compare's own population
# sd into the posterior module's).
if /usr/bin/python3 - "$E2E_TMP/whole" <<'PY'
import json, sys
import numpy as np
d = sys.argv[1]
s = json.load(open(d + "/summary.json"))
for m in s["models"]:
    a = np.genfromtxt(f"{d}/nested_{m['model']}.csv", delimiter=",", names=True)
    w = a["weight"]
    W, W2 = w.sum(), (w * w).sum()
    for name, p in m["params"].items():
        x = a[name]
        mean = (w * x).sum() / W
        sd = np.sqrt((w * (x - mean) ** 2).sum() / (W - W2 / W))
        assert abs(p["mean"] - mean) <= 1e-12 * max(1, abs(mean)), (m["model"], name, p["mean"], mean)
        assert abs(p["sd"] / sd - 1) < 1e-9, (m["model"], name, p["sd"], sd)
PY
then pass "compare: params mean and sd are the weighted moments of the nested draws (numpy)"
else fail "compare: params mean and sd are the weighted moments of the nested draws (numpy)"; fi

# --resume DIR alone (issue 18): the comparison's settings are in
# DIR/checkpoint/settings.ini, so the folder is all a resume needs; the same
# results as the uninterrupted comparison, byte for byte.
"$LANTERN" compare "${DATA[@]}" "${CMP[@]}" --out "$E2E_TMP/alone" >/dev/null 2>"$ERR" &
pid=$!
wait_for "$E2E_TMP/alone/checkpoint/settings.ini"
sleep 0.3
kill -INT $pid
wait $pid
first=$?
grep -q "or with 'lantern compare --resume $E2E_TMP/alone' alone" "$ERR" || first=99
run "$LANTERN" compare --resume "$E2E_TMP/alone" --format json --quiet
same=1
for f in summary.json nested_lcdm-flat.csv nested_wcdm-flat.csv nested_w0wa-flat.csv; do
    cmp -s "$E2E_TMP/whole/$f" "$E2E_TMP/alone/$f" || same=0
done
if [ "$first" -eq 1 ] && [ "$STATUS" -eq 0 ] && [ "$same" -eq 1 ] && cmp -s "$OUT" "$E2E_TMP/whole.json"; then
    pass "compare --resume DIR alone: byte-identical to the uninterrupted comparison"
else
    fail "compare --resume DIR alone: byte-identical to the uninterrupted comparison (first status $first)"
fi
mkdir -p "$E2E_TMP/bare"
run "$LANTERN" compare --resume "$E2E_TMP/bare"
expect_error "compare --resume DIR alone without settings" 2 "checkpoint/settings.ini is missing"

# The models run side by side, one per thread (issue 16): the same summary and
# weighted draws with one thread, two threads and the default as above, and
# the progress lines on stderr whole, one per model, never cut into.
run "$LANTERN" compare "${DATA[@]}" "${CMP[@]}" --threads 1 --out "$E2E_TMP/t1"
run "$LANTERN" compare "${DATA[@]}" --models lcdm-flat,wcdm-flat,w0wa-flat --live-points 400 --seed 5 \
    --format json --threads 2 --out "$E2E_TMP/t2"
same=1
for t in t1 t2; do
    for f in summary.json nested_lcdm-flat.csv nested_wcdm-flat.csv nested_w0wa-flat.csv; do
        cmp -s "$E2E_TMP/whole/$f" "$E2E_TMP/$t/$f" || same=0
    done
done
[ "$STATUS" -eq 0 ] && [ "$same" -eq 1 ] && cmp -s "$OUT" "$E2E_TMP/whole.json" &&
    pass "compare with 1 thread, 2 threads and the default: byte-identical summary and draws" ||
    fail "compare with 1 thread, 2 threads and the default: byte-identical summary and draws"
if /usr/bin/python3 - "$ERR" <<'PY'
import re, sys
lines = open(sys.argv[1]).read().split("\n")
assert lines[-1] == "", "stderr ends in a whole line"
seen = []
for l in lines[:-1]:
    m = re.fullmatch(r"\[([123])/3\] (lcdm-flat|wcdm-flat|w0wa-flat): best fit, then nested sampling with 400 live points", l)
    if m:
        seen.append((m.group(1), m.group(2)))
    elif not re.fullmatch(r"lantern: warning \[(prior-edge|dic)\]: (lcdm-flat|wcdm-flat|w0wa-flat): .*", l):
        # besides the models' own warnings (prior edges, DIC), only the data's
        assert re.fullmatch(r"lantern: warning \[header-extra-names\]: .*lcparam_DS17f.txt:1: the header names 19 columns but rows have 18 fields.*", l), l
assert sorted(seen) == [("1", "lcdm-flat"), ("2", "wcdm-flat"), ("3", "w0wa-flat")], seen
PY
then pass "compare on 2 threads: one whole progress line per model on stderr"; else fail "compare on 2 threads: one whole progress line per model on stderr"; fi

# Issue 20: the nested runs' progress, a line per 1000 iterations and one at
# the end of each model with --verbose (models side by side: lines whole);
# the last line of each model carries its run's iterations and evaluations
# (the JSON's) and a remaining dlogz under the stopping rule's 0.01 (printed
# to 3 digits, so at most 0.01); none with --quiet --verbose, and none off a
# terminal without --verbose (the 2-thread check above).
run "$LANTERN" compare "${DATA[@]}" --models lcdm-flat,wcdm-flat,w0wa-flat --live-points 400 --seed 5 \
    --format json --threads 2 --verbose
if [ "$STATUS" -eq 0 ] && /usr/bin/python3 - "$ERR" "$OUT" <<'PY'
import json, re, sys
lines = open(sys.argv[1]).read().split("\n")
assert lines[-1] == "", "stderr ends in a whole line"
runs = {}
for l in lines[:-1]:
    m = re.fullmatch(r"nested sampling (\S+): (\d+) iterations, (\d+) likelihood evaluations, "
                     r"ln Z = (-?[0-9.]+), the live points could add ([0-9.e+-]+)", l)
    if m:
        runs.setdefault(m.group(1), []).append((int(m.group(2)), int(m.group(3)), float(m.group(4)), float(m.group(5))))
j = {m["model"]: m["evidence"] for m in json.load(open(sys.argv[2]))["models"]}
assert sorted(runs) == sorted(j), (sorted(runs), sorted(j))
for name, r in runs.items():
    assert [x[0] for x in r[:-1]] == [1000 * (i + 1) for i in range(len(r) - 1)], r
    it, ev, lz, left = r[-1]
    assert it == j[name]["iterations"] and ev == j[name]["evals"], (r[-1], j[name])
    assert left <= 0.01 and lz <= j[name]["ln_z"] + 1e-3, (r[-1], j[name]["ln_z"])  # printed to 3 digits
PY
then pass "compare --verbose: nested progress lines per model, the last one the run's"; else fail "compare --verbose: nested progress lines per model, the last one the run's"; fi
run "$LANTERN" compare "${DATA[@]}" --models lcdm-flat --live-points 200 --format json --verbose --quiet
! grep -q "^nested sampling" "$ERR" && pass "compare --quiet: no nested progress" || fail "compare --quiet: no nested progress"

run "$LANTERN" compare "${DATA[@]}" --models lcdm-flat,wcdm-flat,w0wa-flat --live-points 400 --seed 6 --resume "$E2E_TMP/cut"
expect_error "compare --resume with another seed is refused" 2 "belongs to another run"
run "$LANTERN" compare "${DATA[@]}" "${CMP[@]}" --resume "$E2E_TMP/nowhere"
expect_error "compare --resume without a checkpoint" 2 "no checkpoint here"
run "$LANTERN" compare "${DATA[@]}" "${CMP[@]}" --out "$E2E_TMP/cut"
expect_error "compare: an earlier comparison is refused without --force" 2 "pass --force"
