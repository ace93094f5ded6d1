#!/usr/bin/env bash
# End-to-end tests of the chain files of "lantern sample": chains.fits as
# astropy reads it (astropy.io.fits, Debian's, an outside reader of FITS)
# against chains.csv as Python's csv module and float() read it, exactly;
# --thin N and [sampler] thin (rows, steps, the summary unchanged, the
# refusals); the progress line while writing large files.
source "$(dirname "$0")/lib.sh"
P="${LANTERN_SHARED:-$ROOT/../shared}/data/pantheon2018"
DATA=(--data "$P/lcparam_DS17f.txt" --columns z=zcmb,zhel=zhel,mag=mb,err=dmb --cov "$P/sys_DS17f.txt")
# 4 chains of about 31000 draws: a file large enough for the progress line
LONG=(--model lcdm-flat --sampler mcmc --target-ess 30000 --seed 5)

run "$LANTERN" sample "${DATA[@]}" "${LONG[@]}" --out "$E2E_TMP/all" --verbose
# the rows in all: the chains' draws as summary.json counts them
ROWS=$(sed -n 's/^[[:space:]]*"draws":[[:space:]]*\([0-9]*\),$/\1/p' "$E2E_TMP/all/summary.json")
if [ "$STATUS" -eq 0 ] && [ "${ROWS:-0}" -gt 100000 ] &&
    grep -q "^writing chains.csv: $ROWS of $ROWS rows (100%)\$" "$ERR" &&
    grep -q "^writing chains.fits: $ROWS of $ROWS rows (100%)\$" "$ERR" &&
    grep -q "^writing chains.csv: $((ROWS / 10)) of $ROWS rows (10%)\$" "$ERR" &&
    [ "$(grep -c '^writing chains.csv: ' "$ERR")" -eq 10 ] &&
    [ "$(grep -c '^writing chains.fits: ' "$ERR")" -le 11 ]; then
    pass "--verbose: a progress line at every tenth of a $ROWS-row file, each file to 100%"
else
    fail "--verbose: a progress line at every tenth of a ${ROWS:-?}-row file, each file to 100%"
fi
run "$LANTERN" sample "${DATA[@]}" "${LONG[@]}" --thin 7 --out "$E2E_TMP/thin7" --verbose
if [ "$STATUS" -eq 0 ] && ! grep -q '^writing' "$ERR"; then
    pass "no progress line for a file of 100000 rows or fewer (--thin 7)"
else
    fail "no progress line for a file of 100000 rows or fewer (--thin 7)"
fi
run "$LANTERN" sample "${DATA[@]}" "${LONG[@]}" --out "$E2E_TMP/quiet" --quiet
if [ "$STATUS" -eq 0 ] && ! grep -qE '^(writing|sampling)' "$ERR"; then
    pass "--quiet: no progress line"
else
    fail "--quiet: no progress line"
fi

# The same run thinned by a run file's [sampler] thin.
cat >"$E2E_TMP/thin3.ini" <<EOF
[data]
file = $P/lcparam_DS17f.txt
columns = z=zcmb,zhel=zhel,mag=mb,err=dmb
cov = $P/sys_DS17f.txt
[model]
name = lcdm-flat
[sampler]
method = mcmc
seed = 5
target_ess = 30000
thin = 3
EOF
run "$LANTERN" sample "$E2E_TMP/thin3.ini" --out "$E2E_TMP/thin3" --quiet
expect_status "[sampler] thin = 3 in a run file" 0

# check DIR THIN: astropy's chains.fits and the csv module's chains.csv
# hold the same numbers exactly, and they are every THIN-th row of each
# chain of the unthinned run's files; the summary is the unthinned one but
# for file_thin and file_draws_per_chain.
check() {
    /usr/bin/python3 - "$E2E_TMP/all" "$1" "$2" <<'PY'
import csv, json, math, struct, sys
from astropy.io import fits
full, d, thin = sys.argv[1], sys.argv[2], int(sys.argv[3])

def bits(x):
    return struct.pack("<d", float(x))

def read(d):
    with open(d + "/chains.csv", newline="") as f:
        rows = list(csv.reader(f))
    head, body = rows[0], rows[1:]
    with fits.open(d + "/chains.fits") as h:
        t = h["CHAINS"].data
        hdr = h["CHAINS"].header
        names = list(t.columns.names)
        cols = [t[n] for n in names]
    assert names == head, (names, head)
    assert len(body) == len(cols[0]), (len(body), len(cols[0]))
    for i, r in enumerate(body):
        assert int(r[0]) == int(cols[0][i]) and int(r[1]) == int(cols[1][i]), i
        for k in range(2, len(head)):
            # the text reads back as the very double of the FITS file
            assert bits(r[k]) == bits(cols[k][i]), (i, head[k], r[k], repr(cols[k][i]))
    return head, body, hdr

head_a, a, _ = read(full)
head_b, b, hdr = read(d)
assert head_a == head_b and "weight" not in head_a
sa, sb = json.load(open(full + "/summary.json")), json.load(open(d + "/summary.json"))
ca, cb = sa["convergence"], sb["convergence"]
n, per = ca["draws_per_chain"], cb["file_draws_per_chain"]
assert ca["file_thin"] == 1 and ca["file_draws_per_chain"] == n
assert cb["file_thin"] == thin and per == -(-n // thin), (per, n, thin)
assert hdr["FILETHIN"] == thin and hdr["NCHAINS"] == 4
# rows: ceil(draws / thin) per chain; steps 1, thin + 1, ...
assert len(a) == 4 * n and len(b) == 4 * per, (len(a), len(b))
for c in range(4):
    for i in range(per):
        ra, rb = a[c * n + i * thin], b[c * per + i]
        assert rb == ra, (c, i)
        assert rb[0] == str(c + 1) and rb[1] == str(i * thin + 1), rb[:2]
# the summary, every number of it, is that of every draw
for s in (ca, cb):
    del s["file_thin"], s["file_draws_per_chain"]
assert sa == sb
PY
}
if check "$E2E_TMP/thin7" 7; then
    pass "--thin 7: every 7th row of each chain (ceil(draws/7) rows), summary unchanged, FITS = CSV in astropy"
else
    fail "--thin 7: every 7th row of each chain (ceil(draws/7) rows), summary unchanged, FITS = CSV in astropy"
fi
if check "$E2E_TMP/thin3" 3; then
    pass "[sampler] thin = 3: every 3rd row of each chain, summary unchanged, FITS = CSV in astropy"
else
    fail "[sampler] thin = 3: every 3rd row of each chain, summary unchanged, FITS = CSV in astropy"
fi
cmp -s "$E2E_TMP/all/chains.csv" "$E2E_TMP/quiet/chains.csv" && pass "--thin 1 (the default): every draw" ||
    fail "--thin 1 (the default): every draw"

# --resume keeps the thinning: the checkpoint's settings.ini has it.
grep -q '^thin = 3$' "$E2E_TMP/thin3/checkpoint/settings.ini" && pass "settings.ini keeps thin for --resume" ||
    fail "settings.ini keeps thin for --resume"

# Refusals: the flag named, or the file and line.
for bad in 0 -2 1.5 x ""; do
    run "$LANTERN" sample "${DATA[@]}" --model lcdm-flat --thin "$bad" --out "$E2E_TMP/bad"
    expect_error "--thin '$bad' refused, naming the flag" 2 "--thin: '$bad' is not a whole number from 1 to 1000000000"
done
sed 's/^thin = 3$/thin = 2.5/' "$E2E_TMP/thin3.ini" >"$E2E_TMP/bad.ini"
run "$LANTERN" sample "$E2E_TMP/bad.ini" --out "$E2E_TMP/bad"
expect_error "[sampler] thin = 2.5 refused with file:line" 2 "bad.ini:11: thin = '2.5' is not a whole number"
[ ! -e "$E2E_TMP/bad" ] && pass "a refused thin writes nothing" || fail "a refused thin writes nothing"

# Weighted draws (a weight column after step) in both files, as astropy
# and the csv module read them: the unit test test_chains writes them
# (importance weights cannot be asked for from the command line) and keeps
# them here.
UNIT="$ROOT/${LANTERN_BUILD:-build}/tests/unit/test_chains"
mkdir -p "$E2E_TMP/kept"
if LANTERN_TEST_CHAINS_KEEP="$E2E_TMP/kept" "$UNIT" >/dev/null 2>&1 &&
    /usr/bin/python3 - "$E2E_TMP/kept" <<'PY'
import csv, math, struct, sys
from astropy.io import fits
for case, weighted, per in (("plain", False, 1001), ("thin7", False, 143),
                            ("weighted", True, 1001), ("weighted10", True, 101)):
    d = sys.argv[1] + "/" + case
    with open(d + "/chains.csv", newline="") as f:
        rows = list(csv.reader(f))
    with fits.open(d + "/chains.fits") as h:
        t, hdr = h["CHAINS"].data, h["CHAINS"].header
        names = list(t.columns.names)
        assert names == rows[0], (names, rows[0])
        assert ("weight" in names) == weighted and hdr["WEIGHTED"] == weighted
        if weighted:
            assert names.index("weight") == 2 and t.columns["weight"].format == "D"
        assert len(t) == len(rows) - 1 == 3 * per, (case, len(t))
        nan = 0
        for i, r in enumerate(rows[1:]):
            for k, name in enumerate(names):
                a, b = struct.pack("<d", float(r[k])), struct.pack("<d", float(t[name][i]))
                assert a == b, (case, i, name, r[k], t[name][i])
                nan += math.isnan(float(r[k]))
        # the one NaN made in the unit test's draws survives (kept rows only)
        assert nan == (1 if case in ("plain", "weighted") else 0), (case, nan)
PY
then
    pass "weighted and unweighted, thinned or not: chains.fits (astropy) = chains.csv (csv module) bit for bit"
else
    fail "weighted and unweighted, thinned or not: chains.fits (astropy) = chains.csv (csv module) bit for bit"
fi

# A campaign writes no chain files: [sampler] thin there is refused, not ignored.
{ sed '/^\[sampler\]/,$d' "$ROOT/configs/campaign-small.ini" | sed "s|\.\./data/|$ROOT/data/|"
  printf '[sampler]\nchains = 4\nthin = 2\n'; } >"$E2E_TMP/campaign.ini"
LINE=$(grep -n '^thin = 2$' "$E2E_TMP/campaign.ini" | cut -d: -f1)
run "$LANTERN" campaign "$E2E_TMP/campaign.ini" --out "$E2E_TMP/campaign"
expect_error "a campaign's [sampler] thin refused with file:line" 2 "campaign.ini:$LINE: \[sampler\] thin has no place in a campaign \(a campaign writes no chain files\)"
