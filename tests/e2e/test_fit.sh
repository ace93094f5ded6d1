#!/usr/bin/env bash
# End-to-end tests of "lantern fit": the acceptance command, the output
# folder, run files and flags, and every usage error.
source "$(dirname "$0")/lib.sh"
P="${LANTERN_SHARED:-$ROOT/../shared}/data/pantheon2018"
DATA=(--data "$P/lcparam_DS17f.txt" --columns z=zcmb,zhel=zhel,mag=mb,err=dmb)
SYS=(--cov "$P/sys_DS17f.txt")

# The acceptance command of issue 4 (values from Scolnic et al. 2018 and the issue).
run "$LANTERN" fit "${DATA[@]}" "${SYS[@]}" --model lcdm-flat --format json
cp "$OUT" "$E2E_TMP/fit.json"
if [ "$STATUS" -eq 0 ] && /usr/bin/python3 -c '
import json, sys
j = json.load(open(sys.argv[1]))
p = j["params"]["omega_m"]
assert abs(p["best"] - 0.296) < 0.002, p
assert abs(p["sd"] - 0.022) < 0.002, p
assert abs(j["chi2_min"] - 39.3) < 0.05 and j["n_data"] == 40 and j["dof"] == 38, j
assert j["converged"] is True and j["model"] == "lcdm-flat"
assert set(j["derived"]) == {"omega_de", "q0", "z_t"}
assert j["offset"]["mode"] == "marginal" and j["fixed"]["h0"] == 70
# AIC and BIC count the marginalised offset: k = 2
assert abs(j["aic"] - (j["chi2_min"] + 4)) < 1e-9
' "$OUT"; then pass "fit Pantheon 2018 flat LCDM: omega_m 0.296 +- 0.022, chi2_min 39.3"; else fail "fit Pantheon 2018 flat LCDM: omega_m 0.296 +- 0.022, chi2_min 39.3"; fi

run "$LANTERN" fit "${DATA[@]}" "${SYS[@]}" --model lcdm-flat --format json
cmp -s "$OUT" "$E2E_TMP/fit.json" && pass "the same seed gives the same JSON" || fail "the same seed gives the same JSON"

run "$LANTERN" fit "${DATA[@]}" "${SYS[@]}" --model lcdm-flat
expect_stdout "the table names the parameter, its error and prior" '^  omega_m +0\.296[0-9]* +0\.021[0-9]* +U\(0, 1\)$'

# --out: summary.json and residuals.csv
run "$LANTERN" fit "${DATA[@]}" "${SYS[@]}" --model lcdm-flat --out "$E2E_TMP/fitout" --format json
if [ "$STATUS" -eq 0 ] && cmp -s "$OUT" "$E2E_TMP/fitout/summary.json" &&
   [ "$(head -1 "$E2E_TMP/fitout/residuals.csv")" = "id,z,zhel,observed,model,residual,pull" ] &&
   [ "$(wc -l <"$E2E_TMP/fitout/residuals.csv")" -eq 41 ]; then
    pass "--out writes summary.json (as printed) and residuals.csv (40 rows)"
else
    fail "--out writes summary.json (as printed) and residuals.csv (40 rows)"
fi
/usr/bin/python3 - "$E2E_TMP/fitout/residuals.csv" "$P/lcparam_DS17f.txt" "$P/sys_DS17f.txt" <<'PY' && pass "residuals: observed - model, pulls by the total variance" || fail "residuals: observed - model, pulls by the total variance"
import csv, sys
import numpy as np
rows = list(csv.DictReader(open(sys.argv[1])))
d = np.genfromtxt(sys.argv[2], names=True, usecols=range(18))
s = np.loadtxt(sys.argv[3])[1:].reshape(40, 40)
var = d["dmb"] ** 2 + np.diag(s)
for r, mb, v in zip(rows, d["mb"], var):
    assert float(r["observed"]) == mb
    assert abs(float(r["residual"]) - (mb - float(r["model"]))) < 1e-12
    assert abs(float(r["pull"]) - float(r["residual"]) / np.sqrt(v)) < 1e-12
PY
run "$LANTERN" fit "${DATA[@]}" --model lcdm-flat --out "$E2E_TMP/fitout"
expect_error "--out refuses an earlier run" 2 "pass --force"

# Run files: the same fit, flags overriding the file.
run "$LANTERN" fit "$ROOT/configs/pantheon2018.ini" --format json
/usr/bin/python3 -c '
import json, sys
a, b = (json.load(open(p)) for p in sys.argv[1:])
assert a["params"] == b["params"] and a["chi2_min"] == b["chi2_min"]
' "$OUT" "$E2E_TMP/fit.json" && pass "configs/pantheon2018.ini gives the flag-driven fit" || fail "configs/pantheon2018.ini gives the flag-driven fit"
run "$LANTERN" fit "$ROOT/configs/pantheon2018.ini" --model lcdm --prior omega_m=uniform:0.1:0.6 --format json
/usr/bin/python3 -c '
import json, sys
j = json.load(open(sys.argv[1]))
assert j["model"] == "lcdm" and j["params"]["omega_m"]["prior"] == "U(0.1, 0.6)"
assert "omega_de" in j["params"]
' "$OUT" && pass "flags override the run file's model and prior" || fail "flags override the run file's model and prior"
run "$LANTERN" fit "$ROOT/configs/pantheon2018.ini" --cov "$P/sys_DS17f.txt" --cov "$P/sys_DS17f.txt" --format json
/usr/bin/python3 -c '
import json, sys
j = json.load(open(sys.argv[1]))
assert len(j["data"]["cov"]) == 2  # the flags replaced the file list, not added to it
' "$OUT" && pass "--cov flags replace the run file's cov list" || fail "--cov flags replace the run file's cov list"

mkdir -p "$E2E_TMP/runs"
rf() { printf '%b' "$2" >"$E2E_TMP/runs/$1"; echo "$E2E_TMP/runs/$1"; }
F=$(rf typo.ini "[data]\nfile = $P/lcparam_DS17f.txt\ncolums = z=zcmb\n")
run "$LANTERN" fit "$F" --model lcdm-flat
expect_error "run file: unknown key, with its line" 2 "typo.ini:3: unknown key 'colums' in \[data\]"
F=$(rf section.ini "[data]\n[modle]\nname = lcdm\n")
run "$LANTERN" fit "$F"
expect_error "run file: unknown section" 2 "section.ini:2: unknown section \[modle\]"
F=$(rf starts.ini "[fit]\nstarts = many\n")
run "$LANTERN" fit "$F"
expect_error "run file: bad value" 2 "starts.ini:2: starts = 'many'"
F=$(rf prior.ini "[priors]\nomega_m = uniform:1:0\n")
run "$LANTERN" fit "$F" "${DATA[@]}" --model lcdm-flat
expect_error "run file: impossible prior bounds, with its line" 2 "prior.ini:2: .*impossible bounds"
F=$(rf long.ini "[data]\ncolumns = $(head -c 5000 /dev/zero | tr '\0' x)\n")
run "$LANTERN" fit "$F"
expect_error "run file: an over-long line is refused, not cut" 2 "long.ini:2: line is 50[0-9]+ bytes long"
F=$(rf bool.ini "[data]\nno_err_diag = maybe\n")
run "$LANTERN" fit "$F"
expect_error "run file: bad boolean" 2 "bool.ini:2: no_err_diag = 'maybe' is not true or false"
run "$LANTERN" fit "$E2E_TMP/runs/none.ini"
expect_error "run file: missing" 2 "none.ini: cannot open"
F=$(rf nul.ini "[data]\nfile = a\0b\n")
run "$LANTERN" fit "$F"
expect_error "run file: a NUL byte" 2 "nul.ini: holds a NUL byte"
F=$(rf unclosed.ini "[data\nfile = a\n")
run "$LANTERN" fit "$F"
expect_error "run file: section header without ]" 2 "unclosed.ini:1: section header without"
F=$(rf dup.ini "[fit]\nstarts = 4\nstarts = 5\n")
run "$LANTERN" fit "$F"
expect_error "run file: a key twice" 2 "dup.ini:3: key 'starts' appears twice in \[fit\] \(first at line 2\)"
F=$(rf noeq.ini "[fit]\nstarts\n")
run "$LANTERN" fit "$F"
expect_error "run file: a line that is no key = value" 2 "noeq.ini:2: expected 'key = value'"
# Limits instead of running out of memory: a run file over 4 MiB is refused
# before it is parsed.
{ printf '[data]\n'; head -c 5000000 /dev/zero | tr '\0' '#'; printf '\n'; } >"$E2E_TMP/runs/huge.ini"
run "$LANTERN" fit "$E2E_TMP/runs/huge.ini"
expect_error "run file: over the 4 MiB limit" 2 "huge.ini: file is larger than the limit of 4194304 bytes"

# At a prior edge the Laplace errors are undefined: the JSON has null, the
# table "-" (never "nan") and a note saying why.
run "$LANTERN" fit "${DATA[@]}" --model lcdm-flat --prior omega_m=uniform:0.35:0.5
if [ "$STATUS" -eq 0 ] && ! grep -qi "nan" "$OUT" &&
   grep -qE "^  omega_m +0\.35 +- +U\(0\.35, 0\.5\)" "$OUT" &&
   grep -q "the sigmas shown as -" "$OUT"; then pass "fit at a prior edge prints - for the errors, not nan"; else fail "fit at a prior edge prints - for the errors, not nan"; fi
# The offset is counted in k only where there is one (mag data, marginalised).
/usr/bin/python3 - "$ROOT/data/lamplighter/survey.csv" "$E2E_TMP/mu.csv" <<'PY'
import csv, sys
# distance moduli from the demo's magnitudes with M = -19.3 (any M will do:
# the check is about the words, not the numbers)
rows = list(csv.DictReader(open(sys.argv[1])))
with open(sys.argv[2], "w") as f:
    f.write("z,mu,err\n")
    for r in rows:
        f.write("%s,%.6f,%s\n" % (r["z"], float(r["mag"]) + 19.3, r["err"]))
PY
run "$LANTERN" fit --data "$E2E_TMP/mu.csv" --columns z=z,mu=mu,err=err --model lcdm-flat
if [ "$STATUS" -eq 0 ] && grep -q "k = 2 parameters)" "$OUT" && ! grep -q "offset counted" "$OUT"; then
    pass "fit on mu data: k without an offset, and no word of one"; else fail "fit on mu data: k without an offset, and no word of one"; fi
run "$LANTERN" fit "${DATA[@]}" --model lcdm-flat
expect_stdout "fit on mag data: k counts the marginalised offset" "k = 2 parameters, the marginalised offset counted"

# Usage errors: status 2 and a message.
run "$LANTERN" fit "${DATA[@]}"
expect_error "missing --model" 2 "--model is required"
run "$LANTERN" fit "${DATA[@]}" --model lcdm-flatt
expect_error "unknown model" 2 "unknown model 'lcdm-flatt'"
run "$LANTERN" fit "${DATA[@]}" --model lcdm-flat --prior omega_m=uniform:0.5:0.2
expect_error "impossible prior bounds" 2 "impossible bounds"
run "$LANTERN" fit "${DATA[@]}" --model lcdm-flat --prior omega_m=flat:0:1
expect_error "unknown prior kind" 2 "the kind must be uniform or gauss"
run "$LANTERN" fit "${DATA[@]}" --model lcdm-flat --prior omega_m=gauss:0.3:0
expect_error "gauss prior with sd 0" 2 "standard deviation must be > 0"
run "$LANTERN" fit "${DATA[@]}" --model lcdm-flat --prior omega_m=uniform:0:x
expect_error "non-numeric prior" 2 "not uniform:LO:HI or gauss:MEAN:SD"
run "$LANTERN" fit "${DATA[@]}" --model lcdm-flat --prior omega_m
expect_error "--prior without =" 2 "--prior: 'omega_m' is not NAME="
run "$LANTERN" fit "${DATA[@]}" --model lcdm-flat --prior Om=uniform:0:1
expect_error "unknown parameter in --prior" 2 "unknown parameter 'Om'"
run "$LANTERN" fit "${DATA[@]}" --model lcdm-flat --fix w0=-1
expect_error "--fix on a parameter the model lacks" 2 "model lcdm-flat has no parameter w0"
run "$LANTERN" fit "${DATA[@]}" --model lcdm-flat --fix omega_m=abc
expect_error "non-numeric --fix" 2 "omega_m = 'abc' is not a finite number"
run "$LANTERN" fit "${DATA[@]}" --model lcdm-flat --fix omega_m=0.3 --fix omega_m=0.31
expect_error "--fix twice" 2 "omega_m is given twice"
run "$LANTERN" fit "${DATA[@]}" --model lcdm-flat --prior omega_m=uniform:0:1 --fix omega_m=0.3
expect_error "prior and fix on one parameter" 2 "both a prior and a fixed value"
run "$LANTERN" fit "${DATA[@]}" --model lcdm-flat --prior h0=uniform:60:80
expect_error "h0 against a marginalised offset" 2 "h0 is degenerate"
run "$LANTERN" fit "${DATA[@]}" --model lcdm-flat --offset floating
expect_error "unknown offset mode" 2 "'floating' is not none, marginal or sampled"
run "$LANTERN" fit "${DATA[@]}" --model lcdm-flat --seed -3
expect_error "bad seed" 2 "--seed: '-3' is not a seed"
run "$LANTERN" fit "${DATA[@]}" --model lcdm-flat --format csv
expect_error "fit has no csv format" 2 "'csv' is not one of table, json"
run "$LANTERN" fit --help
expect_stdout "fit --help lists the default priors" 'omega_de U\(0,1\.6\)'

# A sampled offset with a calibration prior frees h0 (mag = mu(h0) + M).
run "$LANTERN" fit "${DATA[@]}" "${SYS[@]}" --model lcdm-flat --prior offset=gauss:-19.25:0.05 --format json
/usr/bin/python3 -c '
import json, sys
j = json.load(open(sys.argv[1]))
assert set(j["params"]) == {"h0", "omega_m", "offset"} and j["dof"] == 37
assert "age_gyr" in j["derived"] and j["offset"]["mode"] == "sampled"
# h0 and M are degenerate: h0 follows the calibration, 5 log10 h0 - M fixed
assert 60 < j["params"]["h0"]["best"] < 80
' "$OUT" && pass "a prior on offset samples it and frees h0" || fail "a prior on offset samples it and frees h0"

# ---- lantern bench (fit's data and model flags): what it reports ----
# The demo survey: its rows counted here, independently of lantern. The
# compressed path must follow the exact one: its knots are chosen for
# |Delta chi2| < 2e-4 at the set-up's test points (lantern/likelihood.h);
# bench's points near the best fit get a margin of 1e-3 (our tolerance,
# not a published one).
DEMO_ROWS=$(($(wc -l <"$ROOT/data/lamplighter/survey.csv") - 1))
run "$LANTERN" bench "$ROOT/configs/demo.ini" --model lcdm-flat --evals 500 --format json
if [ "$STATUS" -eq 0 ] && /usr/bin/python3 -c '
import json, sys
j = json.load(open(sys.argv[1]))
assert j["model"] == "lcdm-flat" and j["n_data"] == int(sys.argv[2]), j
assert j["path"] == "compressed" and j["knots"] > 0 and j["covariance"] == "structured", j
assert 0 <= j["max_abs_dchi2"] < 1e-3, j
assert j["evals_per_s"] > 0 and j["setup_s"] >= 0 and j["peak_rss_mb"] > 0, j
' "$OUT" "$DEMO_ROWS"; then pass "bench on the demo: its $DEMO_ROWS objects, compressed path within 1e-3 of the exact"
else fail "bench on the demo: its $DEMO_ROWS objects, compressed path within 1e-3 of the exact"; fi

run "$LANTERN" bench "$ROOT/configs/demo.ini" --model lcdm-flat --evals 200 --exact --format json
/usr/bin/python3 -c '
import json, sys
j = json.load(open(sys.argv[1]))
assert j["path"] == "exact" and j["knots"] == 0 and j["max_abs_dchi2"] == 0, j
' "$OUT" && pass "bench --exact: the exact path, no knots, nothing to compare" ||
    fail "bench --exact: the exact path, no knots, nothing to compare"

run "$LANTERN" bench "$ROOT/configs/demo.ini" --model lcdm-flat --evals 200
expect_stdout "bench's table names the survey size, path and knots" \
    "^lcdm-flat on $DEMO_ROWS objects \(structured covariance\), compressed path$"
grep -qE '^  max \|dchi2\| +[0-9.]+e-[0-9]+ \(against the exact path' "$OUT" &&
    pass "bench's table shows the compressed path's largest |Delta chi2|" ||
    fail "bench's table shows the compressed path's largest |Delta chi2|"

run "$LANTERN" bench "$ROOT/configs/demo.ini" --model lcdm-flat --evals 0
expect_error "bench --evals 0 is refused" 2 "--evals: '0' is not a whole number >= 1"
