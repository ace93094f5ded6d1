#!/usr/bin/env bash
# End-to-end tests of "lantern run" (the demo, as make demo runs it) and
# "lantern report": every file of the report, all four models, the truth of
# the simulated survey recovered, figures valid and not blank.
source "$(dirname "$0")/lib.sh"
D="$E2E_TMP/demo"
# as make demo runs it: OpenBLAS's kernels fixed (see the Makefile's
# demo-run), so that the table is the README's on any x86-64 machine
export OPENBLAS_CORETYPE=${OPENBLAS_CORETYPE:-Haswell}

run "$LANTERN" run "$ROOT/configs/demo.ini" --out "$D" --quiet
expect_status "lantern run configs/demo.ini" 0
# The README shows the table this run prints (a stale README table once went
# unnoticed after a sampler change): the first "| parameter |" block of the
# README must equal the table on stdout, line for line.
/usr/bin/python3 - "$ROOT/README.md" "$OUT" <<'PY' && pass "the README's demo table is what lantern run configs/demo.ini prints" ||
import sys
def table(path):
    lines = open(path).read().splitlines()
    i = next(k for k, l in enumerate(lines) if l.startswith("| parameter |"))
    out = []
    while i < len(lines) and lines[i].startswith("|"):
        out.append(lines[i]); i += 1
    return out
readme, printed = table(sys.argv[1]), table(sys.argv[2])
for a, b in zip(readme, printed):
    if a != b:
        print("  README:  " + a + "\n  printed: " + b)
assert readme == printed
PY
    fail "the README's demo table is what lantern run configs/demo.ini prints"
missing=""
for f in summary.json constraints.md constraints.tex constraints.csv hubble.png hubble.pdf; do
    [ -s "$D/$f" ] || missing="$missing $f"
done
for m in lcdm-flat lcdm wcdm-flat w0wa-flat; do
    for f in posterior_$m.png posterior_$m.pdf traces_$m.png $m/summary.json $m/chains.csv $m/chains.fits; do
        [ -s "$D/$f" ] || missing="$missing $f"
    done
done
for f in plane_lcdm.png plane_lcdm.pdf plane_w0wa-flat.png plane_w0wa-flat.pdf; do
    [ -s "$D/$f" ] || missing="$missing $f"
done
[ -z "$missing" ] && pass "the report holds every file" || fail "the report holds every file (missing:$missing)"

/usr/bin/python3 - "$D" "$ROOT/data/lamplighter/truth.json" <<'PY' && pass "summary lists the four models; the truth within 3 sigma for every parameter" || fail "summary lists the four models; the truth within 3 sigma for every parameter"
import csv, json, sys
d, truth = sys.argv[1], json.load(open(sys.argv[2]))
j = json.load(open(d + "/summary.json"))
assert [m["model"] for m in j["models"]] == ["lcdm-flat", "lcdm", "wcdm-flat", "w0wa-flat"]
assert [c["model"] for c in j["comparison"]] == ["lcdm-flat", "lcdm", "wcdm-flat", "w0wa-flat"]
# the comparison carries the evidence of every model (nested sampling, errors < 0.1)
assert all(c["ln_z_err"] < 0.1 and "reading" in c for c in j["comparison"])
assert j["comparison"][0]["ln_b"] == 0
t = dict(truth["params"])  # h0, omega_m, omega_de (0.69: flat), w0 -1, wa 0 in truth
t.setdefault("w0", -1.0)
t.setdefault("wa", 0.0)
for m in j["models"]:
    assert m["converged"] is True, m["model"]
    for name, p in m["params"].items():
        pull = (p["mean"] - t[name]) / p["sd"]
        assert abs(pull) < 3, (m["model"], name, p["mean"], p["sd"], t[name])
# the table's CSV has the contract's columns and a row per model and quantity
rows = list(csv.DictReader(open(d + "/constraints.csv")))
# DESIGN.md's columns first; prior_edge and converged added at the end (issue 16)
assert list(rows[0]) == ["model", "parameter", "value", "minus", "plus", "kind", "prior_edge", "converged"]
assert {r["kind"] for r in rows} <= {"two-sided", "upper", "lower"}
assert {r["prior_edge"] for r in rows} <= {"none", "lower", "upper", "both"}
assert {r["converged"] for r in rows} == {"true"}
assert {r["model"] for r in rows} == {"lcdm-flat", "lcdm", "wcdm-flat", "w0wa-flat"}
md = open(d + "/constraints.md").read()
assert md.startswith("| parameter | lcdm-flat | lcdm | wcdm-flat | w0wa-flat |")
tex = open(d + "/constraints.tex").read()
assert "\\toprule" in tex and "\\bottomrule" in tex and tex.count("\\\\") >= 10
PY

/usr/bin/python3 "$ROOT/tests/e2e/figures.py" "$D"/*.png "$D"/*.pdf

# lantern report: rebuilt in place, the same tables; two runs in one table
cp "$D/constraints.md" "$E2E_TMP/before.md"
run "$LANTERN" report "$D"
if [ "$STATUS" -eq 0 ] && cmp -s "$D/constraints.md" "$E2E_TMP/before.md"; then
    pass "lantern report rebuilds the same tables from the saved chains"
else
    fail "lantern report rebuilds the same tables from the saved chains"
fi
run "$LANTERN" report "$D" "$D" --out "$E2E_TMP/joint"
if [ "$STATUS" -eq 0 ] && head -1 "$E2E_TMP/joint/constraints.md" | grep -q "demo: lcdm-flat .* demo: w0wa-flat | demo: lcdm-flat" &&
   [ -s "$E2E_TMP/joint/hubble.png" ]; then
    pass "several runs go into one table and one set of figures"
else
    fail "several runs go into one table and one set of figures"
fi

# Issue 16, items 3, 6 and 7: a run on other data (the Pantheon 2018 binned
# table, 40 bins) whose model stops at a step cap (MCMC, 20000 steps: the chains spread
# over the exact h0-offset ridge, whatever the seed or BLAS kernel, but mix along it
# far too slowly to converge: ESS about 7), with h0 free beside a
# sampled offset (a --prior on offset frees h0: the two are degenerate, so
# h0 fills its prior U(40, 100)).
P="${LANTERN_SHARED:-$ROOT/../shared}/data/pantheon2018"
cat >"$E2E_TMP/pbins.ini" <<EOF
[run]
name = pbins
models = lcdm-flat
[data]
file = $P/lcparam_DS17f.txt
columns = z=zcmb,zhel=zhel,mag=mb,err=dmb
cov = $P/sys_DS17f.txt
[priors]
offset = uniform:-21:-17
[sampler]
method = mcmc
chains = 4
seed = 5
max_steps = 20000
check_every = 1000
EOF
PB="$E2E_TMP/pbins"
run "$LANTERN" run "$E2E_TMP/pbins.ini" --out "$PB" --quiet
if [ "$STATUS" -eq 3 ] && grep -q "lantern: warning \[not-converged\]: lcdm-flat did not converge (worst R-hat .*, smallest ESS [0-9]*): its numbers are provisional; the tables mark it" "$ERR" &&
   grep -q "lantern: warning \[prior-edge\]: lcdm-flat: the posterior of h0 reaches" "$ERR" &&
   /usr/bin/python3 - "$PB" <<'PY'
import csv, sys
d = sys.argv[1]
md, tex = open(d + "/constraints.md").read(), open(d + "/constraints.tex").read()
rows = {r["parameter"]: r for r in csv.DictReader(open(d + "/constraints.csv"))}
# item 6: the unconverged model is marked in every table
assert md.startswith("| parameter | lcdm-flat ‡ |"), md
assert "‡ lcdm-flat did not converge: its sampler stopped at the step cap" in md
assert "$^\\ddagger$" in tex and all(r["converged"] == "false" for r in rows.values())
# item 3: h0 reaches an edge of its prior: a limit, or an interval with a dagger
h0 = rows["h0"]
assert h0["prior_edge"] != "none", h0
line = next(l for l in md.splitlines() if l.startswith("| h0 |"))
assert ("†" in line) == (h0["kind"] == "two-sided") and ("95%" in line) == (h0["kind"] != "two-sided"), line
PY
then pass "an unconverged model and a prior-filling h0 are marked in the tables, and run says so"
else fail "an unconverged model and a prior-filling h0 are marked in the tables, and run says so"; fi
# report across runs of different data (800 objects, 40 bins): no Delta AIC,
# Delta BIC or ln B across them, and one figure per model name for both runs
run "$LANTERN" report "$D" "$PB" --out "$E2E_TMP/across"
if [ "$STATUS" -eq 3 ] && grep -q "lantern: note: pbins: lcdm-flat was fitted to other data (40 objects) than demo: lcdm-flat (800 objects)" "$ERR" &&
   grep -q "lantern: warning \[not-converged\]: pbins: lcdm-flat did not converge" "$ERR" &&
   /usr/bin/python3 - "$E2E_TMP/across" "$ROOT/tests/e2e" <<'PY'
import json, sys
d = sys.argv[1]
sys.path.insert(0, sys.argv[2])
import figures
md = open(d + "/constraints.md").read().splitlines()
head = md[0].split("|")[1:-1]
assert [h.strip() for h in head][-1] == "pbins: lcdm-flat ‡", head
for name in ("AIC - AIC(first)", "BIC - BIC(first)", "ln B vs first"):
    cells = next(l for l in md if l.startswith("| " + name + " |")).split("|")[2:-1]
    assert cells[-1].strip() == "" and all(c.strip() for c in cells[:-1]), (name, cells)
assert any("left blank for pbins: lcdm-flat (40 objects, lcparam_DS17f.txt)" in l for l in md)
cmp = json.load(open(d + "/summary.json"))["comparison"]
assert cmp[-1]["delta_aic"] is None and cmp[-1]["ln_b"] is None and not cmp[-1]["same_data_as_first"]
assert cmp[1]["delta_aic"] is not None and cmp[1]["same_data_as_first"]
# both runs' lcdm-flat in posterior_lcdm-flat.png, in the colours of the
# first and second members of an overlay, blue (0, 114, 178) and vermillion
# (213, 94, 0), as plotkit.c's palette has them (Okabe and Ito's)
png = d + "/posterior_lcdm-flat.png"
blue, red = figures.png_colour_count(png, (0, 114, 178)), figures.png_colour_count(png, (213, 94, 0))
assert blue > 100 and red > 100, (blue, red)
PY
then pass "report across runs of other data: comparison cells blank with a footnote, same-named models overlaid"
else fail "report across runs of other data: comparison cells blank with a footnote, same-named models overlaid"; fi
[ -s "$E2E_TMP/across/traces_lcdm-flat.png" ] && [ -s "$E2E_TMP/across/traces_lcdm-flat_2.png" ] &&
    pass "report across runs keeps each run's traces" || fail "report across runs keeps each run's traces"
/usr/bin/python3 "$ROOT/tests/e2e/figures.py" "$E2E_TMP/across/posterior_lcdm-flat.png"

# Interrupted in its first evidence step (the progress line says when it
# starts) and resumed: the same summaries and tables as the run above.
R="$E2E_TMP/rcut"
"$LANTERN" run "$ROOT/configs/demo.ini" --out "$R" >/dev/null 2>"$ERR" &
pid=$!
for i in $(seq 600); do
    grep -q "evidence by nested sampling" "$ERR" && break
    sleep 0.05
done
sleep 0.1
kill -INT $pid
wait $pid
first=$?
if [ "$first" -eq 1 ] && grep -q "continue with 'lantern run .* --resume" "$ERR" && [ ! -e "$R/summary.json" ]; then
    pass "run, SIGINT in the evidence step: status 1 and no run summary"
else
    fail "run, SIGINT in the evidence step: status 1 and no run summary (status $first)"
fi
# resumed on one thread (--threads, issue 16): the run above had the default
run "$LANTERN" run "$ROOT/configs/demo.ini" --resume "$R" --quiet --threads 1
same=1
for f in summary.json constraints.md constraints.csv constraints.tex lcdm-flat/summary.json lcdm/summary.json \
    wcdm-flat/summary.json w0wa-flat/summary.json lcdm-flat/chains.csv; do
    cmp -s "$D/$f" "$R/$f" || same=0
done
if [ "$STATUS" -eq 0 ] && [ "$same" -eq 1 ]; then
    pass "run --resume --threads 1 after it: byte-identical summaries, tables and chains"
else
    fail "run --resume --threads 1 after it: byte-identical summaries, tables and chains"
fi

# refusals
run "$LANTERN" run "$ROOT/configs/demo.ini" --out "$D"
expect_error "an earlier run is refused without --force" 2 "pass --force"
mkdir -p "$E2E_TMP/mine" && echo "keep me" >"$E2E_TMP/mine/notes.txt"
run "$LANTERN" run "$ROOT/configs/demo.ini" --resume "$E2E_TMP/mine"
expect_error "run --resume refuses a folder lantern did not make" 2 "not made by lantern"
[ "$(cat "$E2E_TMP/mine/notes.txt")" = "keep me" ] && [ "$(ls "$E2E_TMP/mine" | wc -l)" -eq 1 ] &&
    pass "and writes nothing into it" || fail "and writes nothing into it"
"$LANTERN" simulate "$ROOT/data/lamplighter.ini" --out "$E2E_TMP/sim" >/dev/null 2>&1
run "$LANTERN" run "$ROOT/configs/demo.ini" --resume "$E2E_TMP/sim"
expect_error "run --resume refuses another command's folder (it once ran the whole job into it)" 2 \
    "holds the output of 'lantern simulate'"
printf '[run]\nmodels = lcdm, lcdm-flatt\n[data]\nfile = x\n' >"$E2E_TMP/bad.ini"
run "$LANTERN" run "$E2E_TMP/bad.ini"
expect_error "an unknown model in [run] models" 2 "unknown model 'lcdm-flatt'"
run "$LANTERN" run "$ROOT/configs/demo.ini" --set sampler
expect_error "a malformed --set" 2 "--set: 'sampler' is not section.key=value"
run "$LANTERN" run "$ROOT/configs/demo.ini" --override sampler
expect_error "a malformed --override" 2 "--override: 'sampler' is not section.key=value"
# --override replaces run-file keys (issue 18); --set, its old name, still works for one
# release, says so on stderr, and gives the same run
run "$LANTERN" run "$ROOT/configs/demo.ini" --override run.models=lcdm-flat \
    --override sampler.target_ess=300 --out "$E2E_TMP/ovr" --quiet
ovr=$STATUS
run "$LANTERN" run "$ROOT/configs/demo.ini" --set run.models=lcdm-flat \
    --set sampler.target_ess=300 --out "$E2E_TMP/ovr2" --quiet
if [ "$ovr" -eq 0 ] && [ "$STATUS" -eq 0 ] && [ "$(ls "$E2E_TMP/ovr" | grep -c '^lcdm')" -eq 1 ] &&
   cmp -s "$E2E_TMP/ovr/lcdm-flat/summary.json" "$E2E_TMP/ovr2/lcdm-flat/summary.json" &&
   grep -q "lantern: warning \[renamed-flag\]: 'run --set section.key=value' is now 'run --override" "$ERR" &&
   /usr/bin/python3 -c 'import json,sys; j=json.load(open(sys.argv[1])); assert j["convergence"]["ess_min"] >= 300' "$E2E_TMP/ovr/lcdm-flat/summary.json"; then
    pass "run --override replaces run-file keys; --set does the same with a warning"
else
    fail "run --override replaces run-file keys; --set does the same with a warning"
fi
run "$LANTERN" run "$ROOT/configs/demo.ini" --threads -1
expect_error "run --threads below 0 is refused" 2 "--threads: '-1' is not a whole number from 0 to 256"
"$LANTERN" run --help | grep -q "0 (the" && pass "run --help says what --threads 0 means" ||
    fail "run --help says what --threads 0 means"
run "$LANTERN" report "$E2E_TMP"
expect_error "report of a folder that is no run" 2 "summary.json: cannot open"
run "$LANTERN" report "$D" "$D"
expect_error "several runs need --out" 2 "several runs need --out"
RUNS=(); for i in $(seq 17); do RUNS+=("$D"); done
run "$LANTERN" report "${RUNS[@]}" --out "$E2E_TMP/r17"
expect_error "report of more than 16 runs" 2 "report: at most 16 arguments besides the options"
