# Helpers for the end-to-end tests: each check prints "ok - NAME" or
# "not ok - NAME" (with what was seen), and tests/run.sh counts them.
# Source from a test script; LANTERN is the binary under test ($LANTERN_BIN
# when set, as make asan and make valgrind do).
ROOT=$(cd "$(dirname "${BASH_SOURCE[0]}")/../.." && pwd)
LANTERN="${LANTERN_BIN:-$ROOT/bin/lantern}"
E2E_TMP=$(mktemp -d)
trap 'rm -rf "$E2E_TMP"' EXIT
OUT="$E2E_TMP/out"
ERR="$E2E_TMP/err"

# run CMD...: runs it, keeping stdout in $OUT, stderr in $ERR, status in $STATUS
run() {
    "$@" >"$OUT" 2>"$ERR"
    STATUS=$?
}

pass() { echo "ok - $1"; }
fail() {
    echo "not ok - $1"
    echo "  status: $STATUS"
    sed 's/^/  stdout: /' "$OUT" | head -5
    sed 's/^/  stderr: /' "$ERR" | head -5
}

# expect_status NAME CODE: the last run exited with CODE
expect_status() {
    if [ "$STATUS" -eq "$2" ]; then pass "$1"; else fail "$1 (want status $2)"; fi
}

# expect_error NAME CODE PATTERN: exit CODE, nothing on stdout, and a
# "lantern: ..." message matching PATTERN (grep -E) on stderr
expect_error() {
    if [ "$STATUS" -eq "$2" ] && [ ! -s "$OUT" ] && grep -qE "^lantern: .*$3" "$ERR"; then
        pass "$1"
    else
        fail "$1 (want status $2 and stderr matching '$3')"
    fi
}

# expect_stdout NAME PATTERN: status 0 and stdout matching PATTERN (grep -E)
expect_stdout() {
    if [ "$STATUS" -eq 0 ] && grep -qE -- "$2" "$OUT"; then
        pass "$1"
    else
        fail "$1 (want status 0 and stdout matching '$2')"
    fi
}

# bad NAME WHERE PATTERN ARGS...: "lantern inspect ARGS" (CMD, if set, in
# place of inspect) refuses its input:
# status 2, nothing on stdout, and stderr starting "lantern: WHERE: " (WHERE
# the "FILE:LINE", or "FILE", taken literally) and matching PATTERN (grep -E).
bad() {
    local name=$1 where=$2 pattern=$3
    shift 3
    run "$LANTERN" "${CMD:-inspect}" "$@"
    # the message must start with "lantern: WHERE: ", taken literally
    local prefix="lantern: $where: "
    if [ "$STATUS" -eq 2 ] && [ ! -s "$OUT" ] && [ "$(head -c ${#prefix} "$ERR")" = "$prefix" ] &&
        grep -qE -- "$pattern" "$ERR"; then
        pass "$name"
    else
        fail "$name (want status 2 and stderr starting '$prefix' and matching '$pattern')"
    fi
}

# wait_for PATH: until PATH exists (at most 30 s). Interrupt tests wait for
# the checkpoint folder, made once lantern catches signals: a background job
# of a script starts with SIGINT ignored, so an earlier Ctrl-C would be lost.
wait_for() {
    local i
    for i in $(seq 300); do
        [ -e "$1" ] && return 0
        sleep 0.1
    done
    return 1
}

# interrupt DIR CMD...: run CMD in the background, wait for its checkpoint
# (DIR/checkpoint/settings.ini), let it sample a little, then SIGINT it;
# STATUS, OUT and ERR as run leaves them.
interrupt() {
    local dir=$1 pid
    shift
    "$@" >"$OUT" 2>"$ERR" &
    pid=$!
    wait_for "$dir/checkpoint/settings.ini"
    sleep 0.3
    kill -INT $pid
    wait $pid
    STATUS=$?
}
