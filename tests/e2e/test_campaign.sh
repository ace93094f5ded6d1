#!/usr/bin/env bash
# End-to-end tests of "lantern campaign" and "mpirun ... lantern-mpi campaign":
# the same summary on one machine and over MPI ranks, resume after an
# interruption, retry of a failed task, failures that do not stop the
# others, refusals, and the bias and coverage numbers against numpy/scipy.
source "$(dirname "$0")/lib.sh"
MPI_BIN="${LANTERN_MPI_BIN:-$(dirname "$LANTERN")/lantern-mpi}"
# CI runs as root in a container with two cores: mpirun needs both flags.
MPIRUN=(mpirun --allow-run-as-root --oversubscribe)

C="$E2E_TMP/c20.ini"
cat >"$C" <<EOF
# 20 realizations of the demo design (the fictional Lamplighter survey)
[campaign]
name = twenty
models = lcdm-flat
methods = fit, sample
seed = 11
[simulated.lamplighter]
scenario = $ROOT/data/lamplighter.ini
realizations = 20
[sampler]
target_ess = 300
EOF

run "$LANTERN" campaign "$C" --out "$E2E_TMP/one" --quiet
if [ "$STATUS" -eq 0 ] && [ -s "$E2E_TMP/one/summary.json" ] && [ -s "$E2E_TMP/one/bias.csv" ] &&
    [ -s "$E2E_TMP/one/bias_lamplighter_lcdm-flat_sample.png" ] &&
    [ -s "$E2E_TMP/one/bias_lamplighter_lcdm-flat_fit.pdf" ] &&
    [ "$(ls "$E2E_TMP/one/tasks" | wc -l)" -eq 40 ]; then
    pass "a 20-realization campaign on one machine: 40 task records, summary, bias.csv, figures"
else fail "a 20-realization campaign on one machine: 40 task records, summary, bias.csv, figures"; fi
grep -qE "^lamplighter / lcdm-flat / sample: 20 of 20 realizations used, 0 dropped$" "$OUT" &&
    grep -qE "^  parameter .* cover 68\.27% \(p\) +cover 95% \(p\)$" "$OUT" &&
    grep -qE "^  omega_m +0\.31 " "$OUT" && pass "the table shows each group and its truth" ||
    fail "the table shows each group and its truth"

# The summary's numbers from the task records, recomputed by numpy, and the
# exact binomial test by scipy.stats.binomtest (two-sided) against the
# probability each interval is defined to hold: best +- 1 sd and the
# 15.87-84.13% quantiles hold Phi(1) - Phi(-1) = 0.6827 (scipy.stats.norm),
# best +- 1.96 sd and the 2.5-97.5% quantiles 0.95.
if /usr/bin/python3 - "$E2E_TMP/one/summary.json" <<'PY'
import json, sys
import numpy as np
from scipy.stats import binomtest, norm
s = json.load(open(sys.argv[1]))
assert s["tasks"] == 40 and s["done"] == 40 and s["failed"] == 0 and s["converged"] is True
p68 = norm.cdf(1) - norm.cdf(-1)
for g in s["bias"]:
    recs = [r for r in s["results"] if r["method"] == g["method"] and r["model"] == g["model"]]
    assert len(recs) == 20 == g["used"] and g["dropped"] == 0 and g["dropped_realizations"] == []
    b = g["params"]["omega_m"]
    p = [r["params"]["omega_m"] for r in recs]
    assert all(q["truth"] == 0.31 for q in p)
    est = np.array([q["estimate"] for q in p]); sd = np.array([q["sd"] for q in p])
    pulls = (est - 0.31) / sd
    assert abs(b["bias_mean"] - (est - 0.31).mean()) < 1e-12
    assert abs(b["bias_err"] - (est - 0.31).std(ddof=1) / np.sqrt(20)) < 1e-12
    assert abs(b["pull_mean"] - pulls.mean()) < 1e-12
    assert abs(b["pull_width"] - pulls.std(ddof=1)) < 1e-12
    assert np.allclose(b["pulls"], pulls, rtol=0, atol=1e-12)
    for lvl, lo, hi, nominal in ((68, "lo68", "hi68", p68), (95, "lo95", "hi95", 0.95)):
        k = sum(q[lo] <= 0.31 <= q[hi] for q in p)
        c = b["coverage%d" % lvl]
        assert abs(c["nominal"] - nominal) < 1e-15, (c["nominal"], nominal)
        assert c["covered"] == k and c["of"] == 20 and abs(c["fraction"] - k / 20) < 1e-15
        assert abs(c["err"] - np.sqrt(nominal * (1 - nominal) / 20)) < 1e-15
        ref = binomtest(k, 20, nominal).pvalue
        assert abs(c["p_value"] - ref) < 1e-9 * max(ref, 1e-300), (c["p_value"], ref)
    if g["method"] == "fit":  # intervals best +- 1 and Phi^-1(0.975) = 1.96 sd
        assert all(abs(q["hi68"] - q["estimate"] - q["sd"]) < 1e-12 for q in p)
        assert all(abs(q["hi95"] - q["estimate"] - norm.ppf(0.975) * q["sd"]) < 1e-12 for q in p)
PY
then pass "bias, pulls and coverage equal numpy's from the records; p-values equal scipy.stats.binomtest"
else fail "bias, pulls and coverage equal numpy's from the records; p-values equal scipy.stats.binomtest"; fi

# Fits at a prior edge have no Laplace errors: with omega_m's prior cut at
# 0.30 (the truth is 0.31, sigma about 0.02) some realizations put the best
# fit on the edge. They are dropped from bias and coverage, counted and
# listed in summary.json and the table, and the numbers are those of numpy
# over the realizations left; the summary is the same with 1 and 2 threads.
cat >"$E2E_TMP/edge.ini" <<EOF
[campaign]
name = edge
models = lcdm-flat
methods = fit
seed = 11
[simulated.lamplighter]
scenario = $ROOT/data/lamplighter.ini
realizations = 10
[priors]
omega_m = uniform:0.3:0.5
EOF
run "$LANTERN" campaign "$E2E_TMP/edge.ini" --out "$E2E_TMP/edge1" --threads 1 --quiet
cp "$OUT" "$E2E_TMP/edge.table"
run "$LANTERN" campaign "$E2E_TMP/edge.ini" --out "$E2E_TMP/edge2" --threads 2 --quiet
if [ "$STATUS" -eq 3 ] && cmp -s "$E2E_TMP/edge1/summary.json" "$E2E_TMP/edge2/summary.json" &&
    cmp -s "$E2E_TMP/edge1/bias.csv" "$E2E_TMP/edge2/bias.csv" &&
    /usr/bin/python3 - "$E2E_TMP/edge1/summary.json" "$E2E_TMP/edge.table" "$E2E_TMP/edge1/bias.csv" <<'PY'
import csv, json, sys
import numpy as np
from scipy.stats import binomtest, norm
s = json.load(open(sys.argv[1])); table = open(sys.argv[2]).read().splitlines()
g = s["bias"][0]
bad = [r for r in s["results"] if r["params"]["omega_m"]["sd"] is None]
good = [r for r in s["results"] if r["params"]["omega_m"]["sd"] is not None]
assert 0 < len(bad) < 10, len(bad)
assert all("edge of its prior" in r["note"] for r in bad)
assert g["dropped"] == g["dropped_no_errors"] == len(bad) and g["dropped_failed"] == 0
assert g["used"] == len(good) and g["realizations"] == 10
assert [d["realization"] for d in g["dropped_realizations"]] == [r["realization"] for r in bad]
assert all("edge of its prior" in d["reason"] for d in g["dropped_realizations"])
b = g["params"]["omega_m"]
est = np.array([r["params"]["omega_m"]["estimate"] for r in good])
assert b["n"] == len(good) and abs(b["bias_mean"] - (est - 0.31).mean()) < 1e-12
assert len(b["pulls"]) == len(good)
p68 = norm.cdf(1) - norm.cdf(-1)
for lvl, nominal in ((68, p68), (95, 0.95)):
    c = b["coverage%d" % lvl]
    k = sum(r["params"]["omega_m"]["lo%d" % lvl] <= 0.31 <= r["params"]["omega_m"]["hi%d" % lvl]
            for r in good)
    assert c["of"] == len(good) and c["covered"] == k
    assert abs(c["p_value"] - binomtest(k, len(good), nominal).pvalue) < 1e-9
want = "lamplighter / lcdm-flat / fit: %d of 10 realizations used, %d dropped (%d without errors, " \
       "0 failed; summary.json lists them)" % (len(good), len(bad), len(bad))
assert want in table, (want, table)
row = next(csv.DictReader(open(sys.argv[3])))
assert int(row["dropped"]) == len(bad) and float(row["coverage68_nominal"]) == b["coverage68"]["nominal"]
PY
then pass "fits without Laplace errors (best fit at a prior edge) are dropped, counted and listed; the rest as numpy/scipy; 1 and 2 threads agree"
else fail "fits without Laplace errors (best fit at a prior edge) are dropped, counted and listed; the rest as numpy/scipy; 1 and 2 threads agree"; fi

# The same campaign over MPI ranks: the same summary, byte for byte.
if [ -z "${LANTERN_SANITIZE:-}" ] && [ -x "$MPI_BIN" ] && command -v mpirun >/dev/null; then
    for np in 2 3; do
        run "${MPIRUN[@]}" -np $np "$MPI_BIN" campaign "$C" --out "$E2E_TMP/mpi$np" --quiet
        [ "$STATUS" -eq 0 ] && cmp -s "$E2E_TMP/one/summary.json" "$E2E_TMP/mpi$np/summary.json" &&
            cmp -s "$E2E_TMP/one/bias.csv" "$E2E_TMP/mpi$np/bias.csv" &&
            pass "mpirun -np $np lantern-mpi campaign gives the same summary as lantern campaign" ||
            fail "mpirun -np $np lantern-mpi campaign gives the same summary as lantern campaign"
    done
    ranks=$(grep -hoE '"rank":[[:space:]]*[0-9]+' "$E2E_TMP"/mpi3/tasks/*.json | sort -u | wc -l)
    [ "$ranks" -eq 2 ] && pass "with 3 ranks both workers ran tasks" ||
        { STATUS=$ranks; fail "with 3 ranks both workers ran tasks"; }
    # a task that fails once is retried (on whichever rank is free) and the
    # summary is unchanged
    LANTERN_TEST_FAIL_ONCE=3,17 run "${MPIRUN[@]}" -np 3 "$MPI_BIN" campaign "$C" --out "$E2E_TMP/retry"
    [ "$STATUS" -eq 0 ] && [ "$(grep -c 'retrying it' "$ERR")" -eq 2 ] &&
        cmp -s "$E2E_TMP/one/summary.json" "$E2E_TMP/retry/summary.json" &&
        pass "under MPI a failed task is reported, retried once, and the summary is unchanged" ||
        fail "under MPI a failed task is reported, retried once, and the summary is unchanged"
    # a batch system ends a job with SIGTERM to mpirun, which passes it on:
    # the ranks stop, the finished records stay, and a resume with another
    # number of ranks gives the same summary
    "${MPIRUN[@]}" -np 3 "$MPI_BIN" campaign "$C" --out "$E2E_TMP/mpiterm" --quiet \
        >/dev/null 2>"$E2E_TMP/mpiterm.err" &
    pid=$!
    wait_for "$E2E_TMP/mpiterm/tasks/000006.json"
    kill -TERM $pid
    wait $pid
    STATUS=$?
    kept=$(ls "$E2E_TMP/mpiterm/tasks" | wc -l)
    run "${MPIRUN[@]}" -np 2 "$MPI_BIN" campaign "$C" --resume "$E2E_TMP/mpiterm" --quiet
    [ "$STATUS" -eq 0 ] && [ "$kept" -lt 40 ] && grep -q -- "--resume" "$E2E_TMP/mpiterm.err" &&
        cmp -s "$E2E_TMP/one/summary.json" "$E2E_TMP/mpiterm/summary.json" &&
        pass "SIGTERM to mpirun stops the ranks; a resume on 2 ranks gives the same summary" ||
        fail "SIGTERM to mpirun stops the ranks; a resume on 2 ranks gives the same summary"
    run "${MPIRUN[@]}" -np 2 "$MPI_BIN" fit --help
    expect_error "lantern-mpi refuses commands other than campaign on several ranks" 2 "only 'campaign'"
else
    echo "ok - (skipped: MPI runs; no lantern-mpi, no mpirun, or a sanitizer build)"
fi

# Interrupted, then resumed: finished tasks are kept, the summary is the same.
"$LANTERN" campaign "$C" --out "$E2E_TMP/int" --quiet >/dev/null 2>"$E2E_TMP/int.err" &
pid=$!
wait_for "$E2E_TMP/int/tasks/000004.json"
kill -INT $pid
wait $pid
STATUS=$?
if [ "$STATUS" -eq 1 ] && [ ! -e "$E2E_TMP/int/summary.json" ] && grep -q -- "--resume" "$E2E_TMP/int.err"; then
    pass "an interrupted campaign stops with status 1, no summary, and says how to resume"
else fail "an interrupted campaign stops with status 1, no summary, and says how to resume"; fi
kept=$(ls "$E2E_TMP/int/tasks" | wc -l)
run "$LANTERN" campaign "$C" --resume "$E2E_TMP/int"
[ "$STATUS" -eq 0 ] && cmp -s "$E2E_TMP/one/summary.json" "$E2E_TMP/int/summary.json" &&
    grep -q "$((40 - kept)) to run" "$ERR" &&
    pass "--resume runs only the $((40 - kept)) missing tasks and gives the same summary" ||
    fail "--resume runs only the missing tasks and gives the same summary"
run "$LANTERN" campaign --resume "$E2E_TMP/int"
[ "$STATUS" -eq 0 ] && grep -q "0 to run" "$ERR" && cmp -s "$E2E_TMP/one/summary.json" "$E2E_TMP/int/summary.json" &&
    pass "--resume without the file uses the one recorded, and has nothing left to run" ||
    fail "--resume without the file uses the one recorded, and has nothing left to run"

# A data set that cannot be read fails its tasks (each retried once); the
# other tasks finish and the summary says what failed.
B="$E2E_TMP/broken.ini"
cat >"$B" <<EOF
[campaign]
models = lcdm-flat
[simulated.lamplighter]
scenario = $ROOT/data/lamplighter.ini
realizations = 2
[data.lost]
file = $E2E_TMP/no-such-survey.csv
columns = z=z,mag=mag,err=err
EOF
run "$LANTERN" campaign "$B" --out "$E2E_TMP/broken" --format json
if [ "$STATUS" -eq 1 ] && [ "$(grep -c 'retrying it' "$ERR")" -eq 1 ] && /usr/bin/python3 - "$OUT" <<'PY'
import json, sys
s = json.load(open(sys.argv[1]))
assert s["done"] == 2 and s["failed"] == 1 and s["converged"] is False
bad = [r for r in s["results"] if r["status"] == "failed"]
assert len(bad) == 1 and bad[0]["dataset"] == "lost" and "no-such-survey.csv" in bad[0]["error"]
PY
then pass "a failing task is retried once, reported with its error, and does not stop the others"
else fail "a failing task is retried once, reported with its error, and does not stop the others"; fi
run "$LANTERN" campaign "$B" --resume "$E2E_TMP/broken"
[ "$STATUS" -eq 1 ] && grep -q "^failed tasks (tried twice):" "$OUT" &&
    grep -q "^  lost/lcdm-flat/fit: .*no-such-survey.csv" "$OUT" &&
    pass "the table lists each failed task with its error" ||
    fail "the table lists each failed task with its error"
# The shipped small campaign: a survey file's task gives what "lantern fit"
# and "lantern sample" give on the same file with the same settings, and the
# table lists it.
run "$LANTERN" campaign "$ROOT/configs/campaign-small.ini" --out "$E2E_TMP/small" --quiet
SMALL_OUT="$OUT"
D=(--data "$ROOT/data/lamplighter/survey.csv" --columns z=z,zhel=zhel,mag=mag,err=err,id=id
   --modes "$ROOT/data/lamplighter/modes.csv" --model lcdm-flat)
"$LANTERN" fit "${D[@]}" --format json >"$E2E_TMP/fit.json" 2>/dev/null
if [ "$STATUS" -eq 0 ] && grep -qE "^  release/lcdm-flat/fit +chi2_min +766\.04 / 798 +omega_m = 0\.325" "$SMALL_OUT" &&
    /usr/bin/python3 - "$E2E_TMP/small/summary.json" "$E2E_TMP/fit.json" <<'PY'
import json, sys
s = json.load(open(sys.argv[1])); f = json.load(open(sys.argv[2]))
r = [r for r in s["results"] if r["label"] == "release/lcdm-flat/fit"][0]
assert r["kind"] == "file" and "truth" not in r["params"]["omega_m"]
assert abs(r["params"]["omega_m"]["estimate"] - f["params"]["omega_m"]["best"]) < 1e-6
assert abs(r["params"]["omega_m"]["sd"] - f["params"]["omega_m"]["sd"]) < 1e-6
assert abs(r["chi2_min"] - f["chi2_min"]) < 1e-6 and r["dof"] == f["dof"]
PY
then pass "configs/campaign-small.ini runs; its survey-file fit equals lantern fit on the same file"
else fail "configs/campaign-small.ini runs; its survey-file fit equals lantern fit on the same file"; fi

# Refusals.
# A damaged task record is refused on resume, naming its file, rather than
# quietly run again (the resume scan checks every record).
cp -r "$E2E_TMP/one" "$E2E_TMP/damaged"
printf '{"task":5,' >"$E2E_TMP/damaged/tasks/000005.json"
run "$LANTERN" campaign "$C" --resume "$E2E_TMP/damaged"
expect_error "a damaged task record is refused on resume, naming its file" 2 "tasks/000005.json: is not a JSON object"
run "$LANTERN" campaign "$C" --out "$E2E_TMP/one"
expect_error "an earlier campaign folder is refused without --force" 2 "earlier lantern run"
cp "$C" "$E2E_TMP/c20b.ini"
echo "# changed" >>"$E2E_TMP/c20b.ini"
run "$LANTERN" campaign "$E2E_TMP/c20b.ini" --resume "$E2E_TMP/one"
expect_error "--resume with another campaign file is refused" 2 "another version"
printf '[campaign]\nmodels = lcdm-flat\nmethods = fit, mcmc\n[simulated.x]\nscenario = %s\nrealizations = 2\n' \
    "$ROOT/data/lamplighter.ini" >"$E2E_TMP/bad.ini"
run "$LANTERN" campaign "$E2E_TMP/bad.ini" --out "$E2E_TMP/bad"
expect_error "an unknown method names the file and line" 2 "bad.ini:3: unknown method 'mcmc'"
printf '[campaign]\nmodels = lcdm-flat\n' >"$E2E_TMP/empty.ini"
run "$LANTERN" campaign "$E2E_TMP/empty.ini" --out "$E2E_TMP/bad"
expect_error "a campaign without data sets is refused" 2 "no data sets"
printf '[campaign]\nmodels = lcdm-flat\n[simulated.x]\nscenario = %s\nrealizations = 2\nseeds = 3\n' \
    "$ROOT/data/lamplighter.ini" >"$E2E_TMP/typo.ini"
run "$LANTERN" campaign "$E2E_TMP/typo.ini" --out "$E2E_TMP/bad"
expect_error "an unknown key names its line" 2 "typo.ini:6:"
run "$LANTERN" campaign "$C"
expect_status "a campaign needs --out or --resume" 2
run "$LANTERN" report "$E2E_TMP/one" --out "$E2E_TMP/rep"
expect_error "lantern report refuses a campaign folder (it crashed once)" 2 "not the summary of a lantern run"

