#!/usr/bin/env bash
# Several tables joined into one survey (issue 21): a simulated light-curve
# survey of the fictional Lamplighter design (data/lamplighter-lightcurves.ini)
# cut into one table per tier must fit exactly as the whole table does,
# whether the tables come as repeated --data options or as [survey.NAME]
# sections of a run file, and a cross-covariance over the joined tables
# must act as the same matrix given with --cov to the whole table (the
# covariance is then diag(err^2) + that matrix in both: the check is that
# the join puts every element in its place, cuts included). Refusals: a
# cross-covariance of the wrong size, mixed observables, a table name that
# cannot label a group, table keys in [data] beside [survey.NAME] sections.
source "$(dirname "$0")/lib.sh"
D="$E2E_TMP/sim"
"$LANTERN" simulate "$ROOT/data/lamplighter-lightcurves.ini" --out "$D" >"$E2E_TMP/sim.out" 2>&1
COLS=$(sed -n 's/.*--columns \([^ ]*\).*/\1/p' "$E2E_TMP/sim.out")
head -1 "$D/survey.csv" >"$E2E_TMP/hdr"
for t in lanterns harbor beacon; do
    { cat "$E2E_TMP/hdr"; grep "^$t-" "$D/survey.csv"; } >"$E2E_TMP/$t.csv"
done
# beacon without its group column: its rows take the table's name, beacon
NOGROUP=${COLS/,group=tier/}
COMMON=(--model lcdm-flat --velocity-dispersion 150 --format json --seed 4 --starts 2)

run "$LANTERN" fit --data "$D/survey.csv" --columns "$COLS" --zmin 0.03 "${COMMON[@]}"
cp "$OUT" "$E2E_TMP/whole.json"
run "$LANTERN" fit --data "$E2E_TMP/lanterns.csv" --columns "$COLS" --data "$E2E_TMP/harbor.csv" \
    --columns "$COLS" --zmin 0.03 --data "$E2E_TMP/beacon.csv" --columns "$NOGROUP" --zmin 0.03 \
    "${COMMON[@]}"
cp "$OUT" "$E2E_TMP/flags.json"
cat >"$E2E_TMP/joined.ini" <<INI
[data]
velocity_dispersion = 150
[survey.lanterns]
file = lanterns.csv
columns = $COLS
[survey.harbor]
file = harbor.csv
columns = $COLS
zmin = 0.03
[survey.beacon]
file = beacon.csv
columns = $NOGROUP
zmin = 0.03
[model]
name = lcdm-flat
[fit]
seed = 4
starts = 2
INI
run "$LANTERN" fit "$E2E_TMP/joined.ini" --format json
cp "$OUT" "$E2E_TMP/ini.json"

# compare A B TOL: every parameter's best within TOL of its sigma, chi2 within 1e-6
compare() {
    /usr/bin/python3 - "$1" "$2" "$3" <<'PY'
import json, sys
a, b, tol = json.load(open(sys.argv[1])), json.load(open(sys.argv[2])), float(sys.argv[3])
assert a["params"].keys() == b["params"].keys(), (a["params"].keys(), b["params"].keys())
worst = max(abs(a["params"][k]["best"] - b["params"][k]["best"]) / a["params"][k]["sd"]
            for k in a["params"] if a["params"][k]["sd"])
print("# worst difference %.2g sigma, chi2 %.6f and %.6f" % (worst, a["chi2_min"], b["chi2_min"]))
assert worst < tol and abs(a["chi2_min"] - b["chi2_min"]) < 1e-6 * a["chi2_min"]
assert a["standardisation"]["n_objects"] == b["standardisation"]["n_objects"]
ta, tb = (x["standardisation"].get("tuned_sigma_int", {}) for x in (a, b))
assert ta.keys() == tb.keys() and all(abs(ta[k] - tb[k]) < 1e-6 for k in ta), (ta, tb)
PY
}
if compare "$E2E_TMP/whole.json" "$E2E_TMP/flags.json" 0.01; then
    pass "three tables by repeated --data fit as the whole table (cuts per table, a table's name as its group)"
else fail "three tables by repeated --data fit as the whole table"; fi
if compare "$E2E_TMP/whole.json" "$E2E_TMP/ini.json" 0.01 &&
    /usr/bin/python3 -c '
import json, sys
t = json.load(open(sys.argv[1]))["data"]["tables"]
assert [x["name"] for x in t] == ["lanterns", "harbor", "beacon"], t' "$E2E_TMP/ini.json"; then
    pass "[survey.NAME] sections fit as the whole table; data.tables names them"
else fail "[survey.NAME] sections fit as the whole table; data.tables names them"; fi

# a cross-covariance: a shared 0.02 mag offset of the harbor objects, and
# a shared 0.05 mag one of the lanterns with harbor's first ten objects (an
# invented systematic; two rank-one parts, so positive semi-definite), over
# the 230 rows of the two tables before cuts. A dense covariance costs a
# Cholesky factorisation per evaluation, so this fit is small: the chi2
# method with omega_m, alpha, beta and gamma fixed (H0 and M free).
/usr/bin/python3 - "$E2E_TMP" <<'PY'
import sys
a = [0.0] * 80 + [0.02] * 150
b = [0.05] * 80 + [0.05] * 10 + [0.0] * 140
N = len(a)
with open(sys.argv[1] + "/cross.txt", "w") as f:
    f.write("%d\n" % N)
    for i in range(N):
        f.write(" ".join(repr(a[i] * a[j] + b[i] * b[j]) for j in range(N)) + "\n")
PY
{ cat "$E2E_TMP/hdr"; grep -E "^(lanterns|harbor)-" "$D/survey.csv"; } >"$E2E_TMP/near.csv"
SMALL=(--model lcdm-flat --velocity-dispersion 150 --standardise chi2 --fix omega_m=0.3 --starts 2 --fix alpha=0.14
       --fix beta=3.1 --fix gamma=-0.07 --format json --seed 4)
run "$LANTERN" fit --data "$E2E_TMP/near.csv" --columns "$COLS" --zmin 0.03 --cov "$E2E_TMP/cross.txt" "${SMALL[@]}"
cp "$OUT" "$E2E_TMP/whole_cov.json"
run "$LANTERN" fit --data "$E2E_TMP/lanterns.csv" --columns "$COLS" --data "$E2E_TMP/harbor.csv" \
    --columns "$COLS" --zmin 0.03 --cross-cov "$E2E_TMP/cross.txt" "${SMALL[@]}"
cp "$OUT" "$E2E_TMP/joined_cov.json"
run "$LANTERN" fit --data "$E2E_TMP/near.csv" --columns "$COLS" --zmin 0.03 "${SMALL[@]}"
cp "$OUT" "$E2E_TMP/near.json"
if compare "$E2E_TMP/whole_cov.json" "$E2E_TMP/joined_cov.json" 0.01 &&
    ! compare "$E2E_TMP/near.json" "$E2E_TMP/whole_cov.json" 0.01 >/dev/null 2>&1; then
    pass "a cross-covariance over joined tables acts as the same --cov on the whole table (and changes the fit)"
else fail "a cross-covariance over joined tables acts as the same --cov on the whole table"; fi

# --override reaches a table's section (its name holds the section's dot)
run "$LANTERN" run "$E2E_TMP/joined.ini" --override run.models=lcdm-flat --override survey.harbor.file=no-such-table.csv --out "$E2E_TMP/ovr" --quiet
expect_error "--override survey.NAME.key=value reaches that table" 2 "no-such-table.csv: cannot open"

# refusals, each with file and line
{ echo 10; for i in $(seq 10); do echo "0 0 0 0 0 0 0 0 0 0"; done; } >"$E2E_TMP/small.txt"
run "$LANTERN" fit "$E2E_TMP/joined.ini" --cross-cov "$E2E_TMP/small.txt"
expect_error "a cross-covariance of the wrong size: file and line" 2 "small.txt:1: the matrix is 10 x 10 but the 3 joined tables have 530 rows"
run "$LANTERN" fit --data "$E2E_TMP/lanterns.csv" --columns "$COLS" --data "$ROOT/data/lamplighter/survey.csv" \
    --columns z=z,zhel=zhel,mag=mag,err=err,id=id --model lcdm-flat
expect_error "tables with different observables refused" 2 "survey.csv: its observable is mag but .*lanterns.csv's is mb"
cp "$E2E_TMP/beacon.csv" "$E2E_TMP/beacon_of_the_deep_fields.csv"
run "$LANTERN" fit --data "$E2E_TMP/lanterns.csv" --columns "$COLS" --data "$E2E_TMP/beacon_of_the_deep_fields.csv" \
    --columns "$NOGROUP" --model lcdm-flat
expect_error "a table name that cannot be a group label refused" 2 "beacon_of_the_deep_fields.csv: the table's name 'beacon_of_the_deep_fields' \(it names the table's section"
# --table-name names it; two tables of one stem need it
run "$LANTERN" fit --data "$E2E_TMP/lanterns.csv" --columns "$COLS" --data "$E2E_TMP/beacon_of_the_deep_fields.csv" \
    --columns "$NOGROUP" --table-name deep --model lcdm-flat --format json --starts 1
if [ "$STATUS" -eq 0 ] && grep -q '"sigma_int@deep"' "$OUT"; then
    pass "--table-name names a table and its rows' group"
else fail "--table-name names a table and its rows' group"; fi
# a table flag with a run file's several tables, before any --data: refused
run "$LANTERN" fit "$E2E_TMP/joined.ini" --zmin 0.05
expect_error "a table flag with several run-file tables is refused" 2 "--zmin: the run file joins 3 tables"
# a --data flag replaces the run file's tables whole (their columns too)
run "$LANTERN" fit "$E2E_TMP/joined.ini" --data "$D/survey.csv" --format json
expect_error "--data replaces a run file's tables whole (their columns too)" 2 "--columns: no column mapping given"
run "$LANTERN" fit --data "$D/survey.csv" --columns "$COLS" --cross-cov "$E2E_TMP/cross.txt" --model lcdm-flat
expect_error "a cross-covariance with one table is refused" 2 "cross.txt: a cross-covariance joins several tables, and there is one"
{ echo "[data]"; echo "file = beacon.csv"; echo "[survey.a]"; echo "file = harbor.csv"; echo "[model]"; echo "name = lcdm-flat"; } >"$E2E_TMP/bad.ini"
run "$LANTERN" fit "$E2E_TMP/bad.ini"
expect_error "[data] file beside [survey.NAME] sections: file and line" 2 "bad.ini:2: \[data\] file describes a table"
{ echo "[survey.a]"; echo "file = harbor.csv"; echo "bao = x.csv"; echo "[model]"; echo "name = lcdm-flat"; } >"$E2E_TMP/bad2.ini"
run "$LANTERN" fit "$E2E_TMP/bad2.ini"
expect_error "a non-table key in [survey.NAME]: file and line" 2 "bad2.ini:3: \[survey.a\] bao: a survey section takes a table's keys"
# a run file's table without columns: the file and line, not --columns
{ echo "[model]"; echo "name = lcdm-flat"; echo "[data]"; echo "file = $D/survey.csv"; } >"$E2E_TMP/nocols.ini"
run "$LANTERN" fit "$E2E_TMP/nocols.ini"
expect_error "a run file's table without columns: file and line" 2 "nocols.ini:4: \[data\] names a table but no columns"
{ echo "[survey.a]"; echo "file = $D/survey.csv"; echo "columns = $COLS"; echo "[survey.b]"; echo "file = $D/survey.csv"; echo "[model]"; echo "name = lcdm-flat"; } >"$E2E_TMP/nocols2.ini"
run "$LANTERN" fit "$E2E_TMP/nocols2.ini"
expect_error "a [survey.NAME] table without columns: its section's line" 2 "nocols2.ini:4: \[survey.b\] has no columns"
exit 0
