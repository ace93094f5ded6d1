#!/usr/bin/env bash
# Runs every test and prints one closing line, "tests: N passed, M failed".
#   build/tests/unit/test_*       cmocka programs (the module APIs)
#   build/tests/reference/test_*  cmocka programs (checks against outside sources)
#   tests/e2e/*.sh                the binary, as a user runs it ("ok"/"not ok" lines)
#   tests/reference/*.py          comparisons with astropy (/usr/bin/python3)
# A program that exits non-zero without reporting a failed case counts as one
# failure, so a crash is never a pass.
# LANTERN_BUILD (default build) names the build tree whose test programs run,
# LANTERN_BIN (default bin/lantern) the binary the end-to-end tests call:
# make asan points both at the sanitizer build.
set -u
cd "$(dirname "$0")/.."
# "bash tests/run.sh e2e" runs the end-to-end scripts only (make valgrind).
BUILD_DIR=${LANTERN_BUILD:-build}
ONLY=${1:-all}
export LANTERN_BIN=${LANTERN_BIN:-$PWD/bin/lantern}
export CMOCKA_MESSAGE_OUTPUT=stdout
pass=0
fail=0
failed_names=()
log=$(mktemp)
trap 'rm -f "$log"' EXIT

tally() { # name, exit status, passes, failures
    pass=$((pass + $3))
    fail=$((fail + $4))
    if [ "$4" -gt 0 ] || [ "$2" -ne 0 ]; then
        [ "$4" -eq 0 ] && fail=$((fail + 1))
        failed_names+=("$1")
    fi
}

for t in "$BUILD_DIR"/tests/unit/test_* "$BUILD_DIR"/tests/reference/test_*; do
    [ -x "$t" ] && [ "$ONLY" = all ] || continue
    echo "== $t"
    "$t" 2>&1 | tee "$log"
    rc=${PIPESTATUS[0]}
    run=$(grep -c '^\[ RUN      \]' "$log")
    ok=$(grep -c '^\[       OK \]' "$log")
    tally "$t" "$rc" "$ok" $((run - ok))
done

for t in tests/e2e/test_*.sh; do
    [ -f "$t" ] || continue
    echo "== $t"
    bash "$t" 2>&1 | tee "$log"
    rc=${PIPESTATUS[0]}
    tally "$t" "$rc" "$(grep -c '^ok ' "$log")" "$(grep -c '^not ok ' "$log")"
done

for t in tests/reference/*.py; do
    [ -f "$t" ] && [ "$ONLY" = all ] || continue
    echo "== $t"
    /usr/bin/python3 "$t" 2>&1 | tee "$log"
    rc=${PIPESTATUS[0]}
    tally "$t" "$rc" "$(grep -c '^ok ' "$log")" "$(grep -c '^not ok ' "$log")"
done

echo
[ ${#failed_names[@]} -gt 0 ] && printf 'failing: %s\n' "${failed_names[@]}"
echo "tests: $pass passed, $fail failed"
[ "$fail" -eq 0 ]
