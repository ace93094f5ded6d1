#!/usr/bin/env bash
# The help texts live in src/cli/help/*.txt and are embedded at build time
# (scripts/embed-text.sh): every file must reach the user byte for byte.
#   NAME.txt        all of 'lantern NAME --help' ('@include F' lines read as F)
#   NAME-tail.txt   the end of it, after a list the program prints itself
#   main*.txt       'lantern --help' around the list of commands
#   data.txt, model.txt   included by the commands' texts
# A file that fits none of these fails, so a new text cannot go unchecked.
# Then, for every command that 'lantern --help' lists: -h, --help, 'lantern
# help CMD' give the same text anywhere on the line, --version works after
# it, its help explains exit statuses 0-3 and every option it accepts, and
# usage errors carry one 'lantern:' prefix.
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

# ---- every command, read from 'lantern --help' so that a new one is covered ----
# The help of a command is the same text (stdout, status 0, nothing on
# stderr) by -h, --help, 'lantern help CMD' and 'lantern -h CMD', wherever
# the flag stands; --version after any command prints what 'lantern
# --version' prints.
run "$LANTERN" --help
commands=$(sed -n '/^commands:$/,/^$/s/^  \([a-z][a-z-]*\) .*/\1/p' "$OUT")
ncommands=$(echo "$commands" | wc -w)
[ "$ncommands" -ge 12 ] && pass "lantern --help lists the commands ($ncommands)" ||
    fail "lantern --help lists the commands (found $ncommands)"
cp "$OUT" "$E2E_TMP/main-help"
for form in "help" "-h" "--help"; do
    run "$LANTERN" $form
    if [ "$STATUS" -eq 0 ] && [ ! -s "$ERR" ] && cmp -s "$OUT" "$E2E_TMP/main-help"; then
        pass "lantern $form prints the main help"
    else
        fail "lantern $form prints the main help"
    fi
done
run "$LANTERN" --version
version=$(cat "$OUT")
[ "$STATUS" -eq 0 ] && echo "$version" | grep -qE '^lantern [0-9]+\.[0-9]+\.[0-9]+$' &&
    pass "lantern --version: $version" || fail "lantern --version"

# the same text, status 0 and a quiet stderr from every form: shown CMD FORM...
shown() {
    local cmd=$1
    shift
    run "$LANTERN" "$@"
    if [ "$STATUS" -eq 0 ] && [ ! -s "$ERR" ] && cmp -s "$OUT" "$E2E_TMP/help-$cmd"; then
        pass "lantern $* prints the help of $cmd"
    else
        fail "lantern $* prints the help of $cmd"
    fi
}
for cmd in $commands; do
    run "$LANTERN" "$cmd" --help
    cp "$OUT" "$E2E_TMP/help-$cmd"
    if [ "$STATUS" -eq 0 ] && [ ! -s "$ERR" ] && head -1 "$OUT" | grep -q "^usage: lantern $cmd "; then
        pass "lantern $cmd --help: its usage, status 0"
    else
        fail "lantern $cmd --help: its usage, status 0"
    fi
    shown "$cmd" "$cmd" -h
    shown "$cmd" help "$cmd"
    shown "$cmd" -h "$cmd"
    shown "$cmd" --help "$cmd"
    # after other arguments, even ones that would fail: nothing is read or run
    shown "$cmd" "$cmd" "$E2E_TMP/no-such-file.ini" --format json -h
    shown "$cmd" "$cmd" --no-such-option --help
    run "$LANTERN" "$cmd" "$E2E_TMP/no-such-file.ini" --version
    [ "$STATUS" -eq 0 ] && [ "$(cat "$OUT")" = "$version" ] && [ ! -s "$ERR" ] &&
        pass "lantern $cmd ... --version prints the version" ||
        fail "lantern $cmd ... --version prints the version"
    # every help ends with the exit statuses, 0 to 3, each explained
    if [ "$(sed -n '/^exit status:$/,$p' "$E2E_TMP/help-$cmd" | grep -oE '^  [0-3]  [a-z]' |
        sort -u | wc -l)" -eq 4 ]; then
        pass "lantern $cmd --help explains exit statuses 0, 1, 2 and 3"
    else
        fail "lantern $cmd --help explains exit statuses 0, 1, 2 and 3"
    fi
    # an unknown option, long or short: one line, one prefix, status 2
    for bad in --no-such-option -x; do
        run "$LANTERN" "$cmd" "$bad"
        if [ "$STATUS" -eq 2 ] && [ ! -s "$OUT" ] && [ "$(wc -l <"$ERR")" -eq 1 ] &&
            grep -qx "lantern: $cmd: unknown argument '$bad' (see 'lantern $cmd --help')" "$ERR"; then
            pass "lantern $cmd $bad: one usage error, status 2"
        else
            fail "lantern $cmd $bad: one usage error, status 2"
        fi
    done
done

# Every option a command accepts is in its help. The candidates are every
# --flag named in the sources of the command line, the run description's
# flags (src/pipeline/job.c) and the help texts; a command accepts one when
# it does not answer "unknown argument" (without a value, a flag that takes
# one says it needs one; no command has data to work on here, so none runs).
candidates=$(cat "$ROOT"/src/cli/*.c "$ROOT"/src/pipeline/job.c "$HELP"/*.txt |
    grep -oE -- '--[a-z]([a-z0-9-]*[a-z0-9])?' | sort -u | grep -vxE -- '--help|--version')
[ "$(echo "$candidates" | wc -w)" -ge 40 ] && pass "candidate options found" ||
    fail "candidate options found"
# Some 800 calls: under make valgrind (1.5 s a call) they run the binary the
# wrapper runs, directly; its error paths are checked under valgrind above.
PROBE=$LANTERN
[ "$(basename "$LANTERN")" = valgrind-lantern ] && PROBE="$ROOT/bin/lantern"
for cmd in $commands; do
    undocumented="" accepted=0
    for opt in $candidates; do
        timeout 20 "$PROBE" "$cmd" "$opt" >/dev/null 2>"$ERR" </dev/null
        grep -q "unknown argument '$opt'" "$ERR" && continue
        accepted=$((accepted + 1))
        grep -qE -- "$opt([^a-z0-9-]|\$)" "$E2E_TMP/help-$cmd" || undocumented="$undocumented $opt"
    done
    if [ -z "$undocumented" ] && [ "$accepted" -gt 0 ]; then
        pass "lantern $cmd --help documents all $accepted options it accepts"
    else
        fail "lantern $cmd --help documents every option it accepts (missing:$undocumented)"
    fi
done

# help for what is not a command, and an unknown command: usage errors with
# one 'lantern:' prefix
run "$LANTERN" help no-such-command
[ "$STATUS" -eq 2 ] && [ ! -s "$OUT" ] &&
    grep -qx "lantern: help: no command 'no-such-command' (see 'lantern --help')" "$ERR" &&
    pass "lantern help NOSUCH: a usage error, status 2" || fail "lantern help NOSUCH: a usage error, status 2"
run "$LANTERN" help fit sample
expect_error "lantern help with two commands: a usage error" 2 "help: takes one command"
for bad in bogus --bogus -x; do
    run "$LANTERN" "$bad"
    [ "$STATUS" -eq 2 ] && [ ! -s "$OUT" ] &&
        grep -qx "lantern: unknown command '$bad' (see 'lantern --help')" "$ERR" &&
        pass "lantern $bad: unknown command, one prefix, status 2" ||
        fail "lantern $bad: unknown command, one prefix, status 2"
done

# lantern-mpi answers -h and --version for its campaign as bin/lantern does
if [ -z "${LANTERN_SANITIZE:-}" ] && [ -x "$MPI_BIN" ]; then
    run "$MPI_BIN" campaign -h
    cmp -s "$OUT" "$E2E_TMP/help-campaign" && [ "$STATUS" -eq 0 ] &&
        pass "lantern-mpi campaign -h prints the help of campaign" ||
        fail "lantern-mpi campaign -h prints the help of campaign"
    run "$MPI_BIN" campaign "$E2E_TMP/no-such-file.ini" --version
    [ "$STATUS" -eq 0 ] && [ "$(cat "$OUT")" = "$version" ] &&
        pass "lantern-mpi campaign --version prints the version" ||
        fail "lantern-mpi campaign --version prints the version"
fi
