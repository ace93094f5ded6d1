#!/usr/bin/env bash
# The malformed-file corpus (tests/data/bad/): every rejected input gives
# exit status 2, nothing on stdout, and "lantern: FILE:LINE: message" naming
# the file and, where the file has lines, the line.
source "$(dirname "$0")/lib.sh"
B="$ROOT/tests/data/bad"
MU="z=z,mu=mu,err=err"

bad "non-numeric value"       "$B/nonnumeric.txt:3"        "'abc' is not a finite number" --data "$B/nonnumeric.txt" --columns $MU
bad "nan value"               "$B/nan_value.txt:3"         "'nan' is not a finite number" --data "$B/nan_value.txt" --columns $MU
bad "infinite value (CSV)"    "$B/inf_value.csv:3"         "'inf' is not a finite number" --data "$B/inf_value.csv" --columns $MU
bad "zero error"              "$B/zero_error.txt:3"        "errors must be > 0"           --data "$B/zero_error.txt" --columns $MU
bad "negative error"          "$B/negative_error.txt:3"    "errors must be > 0"           --data "$B/negative_error.txt" --columns $MU
bad "zero redshift"           "$B/zero_redshift.txt:3"     "redshifts must be > 0"        --data "$B/zero_redshift.txt" --columns $MU
bad "negative redshift"       "$B/negative_redshift.txt:2" "redshifts must be > 0"        --data "$B/negative_redshift.txt" --columns $MU
bad "negative zhel"           "$B/negative_zhel.txt:3"     "'zhel' \(zhel\) is -0.2"      --data "$B/negative_zhel.txt" --columns z=z,zhel=zhel,mu=mu,err=err
bad "negative distance"       "$B/negative_dl.txt:3"       "distances must be > 0"        --data "$B/negative_dl.txt" --columns z=z,dl=dl,err=err
bad "short row"               "$B/short_row.txt:3"         "a short row"                  --data "$B/short_row.txt" --columns $MU
bad "extra field"             "$B/extra_field.txt:3"       "an extra field"               --data "$B/extra_field.txt" --columns $MU
bad "row wider than header"   "$B/wider_than_header.txt:2" "columns would shift"          --data "$B/wider_than_header.txt" --columns $MU
bad "duplicate header names"  "$B/duplicate_header.txt:1"  "names 'z' twice"              --data "$B/duplicate_header.txt" --columns $MU
bad "unknown column name"     "$B/two_rows.txt:1"          "no column 'zcmb' for z"       --data "$B/two_rows.txt" --columns z=zcmb,mu=mu,err=err
bad "empty file"              "$B/empty.txt"               "file is empty"                --data "$B/empty.txt" --columns $MU
bad "blank file"              "$B/blank.txt"               "only blank lines"             --data "$B/blank.txt" --columns $MU
bad "header without rows"     "$B/header_only.txt:1"       "no data rows"                 --data "$B/header_only.txt" --columns $MU
bad "NUL byte"                "$B/nul_byte.txt"            "NUL byte"                     --data "$B/nul_byte.txt" --columns $MU
bad "a directory"             "$B"                         "is a directory"               --data "$B" --columns $MU
bad "missing file"            "$B/no_such_file.txt"        "cannot open"                  --data "$B/no_such_file.txt" --columns $MU
bad "FITS file that is not"   "$B/two_rows.fits"           "cannot open a FITS table"     --data "$B/two_rows.fits" --columns $MU
bad "wrong covariance size"   "$B/cov_wrong_size.txt:1"    "is 3 x 3 but the table"       --data "$B/two_rows.txt" --columns $MU --cov "$B/cov_wrong_size.txt"
bad "truncated covariance"    "$B/cov_truncated.txt:4"     "truncated after 3"            --data "$B/two_rows.txt" --columns $MU --cov "$B/cov_truncated.txt"
bad "asymmetric covariance"   "$B/cov_asymmetric.txt:3"    "not symmetric"                --data "$B/two_rows.txt" --columns $MU --cov "$B/cov_asymmetric.txt"
# (inspect prints its diagnosis of this one: tests/e2e/test_warnings.sh; fit
# refuses it and points there)
CMD=fit bad "covariance not pos. def" "$B/cov_not_positive_definite.txt" "not positive definite.*'lantern inspect' with the same data options shows its negative directions" --data "$B/two_rows.txt" --columns $MU --cov "$B/cov_not_positive_definite.txt" --no-err-diag --model lcdm-flat
bad "covariance non-numeric"  "$B/cov_nonnumeric.txt:3"    "'x' is not a finite number"   --data "$B/two_rows.txt" --columns $MU --cov "$B/cov_nonnumeric.txt"
bad "covariance not square"   "$B/cov_not_square.txt:1"    "not a square matrix"          --data "$B/two_rows.txt" --columns $MU --cov "$B/cov_not_square.txt"
bad "modes without amplitude" "$B/modes_no_amplitude.csv:2" "must start with 'amplitude'" --data "$B/two_rows.txt" --columns $MU --modes "$B/modes_no_amplitude.csv"
bad "modes too short"         "$B/modes_short.csv"         "1 object rows but the table"  --data "$B/two_rows.txt" --columns $MU --modes "$B/modes_short.csv"
bad "modes out of order"      "$B/modes_misaligned.csv"    "row 2 is labelled '7'"        --data "$B/two_rows.txt" --columns $MU --modes "$B/modes_misaligned.csv"
bad "negative amplitude"      "$B/modes_negative_amplitude.csv:2" "must be a finite number >= 0" --data "$B/two_rows.txt" --columns $MU --modes "$B/modes_negative_amplitude.csv"
bad "empty id list"           "$B/ids_empty.txt"           "id list is empty"             --data "$B/with_ids.txt" --columns $MU,id=id --keep-ids "$B/ids_empty.txt"
bad "no covariance left"      "--no-err-diag"              "leaves no covariance"         --data "$B/two_rows.txt" --columns $MU --no-err-diag
bad "no --columns"            "--columns"                  "no column mapping"            --data "$B/two_rows.txt"
bad "no --data"               "--data"                     "no data table"                --columns $MU
bad "bad --zmin"              "--zmin"                     "not a redshift"               --data "$B/two_rows.txt" --columns $MU --zmin abc

# FITS headers are checked before CFITSIO reads them (src/survey/fitscheck.c):
# an unquoted TTYPE value filling its card made CFITSIO 4.2 abort the
# process (found by fuzzing), a header cut short, a byte outside printable
# ASCII (FITS Standard 4.0, sect. 4.1.1).
FCOL="z=z,mag=mag,err=err"
bad "FITS: unquoted TTYPE"    "$B/fits_unquoted_ttype.fits" "TTYPE5.*must hold a quoted string" --data "$B/fits_unquoted_ttype.fits" --columns $FCOL
head -c 4000 "$ROOT/data/lamplighter/survey.fits" >"$E2E_TMP/cut.fits"
bad "FITS: truncated header"  "$E2E_TMP/cut.fits"          "HDU 2's header is truncated"   --data "$E2E_TMP/cut.fits" --columns $FCOL
/usr/bin/python3 -c '
import sys
b = bytearray(open(sys.argv[1], "rb").read())
b[2880 + 80 * 3 + 40] = 0x07
open(sys.argv[2], "wb").write(b)' "$ROOT/data/lamplighter/survey.fits" "$E2E_TMP/bell.fits"
bad "FITS: control byte in a header" "$E2E_TMP/bell.fits"  "HDU 2, header card 4 holds a byte 0x07" --data "$E2E_TMP/bell.fits" --columns $FCOL
bad "FITS image: unquoted TTYPE" "$B/fits_unquoted_ttype.fits" "must hold a quoted string" --data "$B/two_rows.txt" --columns $MU --cov "$B/fits_unquoted_ttype.fits"

# Limits instead of running out of memory: a line over 1 MiB, a header of
# 200 000 names (one line of 1.3 MB), a covariance whose first line asks for
# a 10^8 x 10^8 matrix. Each is refused before the memory is taken.
/usr/bin/python3 -c '
import sys
d = sys.argv[1]
open(d + "/longline.txt", "w").write("z mu err\n0.1 38 0.1 " + "x" * (1 << 21) + "\n")
open(d + "/manycols.txt", "w").write(" ".join("c%d" % i for i in range(200000)) + "\n")
open(d + "/hugecov.txt", "w").write("100000000\n1 2 3\n")' "$E2E_TMP"
bad "limit: a line over 1 MiB"   "$E2E_TMP/longline.txt:2" "line is longer than 1048576 bytes" --data "$E2E_TMP/longline.txt" --columns $MU
bad "limit: 200 000 column names" "$E2E_TMP/manycols.txt:1" "line is longer than 1048576 bytes" --data "$E2E_TMP/manycols.txt" --columns z=c1,mu=c2,err=c3
bad "limit: a 10^8 x 10^8 covariance" "$E2E_TMP/hugecov.txt:1" "needs 80000000.0 GB, over the limit of 2.1 GB" --data "$B/two_rows.txt" --columns $MU --cov "$E2E_TMP/hugecov.txt"

# Nothing was written anywhere by a refused input: the corpus folder is unchanged.
if [ "$(ls "$B" | wc -l)" -eq 31 ]; then pass "refused inputs write nothing"; else fail "refused inputs write nothing"; fi
