#!/usr/bin/env bash
# The help texts live in src/cli/help/*.txt and are embedded at build time
# (scripts/embed-text.sh): every file must reach the user byte for byte.
#   NAME.txt        all of 'lantern NAME --help' ('@include F' lines read as F)
#   NAME-tail.txt   the end of it, after a list the program prints itself
#   main*.txt       'lantern --help' around the list of commands
#   data.txt, model.txt   included by the commands' texts
# A file that fits none of these fails, so a new text cannot go unchecked.
. "$(dirname "$0")/lib.sh"

HELP="$ROOT/src/cli/help"
MPI_BIN="${LANTERN_MPI_BIN:-$(dirname "$LANTERN")/lantern-mpi}"

# expand FILE: the file with each '@include F' line replaced by F (the
# generator's rule, written again here independently of it)
expand() {
    local line
    while IFS= read -r line; do
        case $line in
        "@include "*) expand "$HELP/${line#@include }" ;;
        *) printf '%s\n' "$line" ;;
        esac
    done <"$1"
}

# same NAME FILE: $OUT holds exactly the contents of FILE, and status 0
same() {
    if [ "$STATUS" -eq 0 ] && cmp -s "$2" "$OUT"; then
        pass "$1"
    else
        fail "$1"
        diff "$2" "$OUT" | head -5 | sed 's/^/  diff: /'
    fi
}

# around NAME HEAD TAIL LIST: $OUT is HEAD, then lines matching the pattern
# LIST, then TAIL (the lists of commands and of models are printed by C)
around() {
    local nh nt no
    nh=$(wc -c <"$2")
    nt=$(wc -c <"$3")
    no=$(wc -c <"$OUT")
    if [ "$STATUS" -eq 0 ] && [ "$no" -gt $((nh + nt)) ] &&
        cmp -s "$2" <(head -c "$nh" "$OUT") && cmp -s "$3" <(tail -c "$nt" "$OUT") &&
        ! head -c $((no - nt)) "$OUT" | tail -c +$((nh + 1)) | grep -vqE "$4"; then
        pass "$1"
    else
        fail "$1"
    fi
}

names=$(cd "$HELP" && ls -- *.txt)
[ -n "$names" ] && pass "help texts found in src/cli/help" || fail "help texts found in src/cli/help"

for f in $names; do
    name=${f%.txt}
    case $name in
    data | model)
        # included by at least one command's text
        if grep -qx "@include $f" "$HELP"/*.txt; then
            pass "$f is included by a command's text"
        else
            fail "$f is included by a command's text"
        fi
        ;;
    main)
        run "$LANTERN" --help
        around "lantern --help prints main.txt and main-tail.txt" "$HELP/main.txt" \
            "$HELP/main-tail.txt" '^  [a-z]+ +[^ ]'
        ;;
    *-tail)
        # checked with the file it ends
        [ -f "$HELP/${name%-tail}.txt" ] || fail "$f has a ${name%-tail}.txt"
        ;;
    *)
        run "$LANTERN" "$name" --help
        expand "$HELP/$f" >"$E2E_TMP/want"
        if [ -f "$HELP/$name-tail.txt" ]; then
            around "lantern $name --help prints $f and $name-tail.txt" "$E2E_TMP/want" \
                "$HELP/$name-tail.txt" '^ {21}[a-z0-9-]+ +[A-Za-z]'
        else
            same "lantern $name --help prints $f exactly" "$E2E_TMP/want"
        fi
        if grep -q '^@include' "$OUT"; then
            fail "lantern $name --help leaks no @include line"
        fi
        ;;
    esac
done

# The same texts from the other entries: 'lantern' alone (stderr, status 2),
# lantern-mpi's own --help, and lantern-mpi campaign --help (one rank,
# without mpirun; left out of sanitizer builds, as in test_campaign.sh).
run "$LANTERN"
if [ "$STATUS" -eq 2 ] && [ ! -s "$OUT" ]; then
    cp "$ERR" "$OUT"
    STATUS=0
    around "lantern with no command prints main.txt on stderr" "$HELP/main.txt" \
        "$HELP/main-tail.txt" '^  [a-z]+ +[^ ]'
else
    fail "lantern with no command prints main.txt on stderr (want status 2)"
fi
if [ -z "${LANTERN_SANITIZE:-}" ] && [ -x "$MPI_BIN" ]; then
    run "$MPI_BIN" --help
    around "lantern-mpi --help prints main.txt" "$HELP/main.txt" "$HELP/main-tail.txt" \
        '^  [a-z]+ +[^ ]'
    run "$MPI_BIN" campaign --help
    expand "$HELP/campaign.txt" >"$E2E_TMP/want"
    same "lantern-mpi campaign --help prints campaign.txt exactly" "$E2E_TMP/want"
else
    echo "ok - (skipped: lantern-mpi; not built, or a sanitizer build)"
fi

# The checks can fail: a text one byte off, a head that is not the output's.
printf 'x' >>"$E2E_TMP/want"
run "$LANTERN" campaign --help
if [ "$STATUS" -eq 0 ] && ! cmp -s "$E2E_TMP/want" "$OUT"; then
    pass "a changed text is told apart"
else
    fail "a changed text is told apart"
fi
run "$LANTERN" --help
(around "probe" "$HELP/fit.txt" "$HELP/main-tail.txt" '^  [a-z]+ +[^ ]') | grep -q '^not ok' &&
    pass "a wrong head is told apart" || fail "a wrong head is told apart"
