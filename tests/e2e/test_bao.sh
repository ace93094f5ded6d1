#!/usr/bin/env bash
# End-to-end tests of the BAO term (--bao, --bao-cov, --rd) on the DESI 2024
# DR1 measurements in ../shared/data/desi2024_bao/ (DESI 2024 III, IV; table
# 1 of DESI 2024 VI; see its SOURCE.md: the means are published, some of the
# covariance is from memory). The references are an independent numpy/scipy
# grid posterior (tests/reference/bao_numpy.py) and the published DESI 2024 VI
# results (quoted from memory in SOURCE.md).
# Tolerance for posterior moments (issue 19): the larger of the stated one
# and 4/sqrt(ESS) sigma.
source "$(dirname "$0")/lib.sh"
B="${LANTERN_SHARED:-$ROOT/../shared}/data/desi2024_bao"
BAO=(--bao "$B/bao_dr1.csv" --bao-cov "$B/bao_dr1_cov.txt")
PY=/usr/bin/python3

# the numpy grids, once
$PY "$ROOT/tests/reference/bao_numpy.py" alone >"$E2E_TMP/ref_alone.json" &&
    $PY "$ROOT/tests/reference/bao_numpy.py" bbn >"$E2E_TMP/ref_bbn.json" ||
    { echo "not ok - the numpy reference grids ran"; exit 1; }

# compare_moments NAME SAMPLE.json REF.json PARAM:TOL... : each posterior
# mean within max(TOL, 4/sqrt(ESS)) of the reference's sd
compare_moments() {
    local name=$1 got=$2 ref=$3
    shift 3
    if msg=$($PY - "$got" "$ref" "$@" <<'EOF'
import json, math, sys
got, ref = json.load(open(sys.argv[1])), json.load(open(sys.argv[2]))
ess = got["convergence"]["ess_min"]
out = []
for spec in sys.argv[3:]:
    name, tol = spec.split(":")
    g, r = got["params"].get(name) or got["derived"][name], ref[name]
    allowed = max(float(tol), 4 / math.sqrt(ess))
    pull = (g["mean"] - r["mean"]) / r["sd"]
    out.append(f"{name} {g['mean']:.5g} +- {g['sd']:.4g} vs {r['mean']:.5g} +- {r['sd']:.4g} "
               f"({pull:+.3f} sd, allowed {allowed:.3f})")
    assert abs(pull) <= allowed, out[-1]
    # the sd within its Monte Carlo error, 4/sqrt(2 ESS) relative, or 3%
    assert abs(g["sd"] / r["sd"] - 1) <= max(0.03, 4 / math.sqrt(2 * ess)), out[-1]
print("; ".join(out))
EOF
    ); then pass "$name: $msg"; else fail "$name: $msg"; fi
}

# ---- the acceptance command: DESI BAO alone, flat LCDM, r_d free ----
run "$LANTERN" sample "${BAO[@]}" --model lcdm-flat --rd free --format json --quiet \
    --target-ess 4000
cp "$OUT" "$E2E_TMP/alone.json"
if [ "$STATUS" -eq 0 ] && $PY -c '
import json, sys
p = json.load(open(sys.argv[1]))["params"]
assert abs(p["omega_m"]["mean"] - 0.2951) < 0.003 and abs(p["rd_h"]["mean"] - 101.88) < 0.26, p
' "$OUT"; then pass "acceptance: BAO alone, omega_m within 0.003 of 0.2951 and rd_h within 0.26 of 101.88"
else fail "acceptance: BAO alone, omega_m within 0.003 of 0.2951 and rd_h within 0.26 of 101.88"; fi
compare_moments "BAO alone = numpy grid within 0.1 sd" "$E2E_TMP/alone.json" \
    "$E2E_TMP/ref_alone.json" omega_m:0.1 rd_h:0.1
# DESI 2024 VI (from memory, SOURCE.md): 0.295 +- 0.015, 101.8 +- 1.3
printf '{"omega_m": {"mean": 0.295, "sd": 0.015}, "rd_h": {"mean": 101.8, "sd": 1.3}}\n' \
    >"$E2E_TMP/desi.json"
compare_moments "BAO alone = DESI 2024 VI within 0.2 sd" "$E2E_TMP/alone.json" \
    "$E2E_TMP/desi.json" omega_m:0.2 rd_h:0.2

# the best fit: the grid's profile minimum (bao_numpy.py)
run "$LANTERN" fit "${BAO[@]}" --model lcdm-flat --rd free --format json
if [ "$STATUS" -eq 0 ] && msg=$($PY -c '
import json, sys
g, r = json.load(open(sys.argv[1])), json.load(open(sys.argv[2]))
b = g["params"]
om, rdh = b["omega_m"]["best"], b["rd_h"]["best"]
print("omega_m %.5f, rd_h %.4f, chi2_min %.4f" % (om, rdh, g["chi2_min"]))
assert abs(b["omega_m"]["best"] - r["best"]["omega_m"]) < 1e-4, b
assert abs(b["rd_h"]["best"] - r["best"]["rd_h"]) < 1e-3, b
assert abs(g["chi2_min"] - r["chi2_min"]) < 1e-6 and g["n_data"] == 12 and g["dof"] == 10, g
assert "h0" not in b, "h0 is not sampled with --rd free (r_d h is)"
' "$OUT" "$E2E_TMP/ref_alone.json"); then pass "fit BAO alone = numpy best fit ($msg)"
else fail "fit BAO alone = numpy best fit"; fi

# ---- DESI BAO + BBN, r_d from Aubourg et al. 2015 ----
run "$LANTERN" sample "${BAO[@]}" --model lcdm-flat --measure omega_b_h2=0.02218:0.00055 \
    --format json --quiet --target-ess 4000
cp "$OUT" "$E2E_TMP/bbn.json"
compare_moments "BAO + BBN = numpy grid within 0.1 sd" "$E2E_TMP/bbn.json" \
    "$E2E_TMP/ref_bbn.json" h0:0.1 omega_m:0.1
# the derived r_d and r_d h (Aubourg et al. 2015 eq. 16 on the same grid)
compare_moments "BAO + BBN: derived r_d and r_d h = numpy grid within 0.1 sd" "$E2E_TMP/bbn.json" \
    "$E2E_TMP/ref_bbn.json" rd:0.1 rd_h:0.1
# DESI 2024 VI's DESI+BBN H0 = 68.53 +- 0.80 (from memory): a sanity range
$PY -c '
import json, sys
h = json.load(open(sys.argv[1]))["params"]["h0"]
print("# BAO + BBN: H0 = %.2f +- %.2f; DESI 2024 VI (from memory) 68.53 +- 0.80"
      % (h["mean"], h["sd"]))
' "$E2E_TMP/bbn.json"
if $PY -c '
import json, sys
j = json.load(open(sys.argv[1]))
f = j["fixed"]
assert f["t_cmb"] == 2.7255 and f["m_nu"] == 0.06 and f["n_eff"] == 3.046, f
assert set(j["params"]) == {"h0", "omega_m", "omega_b_h2"}, j["params"].keys()
assert j["params"]["omega_b_h2"]["prior"] == "U(0.005, 0.1)"
' "$E2E_TMP/bbn.json"; then pass "r_d from the formula turns radiation on (t_cmb 2.7255, one 0.06 eV neutrino) and frees h0 and omega_b_h2"
else fail "r_d from the formula turns radiation on (t_cmb 2.7255, one 0.06 eV neutrino) and frees h0 and omega_b_h2"; fi

# ---- interrupted and resumed: the BAO files come back from settings.ini ----
LONG=(--model lcdm-flat --measure omega_b_h2=0.02218:0.00055 --target-ess 40000 --seed 4
      --threads 2 --quiet)
run "$LANTERN" sample "${BAO[@]}" "${LONG[@]}" --out "$E2E_TMP/full"
expect_status "a long BAO + BBN run" 0
interrupt "$E2E_TMP/cut" "$LANTERN" sample "${BAO[@]}" "${LONG[@]}" --out "$E2E_TMP/cut"
grep -q "^bao = .*bao_dr1.csv$" "$E2E_TMP/cut/checkpoint/settings.ini" &&
    grep -q "^bao_cov = .*bao_dr1_cov.txt$" "$E2E_TMP/cut/checkpoint/settings.ini" &&
    pass "settings.ini keeps the BAO files" || fail "settings.ini keeps the BAO files"
run "$LANTERN" sample --resume "$E2E_TMP/cut" --quiet
if [ "$STATUS" -eq 0 ] && cmp -s "$E2E_TMP/full/chains.csv" "$E2E_TMP/cut/chains.csv" &&
   cmp -s "$E2E_TMP/full/summary.json" "$E2E_TMP/cut/summary.json"; then
    pass "BAO: --resume ends with the uninterrupted run's chains and summary"
else
    fail "BAO: --resume ends with the uninterrupted run's chains and summary"
fi

# ---- the data digest names the probes: a report compares only the same data ----
run "$LANTERN" fit --measure omega_b_h2=0.02218:0.00055 --model lcdm-flat \
    --measure h0=70:1 --format json
cp "$OUT" "$E2E_TMP/meas.json"
run "$LANTERN" fit "${BAO[@]}" --measure omega_b_h2=0.02218:0.00055 --model lcdm-flat \
    --measure h0=70:1 --format json
cp "$OUT" "$E2E_TMP/meas_bao.json"
run "$LANTERN" fit "${BAO[@]}" --measure omega_b_h2=0.02218:0.00055 --model lcdm-flat \
    --measure h0=70:1 --format json
if $PY -c '
import json, sys
d = [json.load(open(f))["data"]["digest"] for f in sys.argv[1:]]
assert d[0] != d[1] and d[1] == d[2], d
' "$E2E_TMP/meas.json" "$E2E_TMP/meas_bao.json" "$OUT"; then
    pass "the data digest changes with a BAO term and not otherwise"
else fail "the data digest changes with a BAO term and not otherwise"; fi

# ---- every term together ----
P="${LANTERN_SHARED:-$ROOT/../shared}/data/pantheon2018"
run "$LANTERN" fit --data "$P/lcparam_DS17f.txt" --columns z=zcmb,zhel=zhel,mag=mb,err=dmb \
    --cov "$P/sys_DS17f.txt" "${BAO[@]}" --measure omega_b_h2=0.02218:0.00055 \
    --model w0wa-flat --format json
if [ "$STATUS" -eq 0 ] && $PY -c '
import json, sys
j = json.load(open(sys.argv[1]))
assert j["n_data"] == 40 + 12 + 1, j["n_data"]
assert {"h0", "omega_m", "w0", "wa", "omega_b_h2"} <= set(j["params"]), j["params"].keys()
assert j["params"]["w0"]["best"] + j["params"]["wa"]["best"] < 0
' "$OUT"; then pass "fit takes --data, --bao and --measure together (53 data points)"
else fail "fit takes --data, --bao and --measure together (53 data points)"; fi

# ---- rd_fid: the same measurements quoted as D (rd_fid / r_d) in Mpc ----
# Re-expressed by hand (rows times rd_fid, the covariance times rd_fid_i
# rd_fid_j: an exact change of units), the DESI table must give the same
# best fit and chi2, with r_d from its formula and with --rd free.
/usr/bin/python3 - "$B" "$E2E_TMP" <<'EOF'
import sys
import numpy as np
b, t = sys.argv[1], sys.argv[2]
lines = open(b + "/bao_dr1.csv").read().splitlines()
head = lines[0].split(",")
iv = head.index("value")
fid = [147.78 if k % 2 else 150.0 for k in range(len(lines) - 1)]
with open(t + "/fid.csv", "w") as f:
    f.write(lines[0] + ",rd_fid\n")
    for k, l in enumerate(lines[1:]):
        c = l.split(",")
        c[iv] = repr(float(c[iv]) * fid[k])
        f.write(",".join(c) + ",%r\n" % fid[k])
cov = np.loadtxt(b + "/bao_dr1_cov.txt", skiprows=1)
cov = cov * np.outer(fid, fid)
with open(t + "/fid_cov.txt", "w") as f:
    f.write("%d\n" % len(fid))
    for row in cov:
        f.write(" ".join(repr(x) for x in row) + "\n")
EOF
for rd in formula free; do
    run "$LANTERN" fit "${BAO[@]}" --model lcdm-flat --rd $rd --measure omega_b_h2=0.02218:0.00055 \
        --format json
    cp "$OUT" "$E2E_TMP/plain_$rd.json"
    run "$LANTERN" fit --bao "$E2E_TMP/fid.csv" --bao-cov "$E2E_TMP/fid_cov.txt" --model lcdm-flat \
        --rd $rd --measure omega_b_h2=0.02218:0.00055 --format json
    cp "$OUT" "$E2E_TMP/fid_$rd.json"
    if msg=$(/usr/bin/python3 - "$E2E_TMP/plain_$rd.json" "$E2E_TMP/fid_$rd.json" 2>&1 <<'EOF'
import json, sys
a, b = (json.load(open(f)) for f in sys.argv[1:3])
assert abs(a["chi2_min"] - b["chi2_min"]) < 1e-6 * max(1, a["chi2_min"]), (a["chi2_min"], b["chi2_min"])
for k, v in a["params"].items():
    assert abs(v["best"] - b["params"][k]["best"]) < 1e-4 * v["sd"], (k, v["best"], b["params"][k]["best"])
print("chi2_min %.6f and %.6f" % (a["chi2_min"], b["chi2_min"]))
EOF
    ); then pass "rd_fid rows (D rd_fid/r_d in Mpc) give the plain table's fit, r_d $rd ($msg)"
    else fail "rd_fid rows (D rd_fid/r_d in Mpc) give the plain table's fit, r_d $rd ($msg)"; fi
done
printf 'z,quantity,value,err,rd_fid\n0.106,rd_over_dv,0.336,0.015,154.66\n' >"$E2E_TMP/old.csv"
run "$LANTERN" fit --bao "$E2E_TMP/old.csv" --model lcdm-flat --rd free
expect_error "rd_fid on an r_s/D_V row is refused with the conversion to do" 2 \
    "old.csv:2: rd_fid applies to the distances over r_d .*multiply it by r_d/r_s"

# ---- derived r_d only where it is the formula's ----
# With --rd free the BAO term's r_d is rd_h / h, not Aubourg's formula: no
# derived rd or rd_h beside the sampled rd_h (the CMB brings h0 and omega_b_h2)
run "$LANTERN" fit "${BAO[@]}" --rd free --cmb "$B/../cmb_distance_priors/planck2018_priors.csv" \
    --cmb-cov "$B/../cmb_distance_priors/planck2018_priors_cov.txt" --model lcdm-flat --format json
if [ "$STATUS" -eq 0 ] && $PY -c '
import json, sys
j = json.load(open(sys.argv[1]))
assert "rd_h" in j["params"] and "rd_h" not in j["derived"] and "rd" not in j["derived"], j["derived"]
' "$OUT"; then pass "--rd free with the CMB: rd_h sampled, no derived rd or rd_h beside it"
else fail "--rd free with the CMB: rd_h sampled, no derived rd or rd_h beside it"; fi
run "$LANTERN" fit "${BAO[@]}" --rd free --model lcdm-flat --measure rd=147.1:0.3
expect_error "a measurement of r_d where nothing defines it is refused" 2 \
    "--measure: rd is not defined here: .*with --rd free measure rd_h"

# ---- refusals ----
printf 'z,quantity,value,err\n0.5,dm_over_rd,13.0,0.2\n0.7,d_m,16.0,0.3\n' >"$E2E_TMP/bad.csv"
run "$LANTERN" fit --bao "$E2E_TMP/bad.csv" --model lcdm-flat --rd free
expect_error "an unknown quantity names the file and line" 2 "bad.csv:3: unknown BAO quantity 'd_m'"
printf 'z,quantity,value\n0.5,dm_over_rd,13.0\n' >"$E2E_TMP/noerr.csv"
run "$LANTERN" fit --bao "$E2E_TMP/noerr.csv" --model lcdm-flat --rd free
expect_error "no err column and no covariance" 2 "noerr.csv: no err column and no covariance file"
run "$LANTERN" fit --bao "$E2E_TMP/noerr.csv" --bao-cov "$B/bao_dr1_cov.txt" --model lcdm-flat --rd free
expect_error "a covariance of the wrong size" 2 "bao_dr1_cov.txt: a 12 x 12 covariance for the 1 measurements"
printf 'z,quantity,value,err\n0.5,dm_over_rd,abc,0.2\n' >"$E2E_TMP/nan.csv"
run "$LANTERN" fit --bao "$E2E_TMP/nan.csv" --model lcdm-flat --rd free
expect_error "a value that is no number" 2 "nan.csv:2: value 'abc' is not a finite number"
run "$LANTERN" fit --bao-cov "$B/bao_dr1_cov.txt" --model lcdm-flat --measure h0=70:1
expect_error "--bao-cov needs --bao" 2 "--bao-cov: needs a BAO file"
printf '[data]\nbao_cov = x.txt\nrd = fre\n[model]\nname = lcdm-flat\n' >"$E2E_TMP/rd.ini"
run "$LANTERN" fit "$E2E_TMP/rd.ini"
expect_error "a run file's bad rd names the file and line" 2 "rd.ini:3: rd = 'fre' is not free"
printf '[data]\nbao_cov = x.txt\n[model]\nname = lcdm-flat\n[measurements]\nh0 = 70:1\n' \
    >"$E2E_TMP/cov.ini"
run "$LANTERN" fit "$E2E_TMP/cov.ini"
expect_error "a run file's bao_cov without bao names the file and line" 2 "cov.ini:2: bao_cov needs a BAO file"
run "$LANTERN" fit --rd formula --measure h0=70:1 --model lcdm-flat
expect_error "--rd without a BAO term" 2 "--rd: applies to a BAO term"
run "$LANTERN" fit "${BAO[@]}" --model lcdm-flat --rd fixed
expect_error "--rd takes free or formula" 2 "--rd: 'fixed' is not free"
run "$LANTERN" fit "${BAO[@]}" --model lcdm-flat --prior rd_h=uniform:90:110
expect_error "rd_h only with --rd free" 2 "rd_h \(r_d h\) is a parameter only of BAO with --rd free"
run "$LANTERN" fit "${BAO[@]}" --model lcdm-flat --rd free --prior omega_b_h2=uniform:0.01:0.03
expect_error "omega_b_h2 where nothing reads it" 2 "nothing here reads omega_b_h2"
run "$LANTERN" fit "${BAO[@]}" --model lcdm-flat --fix n_eff=3.3
expect_error "the r_d formula refuses another n_eff" 2 "holds for n_eff = 3.046 only"
run "$LANTERN" fit "${BAO[@]}" --model lcdm-flat --fix t_cmb=0
expect_error "the r_d formula needs radiation" 2 "radiation cannot be off"
