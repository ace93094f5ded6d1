#!/usr/bin/env bash
# The tables people have (issue 22, item 8), end to end: one survey (the
# Lamplighter demo, data/lamplighter/survey.csv) written in other layouts by
# outside writers must fit to the same numbers as the plain table:
#  - Python's csv module (csv.writer, QUOTE_MINIMAL and QUOTE_ALL, its CRLF
#    line ends), with ids and a note column holding commas and quotes;
#  - pandas' DataFrame.to_csv layout (an unnamed index column), by hand;
#  - no header, mapped by column number (whitespace and CSV);
#  - a FITS table with upper-case names written by astropy.io.fits.
# "The same numbers": the fit's data.digest (every z, zhel, observation and
# variance, bit for bit), chi2_min and omega_m, equal as text. Then the
# refusals, each naming FILE:LINE.
source "$(dirname "$0")/lib.sh"
SURVEY="$ROOT/data/lamplighter/survey.csv"
T="$E2E_TMP"
PLAIN="z=z,zhel=zhel,mag=mag,err=err"

# fit_numbers FILE: data.digest, chi2_min and omega_m of the last fit ($OUT)
fit_numbers() {
    /usr/bin/python3 -c '
import json, sys
j = json.load(open(sys.argv[1]))
print(j["data"]["digest"], j["n_data"], repr(j["chi2_min"]), repr(j["params"]["omega_m"]["best"]))
' "$OUT"
}

# same_fit NAME ARGS...: a flat LCDM fit of ARGS gives the reference numbers
same_fit() {
    local name=$1
    shift
    run "$LANTERN" fit "$@" --model lcdm-flat --format json
    local got
    got=$([ "$STATUS" -eq 0 ] && fit_numbers)
    if [ "$STATUS" -eq 0 ] && [ "$got" = "$REF" ]; then
        pass "$name"
    else
        fail "$name (numbers '$got', want '$REF')"
    fi
}

run "$LANTERN" fit --data "$SURVEY" --columns "$PLAIN,id=id" --model lcdm-flat --format json
REF=$(fit_numbers)
case "$REF" in
    fnv1a64:*" 800 "*) pass "the plain table fits (the reference: $REF)" ;;
    *) fail "the plain table fits" ;;
esac

# The outside writers. Values are copied as the text of survey.csv (csv and
# the hand-written layouts) or as Python floats (FITS; float() and strtod
# both round correctly, so the doubles are the same).
/usr/bin/python3 - "$SURVEY" "$T" <<'EOF'
import csv, sys
src, out = sys.argv[1], sys.argv[2]
rows = list(csv.reader(open(src, newline="")))
head, body = rows[0], rows[1:]
col = {n: i for i, n in enumerate(head)}
# ids with a comma and quotes, a note with both, a header name with a comma
def quirky(r, k):
    return [r[col["id"]] + ', "' + r[col["tier"]] + '"', r[col["z"]], r[col["zhel"]],
            r[col["mag"]], r[col["err"]], 'row %d, said "%s"' % (k, r[col["tier"]])]
names = ["id", "z", "zhel", "mag", "err", "note, free text"]
for mode, name in ((csv.QUOTE_MINIMAL, "minimal.csv"), (csv.QUOTE_ALL, "all.csv")):
    with open(out + "/" + name, "w", newline="") as f:
        w = csv.writer(f, quoting=mode)   # lineterminator "\r\n" by default
        w.writerow(names)
        for k, r in enumerate(body):
            w.writerow(quirky(r, k))
# the mode table (data/lamplighter/modes.csv) with the same ids, so that
# its rows are matched to the table's by id
modes = list(csv.reader(open(src.replace("survey.csv", "modes.csv"), newline="")))
with open(out + "/modes.csv", "w", newline="") as f:
    w = csv.writer(f)
    w.writerows(modes[:2])
    for r, m in zip(body, modes[2:]):
        assert m[0] == r[col["id"]]
        w.writerow([quirky(r, 0)[0]] + m[1:])
with open(out + "/keep.txt", "w") as f:
    for r in body[:3]:
        f.write(quirky(r, 0)[0] + "\n")
# pandas' to_csv layout, by hand: an unnamed index column counting from 0
with open(out + "/pandas.csv", "w") as f:
    f.write(",id,z,zhel,mag,err\n")
    for k, r in enumerate(body):
        f.write(",".join([str(k), r[col["id"]], r[col["z"]], r[col["zhel"]], r[col["mag"]], r[col["err"]]]) + "\n")
# no header: whitespace (a comment after the first row) and CSV
with open(out + "/nohead.txt", "w") as f, open(out + "/nohead.csv", "w") as g:
    for k, r in enumerate(body):
        f.write(" ".join(r[col[c]] for c in ("z", "zhel", "mag", "err")) + "\n")
        g.write(",".join(r[col[c]] for c in ("err", "mag", "z", "zhel")) + "\n")
        if k == 0:
            f.write("# Lamplighter survey, written without a header\n")
EOF
/usr/bin/python3 - "$SURVEY" "$T" <<'EOF'
import csv, sys
import numpy as np
from astropy.io import fits
src, out = sys.argv[1], sys.argv[2]
rows = list(csv.DictReader(open(src, newline="")))
def column(name, key, data=None):
    return fits.Column(name=name, format="D",
                       array=np.array([float(r[key]) for r in rows]) if data is None else data)
cols = [column("ZCMB", "z"), column("ZHEL", "zhel"), column("MAG", "mag"), column("ERR", "err")]
fits.BinTableHDU.from_columns(cols, name="SN").writeto(out + "/upper.fits")
twins = cols + [column("zcmb", "z", np.full(len(rows), 7.0))]
fits.BinTableHDU.from_columns(twins).writeto(out + "/twins.fits")
EOF
[ -s "$T/twins.fits" ] && grep -q $'\r$' "$T/minimal.csv" && grep -q '"harbor-0001, ""harbor"""' "$T/minimal.csv" &&
    pass "the outside writers wrote their files (CRLF, quoted commas and quotes)" ||
    fail "the outside writers wrote their files (CRLF, quoted commas and quotes)"

# RFC 4180 as Python's csv module writes it
same_fit "csv.writer QUOTE_MINIMAL (quoted commas and quotes, CRLF) fits as the plain table" \
    --data "$T/minimal.csv" --columns "$PLAIN,id=id"
same_fit "csv.writer QUOTE_ALL (quoted header names and numbers) fits as the plain table" \
    --data "$T/all.csv" --columns "$PLAIN,id=id"
run "$LANTERN" inspect --data "$T/minimal.csv" --columns "$PLAIN,id=id" --keep-ids "$T/keep.txt"
expect_stdout "ids holding commas and quotes read as Python wrote them (--keep-ids finds 3)" \
    '^objects +3 \(of 800 read\)$'

# a mode table in the same quoting, matched by those ids
PLAIN_REF=$REF
run "$LANTERN" fit --data "$SURVEY" --columns "$PLAIN,id=id" --modes "$ROOT/data/lamplighter/modes.csv" \
    --model lcdm-flat --format json
REF=$(fit_numbers)
[ "$REF" != "$PLAIN_REF" ] && pass "the modes change the fit" || fail "the modes change the fit"
same_fit "quoted ids in a table and its csv.writer mode table match as the plain ones" \
    --data "$T/minimal.csv" --columns "$PLAIN,id=id" --modes "$T/modes.csv"
REF=$PLAIN_REF

# pandas' unnamed index column: ignored, nothing shifts
same_fit "pandas' to_csv layout (an unnamed index column) fits as the plain table" \
    --data "$T/pandas.csv" --columns "$PLAIN,id=id"

# no header: column numbers
same_fit "a header-less whitespace table by column numbers fits as the plain table" \
    --data "$T/nohead.txt" --columns z=1,zhel=2,mag=3,err=4
same_fit "a header-less CSV table by column numbers (in another order) fits as the plain table" \
    --data "$T/nohead.csv" --columns z=3,zhel=4,mag=2,err=1

# names in any case: FITS (astropy, upper case) and text
same_fit "an astropy FITS table with upper-case names, mapped in lower case" \
    --data "$T/upper.fits" --columns z=zcmb,zhel=zhel,mag=mag,err=err
same_fit "the same by CFITSIO's extended name [SN], mapped in mixed case" \
    --data "$T/upper.fits[SN]" --columns z=zCmb,zhel=ZHel,mag=MAG,err=Err
same_fit "a text table mapped in upper case" --data "$SURVEY" \
    --columns z=Z,zhel=ZHEL,mag=Mag,err=ERR,id=ID
same_fit "FITS ZCMB beside zcmb: the exact spelling picks its column" \
    --data "$T/twins.fits" --columns z=ZCMB,zhel=zhel,mag=mag,err=err

# Refusals (bad, from lib.sh): status 2, nothing on stdout, "lantern: FILE[:LINE]: message".
MU="z=z,mu=mu,err=err"
printf 'id,z,mu,err\n"sn1",0.1,38.3,0.2\n"sn\n2",0.5,42.3,0.2\n' >"$T/newline.csv"
bad "a quoted line break is refused at the line its quote opens" "$T/newline.csv:3" \
    "a quoted field is not closed on its line" --data "$T/newline.csv" --columns $MU
printf 'id,z,mu,err\r\n"sn1"x,0.1,38.3,0.2\r\n' >"$T/afterquote.csv"
bad "text after a closing quote" "$T/afterquote.csv:2" "text after a quoted field's closing quote" \
    --data "$T/afterquote.csv" --columns $MU
printf ',z,mu,err\n0.1,38.3,0.2\n' >"$T/pandas_short.csv"
bad "an unnamed column with rows one field short: no shift" "$T/pandas_short.csv:2" \
    "names 4 columns, 1 of them unnamed: columns would shift" --data "$T/pandas_short.csv" --columns $MU
bad "case-only twins without an exact match" "$T/twins.fits" \
    "'Zcmb' \(z\) matches columns 1 'ZCMB' and 5 'zcmb', which differ only in case" \
    --data "$T/twins.fits" --columns z=Zcmb,mag=mag,err=err
bad "two roles reaching one column through case" "$SURVEY:1" \
    "column 'mag' is mapped to both mag \(as 'mag'\) and err \(as 'MAG'\)" \
    --data "$SURVEY" --columns z=z,mag=mag,err=MAG
bad "a name in a header-less table" "$T/nohead.txt:1" \
    "the table has no header \(its first line holds only numbers\), so its columns go by number from 1: map zhel" \
    --data "$T/nohead.txt" --columns z=1,zhel=zhel,mag=3,err=4
bad "a column number past the first row" "$T/nohead.txt:1" "err=5: the first row has only 4 fields" \
    --data "$T/nohead.txt" --columns z=1,mag=3,err=5
bad "column number 0" "$T/nohead.txt:1" "z=0: column numbers count from 1" \
    --data "$T/nohead.txt" --columns z=0,mag=3,err=4
bad "a number in a table with a header is a name" "$SURVEY:1" \
    "no column '3' for z .*a number names a column by its position only in a text table without a header" \
    --data "$SURVEY" --columns z=3,mag=mag,err=err
printf '0.1 38.3 0.2\n0.5 x 0.2\n' >"$T/nohead_bad.txt"
bad "a bad value in a header-less table names its line" "$T/nohead_bad.txt:2" \
    "column '2' \(mu\): 'x' is not a finite number" --data "$T/nohead_bad.txt" --columns z=1,mu=2,err=3
