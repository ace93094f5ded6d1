#!/usr/bin/env bash
# End-to-end tests of "lantern inspect" and "lantern simulate".
source "$(dirname "$0")/lib.sh"
P="${LANTERN_SHARED:-$ROOT/../shared}/data/pantheon2018"

# The acceptance command of issue 3.
run "$LANTERN" inspect --data "$P/lcparam_DS17f.txt" --columns z=zcmb,zhel=zhel,mag=mb,err=dmb \
    --cov "$P/sys_DS17f.txt" --format json
if [ "$STATUS" -eq 0 ] && /usr/bin/python3 -c '
import json, sys
j = json.load(open(sys.argv[1]))
assert j["n_data"] == 40 and j["covariance"]["positive_definite"] is True
assert j["covariance"]["kind"] == "dense" and j["observable"] == "mag"
assert len(j["warnings"]) == 1 and "biascor" in j["warnings"][0]
' "$OUT"; then pass "inspect Pantheon 2018 binned: n_data 40, positive definite"; else fail "inspect Pantheon 2018 binned: n_data 40, positive definite"; fi
if grep -q "biascor" "$ERR"; then pass "the ignored header name is warned about on stderr"; else fail "the ignored header name is warned about on stderr"; fi

run "$LANTERN" inspect --data "$P/lcparam_full_long_zhel.txt" --columns z=zcmb,zhel=zhel,mag=mb,err=dmb,id=name
expect_stdout "inspect Pantheon 2018 full table: 1048 objects" '^objects +1048$'
run "$LANTERN" inspect --data "$P/lcparam_full_long_zhel.txt" --columns z=zcmb,zhel=zhel,mag=mb,err=dmb --zmax 0.1
expect_stdout "a redshift cut keeps fewer objects" '^objects +[0-9]+ \(of 1048 read\)$'

run "$LANTERN" inspect --help
expect_stdout "inspect --help explains the covariance sum" 'diag\(err\^2\) \+ every --cov'
run "$LANTERN" simulate --help
expect_stdout "simulate --help lists the scenario keys" 'velocity_dispersion'
run "$LANTERN" inspect --data "$P/lcparam_DS17f.txt" --columns z=zcmb,mag=mb,err=dmb --format csv
expect_error "inspect has no csv format" 2 "'csv' is not one of table, json"

# simulate: files, reproducibility, output-folder rules
S="$ROOT/data/lamplighter.ini"
run "$LANTERN" simulate "$S" --out "$E2E_TMP/a"
ok=1
for f in survey.csv survey.fits covariance.txt modes.csv truth.json .lantern-output; do
    [ -s "$E2E_TMP/a/$f" ] || ok=0
done
[ "$STATUS" -eq 0 ] && [ $ok -eq 1 ] && pass "simulate writes the five files and its marker" || fail "simulate writes the five files and its marker"
run "$LANTERN" simulate "$S" --out "$E2E_TMP/b"
same=1
for f in survey.csv survey.fits covariance.txt modes.csv truth.json; do
    cmp -s "$E2E_TMP/a/$f" "$E2E_TMP/b/$f" || same=0
done
[ $same -eq 1 ] && pass "the same scenario gives byte-identical files" || fail "the same scenario gives byte-identical files"
same=1
for f in survey.csv survey.fits covariance.txt modes.csv truth.json; do
    cmp -s "$E2E_TMP/a/$f" "$ROOT/data/lamplighter/$f" || same=0
done
[ $same -eq 1 ] && pass "data/lamplighter/ is what data/lamplighter.ini simulates" || fail "data/lamplighter/ is what data/lamplighter.ini simulates"
run "$LANTERN" simulate "$S" --out "$E2E_TMP/a"
expect_error "an earlier run is refused without --force" 2 "pass --force"
run "$LANTERN" simulate "$S" --out "$E2E_TMP/a" --force
expect_status "--force replaces an earlier run" 0
mkdir -p "$E2E_TMP/mine" && echo keep >"$E2E_TMP/mine/notes.txt"
run "$LANTERN" simulate "$S" --out "$E2E_TMP/mine" --force
expect_error "a folder lantern did not make is refused, even with --force" 2 "not made by lantern"
[ "$(cat "$E2E_TMP/mine/notes.txt")" = keep ] && pass "the user's file is untouched" || fail "the user's file is untouched"
run "$LANTERN" simulate "$E2E_TMP/no-such.ini" --out "$E2E_TMP/c"
expect_error "missing scenario file" 2 "no-such.ini: cannot open"
run "$LANTERN" simulate "$S"
expect_error "simulate needs --out" 2 "--out DIR is required"

# The simulated survey reads back with either form of its covariance, and
# inspect sees the same matrix.
D="$E2E_TMP/a"
run "$LANTERN" inspect --data "$D/survey.csv" --columns z=z,zhel=zhel,mag=mag,err=err,id=id --cov "$D/covariance.txt" --format json
cp "$OUT" "$E2E_TMP/dense.json"
run "$LANTERN" inspect --data "$D/survey.fits" --columns z=z,zhel=zhel,mag=mag,err=err,id=id --modes "$D/modes.csv" --format json
if [ "$STATUS" -eq 0 ] && /usr/bin/python3 -c '
import json, sys
a, b = (json.load(open(p)) for p in sys.argv[1:])
assert a["n_data"] == b["n_data"] == 800
assert a["covariance"]["kind"] == "dense" and b["covariance"]["kind"] == "structured"
assert abs(a["covariance"]["condition"] / b["covariance"]["condition"] - 1) < 1e-10
assert abs(a["covariance"]["min_eigenvalue"] / b["covariance"]["min_eigenvalue"] - 1) < 1e-10
' "$E2E_TMP/dense.json" "$OUT"; then pass "dense (CSV) and modes (FITS) give the same covariance"; else fail "dense (CSV) and modes (FITS) give the same covariance"; fi

# FITS tables by CFITSIO's extended names: the HDU by number and by name.
for hdu in "[1]" "[SURVEY]"; do
    run "$LANTERN" inspect --data "$D/survey.fits$hdu" --columns z=z,zhel=zhel,mag=mag,err=err,id=id
    expect_stdout "FITS table picked as survey.fits$hdu" '^objects +800$'
done
run "$LANTERN" inspect --data "$D/survey.fits[2]" --columns z=z,mag=mag,err=err
expect_error "a FITS HDU that does not exist" 2 "survey.fits\[2\]: cannot open a FITS table"
run "$LANTERN" inspect --data "$D/survey.fits" --columns z=redshift,mag=mag,err=err
expect_error "a FITS column that does not exist" 2 "no column 'redshift' for z \(columns: id, tier, z, zhel, mag, err\)"

# Keep and drop lists of ids.
printf 'harbor-0001\nbeacon-0007\n# a comment\nfarlight-0240\n' >"$E2E_TMP/keep.txt"
run "$LANTERN" inspect --data "$D/survey.csv" --columns z=z,zhel=zhel,mag=mag,err=err,id=id \
    --modes "$D/modes.csv" --keep-ids "$E2E_TMP/keep.txt"
expect_stdout "--keep-ids keeps the listed objects" '^objects +3 \(of 800 read\)$'
run "$LANTERN" inspect --data "$D/survey.csv" --columns z=z,zhel=zhel,mag=mag,err=err,id=id \
    --modes "$D/modes.csv" --drop-ids "$E2E_TMP/keep.txt"
expect_stdout "--drop-ids drops them" '^objects +797 \(of 800 read\)$'
