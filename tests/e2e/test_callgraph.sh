#!/usr/bin/env bash
# The library's file-level call graph (scripts/callgraph.py, from nm of the
# object files): no two library files call each other in a loop, and the
# "must not" rules of DESIGN.md's module table that a symbol table can show
# hold (likelihood does not call inference). src/cli is left out: the
# command line sits on top and may call anything.
. "$(dirname "$0")/lib.sh"

BUILD_DIR="$ROOT/${LANTERN_BUILD:-build}"
run /usr/bin/python3 "$ROOT/scripts/callgraph.py" "$BUILD_DIR"
if [ "$STATUS" -eq 0 ] && grep -q '^no loops among [0-9]* library files' "$OUT"; then
    pass "callgraph: no loops, no forbidden references"
else
    echo "not ok - callgraph: loops or forbidden references"
    sed 's/^/  /' "$OUT" "$ERR"
fi

# The check itself can fail: a graph with a two-file loop and a
# likelihood -> inference reference, built from two small objects.
mkdir -p "$E2E_TMP/g/src/likelihood" "$E2E_TMP/g/src/inference"
printf 'void b(void);\nvoid a(void) { b(); }\n' >"$E2E_TMP/a.c"
printf 'void a(void);\nvoid b(void) { a(); }\n' >"$E2E_TMP/b.c"
cc -c "$E2E_TMP/a.c" -o "$E2E_TMP/g/src/likelihood/a.o" &&
    cc -c "$E2E_TMP/b.c" -o "$E2E_TMP/g/src/inference/b.o"
run /usr/bin/python3 "$ROOT/scripts/callgraph.py" "$E2E_TMP/g"
if [ "$STATUS" -eq 1 ] &&
    grep -q '^loop: src/inference/b.c <-> src/likelihood/a.c' "$OUT" &&
    grep -q '^likelihood must not call inference: src/likelihood/a.c -> src/inference/b.c' "$OUT"; then
    pass "callgraph: finds a loop and a likelihood -> inference call"
else
    fail "callgraph: finds a loop and a likelihood -> inference call"
fi

# The symbol rules can fail too: a report file that evaluates a likelihood,
# a posterior file that runs the optimiser, and a pipeline file that prints
# (DESIGN.md's module table: report must not compute likelihoods, posterior
# must not run a likelihood, pipeline must not print).
mkdir -p "$E2E_TMP/s/src/report" "$E2E_TMP/s/src/posterior" "$E2E_TMP/s/src/pipeline"
printf 'void lt_like_eval(void);\nvoid r(void) { lt_like_eval(); }\n' >"$E2E_TMP/r.c"
printf 'int lt_optimize(void);\nint q(void) { return lt_optimize(); }\n' >"$E2E_TMP/q.c"
printf '#include <stdio.h>\nvoid p(int n) { fprintf(stderr, "%%d", n); }\n' >"$E2E_TMP/p.c"
cc -c "$E2E_TMP/r.c" -o "$E2E_TMP/s/src/report/r.o" &&
    cc -c "$E2E_TMP/q.c" -o "$E2E_TMP/s/src/posterior/q.o" &&
    cc -c "$E2E_TMP/p.c" -o "$E2E_TMP/s/src/pipeline/p.o"
run /usr/bin/python3 "$ROOT/scripts/callgraph.py" "$E2E_TMP/s"
if [ "$STATUS" -eq 1 ] &&
    grep -q '^report must not compute likelihoods: src/report/r.c uses lt_like_eval' "$OUT" &&
    grep -q '^posterior must not run a likelihood: src/posterior/q.c uses lt_optimize' "$OUT" &&
    grep -q '^library code must not print: src/pipeline/p.c uses stderr' "$OUT" &&
    grep -q '^pipeline must not print: src/pipeline/p.c uses fprintf' "$OUT"; then
    pass "callgraph: finds a report computing a likelihood, a posterior optimising, a pipeline printing"
else
    fail "callgraph: finds a report computing a likelihood, a posterior optimising, a pipeline printing"
fi

# Headers: library sources include the util headers they use, not the
# umbrellas (lantern/util.h, lantern/lantern.h); and every public header
# includes at its top, before its first declaration (issue 17: inference.h
# included likelihood.h in mid-file).
STATUS=0
umbrella=$(cd "$ROOT" && grep -ln '#include "lantern/\(util\|lantern\)\.h"' \
    $(ls src/*/*.[ch] include/lantern/*.h | grep -v '^src/cli/\|/util\.h$\|/lantern\.h$'))
if [ -z "$umbrella" ]; then
    pass "headers: no library file includes an umbrella header"
else
    echo "not ok - headers: no library file includes an umbrella header"
    echo "  found in: $umbrella"
fi
late=$(cd "$ROOT" && awk '
    FNR == 1 { code = 0; incomment = 0 }
    /^[ \t]*\/\*/ { incomment = 1 }
    incomment { if ($0 ~ /\*\//) incomment = 0; next }
    /^#include/ { if (code) print FILENAME ":" FNR; next }
    /^#/ || /^[ \t]*$/ || /^[ \t]*\/\// { next }
    { code = 1 }' include/lantern/*.h)
if [ -z "$late" ]; then
    pass "headers: every include at the top"
else
    echo "not ok - headers: every include at the top"
    echo "  late includes: $late"
fi
