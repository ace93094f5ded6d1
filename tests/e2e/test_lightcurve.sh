#!/usr/bin/env bash
# End-to-end tests of light-curve tables (issue 21, first step: the roles
# and what inspect says of them): the JLA release file read with the
# light-curve roles, inspect's numbers against numpy on the same file
# (ranges of x1 and colour, the host-mass split at 10, placeholders, the
# groups), with and without a redshift cut; the same table as FITS (astropy
# writes it, text group labels included); and the refusals, each naming
# the file and line or the flag.
source "$(dirname "$0")/lib.sh"
J="${LANTERN_SHARED:-$ROOT/../shared}/data/jla2014/jla_lcparams.txt"
COLS="z=zcmb,zhel=zhel,mb=mb,err_mb=dmb,x1=x1,err_x1=dx1,color=color,err_color=dcolor,mass=3rdvar,err_mass=d3rdvar,cov_mb_x1=cov_m_s,cov_mb_color=cov_m_c,cov_x1_color=cov_s_c,dz=dz,group=set,id=name"

# numpy's reading of the JLA file (SOURCE.md gives its columns): the
# numbers inspect must report; ZMIN cuts z >= ZMIN
reference() {
    /usr/bin/python3 - "$J" "$1" <<'PY'
import json, sys
import numpy as np
d = np.genfromtxt(sys.argv[1], names=True, dtype=None, encoding=None)
d = d[d["zcmb"] >= float(sys.argv[2])]
m = d["3rdvar"]
real = m[m >= 7]
groups = {}
for s in d["set"]:
    groups[str(s)] = groups.get(str(s), 0) + 1
print(json.dumps({"n": int(len(d)), "x1_min": float(d["x1"].min()), "x1_max": float(d["x1"].max()),
                  "color_min": float(d["color"].min()), "color_max": float(d["color"].max()),
                  "mass_min": float(real.min()), "mass_max": float(real.max()),
                  "high": int((real >= 10).sum()), "low": int((real < 10).sum()),
                  "placeholder": int((m < 7).sum()), "groups": groups}))
PY
}
compare() { # compare INSPECT_JSON REFERENCE_JSON
    /usr/bin/python3 - "$1" "$2" <<'PY'
import json, sys
j, r = json.load(open(sys.argv[1])), json.load(open(sys.argv[2]))
lc = j["lightcurve"]
assert j["observable"] == "mb" and j["n_data"] == r["n"], (j["observable"], j["n_data"])
for k in ("x1_min", "x1_max", "color_min", "color_max", "mass_min", "mass_max"):
    assert lc[k] == r[k], (k, lc[k], r[k])
assert (lc["n_mass_high"], lc["n_mass_low"], lc["n_mass_placeholder"]) == \
    (r["high"], r["low"], r["placeholder"]), lc
assert lc["groups"] == r["groups"] and lc["n_calibrators"] == 0, lc["groups"]
print("%d objects, %d/%d/%d high/low/placeholder masses, groups %s" %
      (r["n"], r["high"], r["low"], r["placeholder"], r["groups"]))
PY
}

# check_inspect NAME DATA ZMIN: inspect DATA (the light-curve roles, z >=
# ZMIN) against numpy's reading of the JLA file with the same cut
check_inspect() {
    run "$LANTERN" inspect --data "$2" --columns "$COLS" --zmin "$3" --format json
    cp "$OUT" "$E2E_TMP/got.json"
    reference "$3" >"$E2E_TMP/ref.json"
    if [ "$STATUS" -eq 0 ] && msg=$(compare "$E2E_TMP/got.json" "$E2E_TMP/ref.json"); then
        pass "$1 ($msg)"
    else
        fail "$1 ($msg)"
    fi
}
check_inspect "inspect JLA as a light-curve table = numpy's reading" "$J" 0
check_inspect "--zmin 0.5 cuts the light-curve columns with the rows" "$J" 0.5
run "$LANTERN" inspect --data "$J" --columns "$COLS"
if [ "$STATUS" -eq 0 ] && grep -q "^observable peak magnitude mb, to be standardised with x1 and color" "$OUT" &&
   grep -q "^host mass  log10 M from 7.256 to 11.82: 422 at or above 10, 274 below; 44 placeholders (below 7)$" "$OUT" &&
   grep -q "^groups     4: 1 (239), 4 (9), 2 (374), 3 (118)$" "$OUT"; then
    pass "inspect's table shows the mass split, the placeholders and the groups"
else
    fail "inspect's table shows the mass split, the placeholders and the groups"
fi

# The same table as FITS, written by astropy (group labels as text): the
# same numbers.
/usr/bin/python3 - "$J" "$E2E_TMP/jla.fits" <<'PY'
import sys
import numpy as np
from astropy.table import Table
d = np.genfromtxt(sys.argv[1], names=True, dtype=None, encoding=None)
t = Table()
for c in ("name", "zcmb", "zhel", "dz", "mb", "dmb", "x1", "dx1", "color", "dcolor", "3rdvar",
          "d3rdvar", "cov_m_s", "cov_m_c", "cov_s_c"):
    t[c] = d[c]
t["set"] = [str(s) for s in d["set"]]
t.write(sys.argv[2], format="fits", overwrite=True)
PY
check_inspect "the JLA table as FITS (text group labels) reads the same" "$E2E_TMP/jla.fits" 0

# Refusals.
cat >"$E2E_TMP/cal.csv" <<EOF
name,z,mb,dmb,x1,c,cal,mu_ext
a,0.02,15.1,0.1,0.1,0.01,0,0
b,0.03,15.9,0.1,-0.2,0.02,1,33.1
c,0.005,12.0,0.1,0.3,-0.05,1,30.2
EOF
run "$LANTERN" inspect --data "$E2E_TMP/cal.csv" --columns z=z,mb=mb,err_mb=dmb,x1=x1,color=c,calibrator=cal
expect_error "a calibrator without calib_mu: file and line" 2 "cal.csv:3: a calibrator \(column 'cal' is 1\) without calib_mu"
run "$LANTERN" inspect --data "$E2E_TMP/cal.csv" --columns z=z,mb=mb,err_mb=dmb,x1=x1,color=c,calibrator=cal,calib_mu=mu_ext --format json
if [ "$STATUS" -eq 0 ] && /usr/bin/python3 -c '
import json, sys
assert json.load(open(sys.argv[1]))["lightcurve"]["n_calibrators"] == 2' "$OUT"; then
    pass "calibrators with calib_mu are counted"
else
    fail "calibrators with calib_mu are counted"
fi
sed 's/^b,0.03,15.9,0.1,-0.2,0.02,1,/b,0.03,15.9,0.1,-0.2,0.02,2,/' "$E2E_TMP/cal.csv" >"$E2E_TMP/cal2.csv"
run "$LANTERN" inspect --data "$E2E_TMP/cal2.csv" --columns z=z,mb=mb,err_mb=dmb,x1=x1,color=c,calibrator=cal,calib_mu=mu_ext
expect_error "calibrator 2 refused with file and line" 2 "cal2.csv:3: column 'cal' \(calibrator\) is 2: it must be 0 or 1"
cat >"$E2E_TMP/corr.csv" <<EOF
name,z,mb,dmb,x1,dx1,c,dc,cmx
a,0.02,15.1,0.1,0.1,0.2,0.01,0.03,0.001
b,0.03,15.9,0.1,-0.2,0.2,0.02,0.03,0.05
EOF
run "$LANTERN" inspect --data "$E2E_TMP/corr.csv" --columns z=z,mb=mb,err_mb=dmb,x1=x1,err_x1=dx1,color=c,err_color=dc,cov_mb_x1=cmx
expect_error "a covariance beyond its errors' product: file and line" 2 "corr.csv:3: column 'cmx' \(cov_mb_x1\) is 0.05, beyond the product"
run "$LANTERN" inspect --data "$E2E_TMP/corr.csv" --columns z=z,mb=mb,err_mb=dmb,x1=x1,color=c,cov_mb_x1=cmx
expect_error "a covariance without both its errors refused" 2 "--columns: cov_mb_x1 needs err_mb and err_x1 mapped too"
run "$LANTERN" inspect --data "$J" --columns z=zcmb,mb=mb,err_mb=dmb,x1=x1
expect_error "mb without color refused" 2 "a light-curve table \(mb\) needs x1 and color"
run "$LANTERN" inspect --data "$J" --columns z=zcmb,mag=mb,err=dmb,x1=x1
expect_error "a light-curve role with mag refused" 2 "x1 is a light-curve role: it goes with mb"
run "$LANTERN" inspect --data "$J" --columns z=zcmb,mb=mb,err=dmb,x1=x1,color=color
expect_error "err (not err_mb) in a light-curve table refused" 2 "error of mb is err_mb, not err"
run "$LANTERN" fit --data "$J" --columns z=zcmb,mb=mb,err_mb=dmb,x1=x1,color=color --model lcdm-flat --offset marginal
expect_error "a light-curve table's offset cannot be marginalised" 2 "always sampled"
run "$LANTERN" fit --data "$J" --columns z=zcmb,mb=mb,err_mb=dmb,x1=x1,color=color --model lcdm-flat --standardise median
expect_error "an unknown standardisation refused" 2 "--standardise: 'median' is not latent"
run "$LANTERN" fit --data "$ROOT/data/lamplighter/survey.csv" --columns z=z,mag=mag,err=err --model lcdm-flat --standardise chi2
expect_error "--standardise without a light-curve table refused" 2 "apply to a light-curve table"
