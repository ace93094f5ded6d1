#!/usr/bin/env bash
# Runs each libFuzzer target given (make fuzz): first over its regression
# files (tests/fuzz/regressions/NAME/, inputs that once failed), then
# fuzzing for FUZZ_SECONDS from its seed corpus (tests/fuzz/corpus/NAME/)
# plus what earlier runs found (build/fuzz/corpus/NAME/, not committed).
# A crash, leak, hang (10 s on one input) or sanitizer finding fails the
# run; the input is saved under build/fuzz/artifacts/ and named in the
# output. Prints the executions per target.
set -u
cd "$(dirname "$0")/../.."
# An allocation too large for the machine returns NULL, as it would
# outside the sanitizer (CFITSIO sizes its buffers from headers): the code
# under test must report it, not crash.
export ASAN_OPTIONS=allocator_may_return_null=1
secs=${FUZZ_SECONDS:-30}
status=0
for bin in "$@"; do
    name=$(basename "$bin")
    short=${name#fuzz_}
    seeds=tests/fuzz/corpus/$short
    work=build/fuzz/corpus/$short
    art=build/fuzz/artifacts/$short/
    mkdir -p "$work" "$art"
    reg=tests/fuzz/regressions/$short
    if [ -d "$reg" ] && [ -n "$(ls -A "$reg")" ]; then
        if ! "$bin" -rss_limit_mb=2048 "$reg"/* >"build/fuzz/$short-regressions.log" 2>&1; then
            echo "fuzz $short: a regression input fails again (build/fuzz/$short-regressions.log)"
            status=1
        fi
    fi
    log=build/fuzz/$short.log
    "$bin" -max_total_time="$secs" -timeout=10 -rss_limit_mb=2048 -max_len=65536 \
        -print_final_stats=1 -artifact_prefix="$art" "$work" "$seeds" >"$log" 2>&1
    rc=$?
    execs=$(grep -m1 'stat::number_of_executed_units' "$log" | awk '{print $2}')
    if [ "$rc" -ne 0 ]; then
        echo "fuzz $short: FAILED after ${execs:-?} executions; see $log and $art"
        grep -m3 -E 'ERROR|SUMMARY' "$log" | sed 's/^/  /'
        status=1
    else
        echo "fuzz $short: ${execs:-?} executions in $secs s, no findings"
    fi
done
exit $status
