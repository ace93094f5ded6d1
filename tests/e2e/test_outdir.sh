#!/usr/bin/env bash
# End-to-end tests of output folders and signals (DESIGN.md "Output
# folders"): --force replaces an earlier run without leaving its files, keeps
# the user's, and a failed run destroys nothing and leaves no empty folder;
# SIGINT and SIGTERM during the best fit (before any sampler runs) stop in
# order instead of killing the process.
source "$(dirname "$0")/lib.sh"
P="${LANTERN_SHARED:-$ROOT/../shared}/data/pantheon2018"
DEMO=(--data "$ROOT/data/lamplighter/survey.csv" --columns z=z,zhel=zhel,mag=mag,err=err,id=id)

# --- --force replaces: fit over a sample's folder keeps no chains ---
D="$E2E_TMP/force"
"$LANTERN" sample "${DEMO[@]}" --model lcdm-flat --out "$D" --quiet >/dev/null 2>&1
echo "my notes" >"$D/notes.txt"
run "$LANTERN" fit "${DEMO[@]}" --model lcdm-flat --out "$D" --force
left=$(cd "$D" && find . -type f ! -name .lantern-output | sort | tr '\n' ' ')
if [ "$STATUS" -eq 0 ] && [ "$left" = "./notes.txt ./residuals.csv ./summary.json " ] && [ ! -e "$D/checkpoint" ]; then
    pass "fit --force over a sample folder: chains and checkpoint gone, the user's notes kept"
else
    fail "fit --force over a sample folder: chains and checkpoint gone, the user's notes kept (left: $left)"
fi
# and back: sample over the fit leaves no residuals.csv
run "$LANTERN" sample "${DEMO[@]}" --model lcdm-flat --out "$D" --force --quiet
left=$(cd "$D" && find . -type f ! -name .lantern-output | sort | tr '\n' ' ')
if [ "$STATUS" -eq 0 ] &&
   [ "$left" = "./chains.csv ./chains.fits ./checkpoint/evaluations.txt ./checkpoint/importance.bin ./checkpoint/settings.ini ./notes.txt ./summary.json " ]; then
    pass "sample --force over a fit folder: residuals.csv gone, notes kept"
else
    fail "sample --force over a fit folder: residuals.csv gone, notes kept (left: $left)"
fi

# --- a failed run destroys nothing ---
cp "$D/summary.json" "$E2E_TMP/before.json"
run "$LANTERN" fit "${DEMO[@]}" --model lcdm --fix omega_m=0.01 --fix omega_de=1.5 --out "$D" --force
left2=$(cd "$D" && find . -type f ! -name .lantern-output | sort | tr '\n' ' ')
if [ "$STATUS" -eq 1 ] && [ "$left2" = "$left" ] && cmp -s "$D/summary.json" "$E2E_TMP/before.json" &&
   head -1 "$D/.lantern-output" | grep -q "lantern .* sample$"; then
    pass "a failed fit --force leaves the earlier sample run whole, with its marker"
else
    fail "a failed fit --force leaves the earlier sample run whole, with its marker (left: $left2)"
fi
# ... and a second --force after it still replaces cleanly
run "$LANTERN" fit "${DEMO[@]}" --model lcdm-flat --out "$D" --force
left=$(cd "$D" && find . -type f ! -name .lantern-output | sort | tr '\n' ' ')
[ "$STATUS" -eq 0 ] && [ "$left" = "./notes.txt ./residuals.csv ./summary.json " ] &&
    pass "--force after a failed --force replaces cleanly" ||
    fail "--force after a failed --force replaces cleanly (left: $left)"

# --- a failed run into a new folder leaves no folder ---
for cmd in fit sample; do
    N="$E2E_TMP/new-$cmd/deeper"
    # no start of the best fit is possible: no big bang in all of this prior
    run "$LANTERN" $cmd "${DEMO[@]}" --model lcdm --prior omega_m=uniform:0:0.01 --prior omega_de=uniform:1.55:1.6 --out "$N" --quiet
    if [ "$STATUS" -ne 0 ] && [ ! -e "$(dirname "$N")" ]; then
        pass "$cmd failing into a new folder leaves no empty folder"
    else
        fail "$cmd failing into a new folder leaves no empty folder"
    fi
done

# --- signals during the best fit ---
# stop_during_fit SIG FOLDER CMD...: starts CMD in the background, waits
# until it has made FOLDER and then 1 s more (inside the best fit), sends SIG
# and waits at most 20 s for it to end (a best fit left to finish would take
# minutes); STATUS is its exit status, stderr in $ERR.
stop_during_fit() {
    local sig=$1 folder=$2 pid i
    shift 2
    "$@" >/dev/null 2>"$ERR" &
    pid=$!
    wait_for "$folder"
    sleep 1
    kill -"$sig" $pid
    for i in $(seq 200); do kill -0 $pid 2>/dev/null || break; sleep 0.1; done
    kill -KILL $pid 2>/dev/null
    wait $pid
    STATUS=$?
}

# 1000 starts on the 1048 objects make a best fit of tens of seconds (MCMC
# starts from it; importance sampling from a nested run instead): the
# signal lands in it, before any sampler runs (it once killed the process
# with the default action: status 130 or 143). Now: status 1, a message,
# and no folder (nothing of the run was written).
BIG=(--data "$P/lcparam_full_long_zhel.txt" --columns z=zcmb,zhel=zhel,mag=mb,err=dmb --model w0wa --starts 1000)
for sig in INT TERM; do
    S="$E2E_TMP/sig-$sig"
    stop_during_fit $sig "$S" "$LANTERN" sample "${BIG[@]}" --sampler mcmc --out "$S" --quiet
    if [ "$STATUS" -eq 1 ] && grep -q "interrupted during the best fit" "$ERR" && [ ! -e "$S" ]; then
        pass "sample: SIG$sig during the best fit stops in order (status 1, no folder left)"
    else
        fail "sample: SIG$sig during the best fit stops in order (status 1, no folder left)"
    fi
done
# run: the same, and its message says there is nothing to resume
cat >"$E2E_TMP/big.ini" <<INI
[run]
name = big
models = w0wa
[data]
file = $P/lcparam_full_long_zhel.txt
columns = z=zcmb,zhel=zhel,mag=mb,err=dmb
[fit]
starts = 1000
[sampler]
method = mcmc
INI
R="$E2E_TMP/big-run"
stop_during_fit TERM "$R" "$LANTERN" run "$E2E_TMP/big.ini" --out "$R" --quiet
if [ "$STATUS" -eq 1 ] && grep -q "interrupted during the best fit" "$ERR" && grep -q "nothing was saved" "$ERR" &&
   [ ! -e "$R" ]; then
    pass "run: SIGTERM during the first best fit stops in order, nothing left"
else
    fail "run: SIGTERM during the first best fit stops in order, nothing left"
fi
# fit (which writes a folder too)
F="$E2E_TMP/sig-fit"
stop_during_fit INT "$F" "$LANTERN" fit "${BIG[@]}" --out "$F"
if [ "$STATUS" -eq 1 ] && grep -q "interrupted during the best fit" "$ERR" && [ ! -e "$F" ]; then
    pass "fit: SIGINT during the best fit stops in order, no folder"
else
    fail "fit: SIGINT during the best fit stops in order, no folder"
fi

# --- --force over an earlier comparison with other settings: its nested
# checkpoints are not continued (they were refused as another run's) ---
PB=(--data "$P/lcparam_DS17f.txt" --columns z=zcmb,zhel=zhel,mag=mb,err=dmb)
C="$E2E_TMP/cmp"
"$LANTERN" compare "${PB[@]}" --models lcdm-flat --live-points 100 --seed 1 --out "$C" --quiet >/dev/null 2>&1
run "$LANTERN" compare "${PB[@]}" --models lcdm-flat --live-points 100 --seed 2 --out "$C" --force --quiet
expect_status "compare --force with another seed starts afresh (no 'another run' refusal)" 0
# and run: a second run with another seed into the same folder
cat >"$E2E_TMP/small.ini" <<INI
[run]
name = small
models = lcdm-flat
[data]
file = $P/lcparam_DS17f.txt
columns = z=zcmb,zhel=zhel,mag=mb,err=dmb
[sampler]
target_ess = 200
INI
R2="$E2E_TMP/small-run"
"$LANTERN" run "$E2E_TMP/small.ini" --out "$R2" --quiet >/dev/null 2>&1
run "$LANTERN" run "$E2E_TMP/small.ini" --out "$R2" --force --set sampler.seed=9 --quiet
expect_status "run --force with another seed starts afresh (no stale nested checkpoint)" 0
