#!/usr/bin/env bash
# End-to-end tests of calibrators and H0 (issue 21): a simulated light-curve
# table (tests/reference/helpers/calibrators_gls.py: 40 calibrators with external
# distance moduli, 300 Hubble-flow objects, 12 low-redshift objects that
# --zmin 0.015 must drop) fitted with omega_m, alpha, beta and sigma_int
# fixed, where M and H0 have the closed-form generalised-least-squares
# solution the script prints (and, read as standardised magnitudes, its
# own): the best fits within 1e-3 of their sigma,
# the Laplace sigmas within 0.5%, the H0-M correlation within 0.005;
# calibrators kept by the redshift cut; placeholders in the calibrator
# columns of other rows; refusals with file and line.
source "$(dirname "$0")/lib.sh"
T="$E2E_TMP/cal.csv"
COLS="z=z,mb=mb,err_mb=dmb,x1=x1,err_x1=dx1,color=c,err_color=dc,calibrator=cal,calib_mu=mu_ext,err_calib_mu=dmu_ext,id=name"
FIX=(--model lcdm-flat --fix omega_m=0.3 --fix alpha=0 --fix beta=0 --fix sigma_int=0.1
     --velocity-dispersion 0 --zmin 0.015)

/usr/bin/python3 "$ROOT/tests/reference/helpers/calibrators_gls.py" "$T" >"$E2E_TMP/ref.json" 2>"$E2E_TMP/ref.err"
if [ $? -eq 0 ]; then pass "the GLS reference ran"; else STATUS=1; cp "$E2E_TMP/ref.err" "$ERR"; : >"$OUT"; fail "the GLS reference ran"; fi

run "$LANTERN" fit --data "$T" --columns "$COLS" "${FIX[@]}" --format json
expect_status "fit with calibrators" 0
if /usr/bin/python3 - "$OUT" "$E2E_TMP/ref.json" <<'PY'
import json, sys
j, r = json.load(open(sys.argv[1])), json.load(open(sys.argv[2]))
p = j["params"]
print("# H0 lantern %.5f +- %.5f, GLS %.5f +- %.5f (true %g)" % (
    p["h0"]["best"], p["h0"]["sd"], r["h0"], r["sd_h0"], r["h0_true"]))
print("# M  lantern %.6f +- %.6f, GLS %.6f +- %.6f (true %g)" % (
    p["offset"]["best"], p["offset"]["sd"], r["M"], r["sd_M"], r["M_true"]))
cal = j["calibrators"]
print("# correlation lantern %.5f, GLS %.5f" % (cal["h0_offset_correlation"], r["corr"]))
ok = (abs(p["h0"]["best"] - r["h0"]) < 1e-3 * r["sd_h0"]
      and abs(p["offset"]["best"] - r["M"]) < 1e-3 * r["sd_M"]
      and abs(p["h0"]["sd"] / r["sd_h0"] - 1) < 0.005
      and abs(p["offset"]["sd"] / r["sd_M"] - 1) < 0.005
      and abs(cal["h0_offset_correlation"] - r["corr"]) < 0.005
      and cal["n"] == r["n_cal"] and j["standardisation"]["n_objects"] == r["n_kept"]
      and j["observable"] == "mb")
sys.exit(0 if ok else 1)
PY
then pass "H0, M and their correlation match the closed-form GLS solution; calibrators survive --zmin"; else fail "H0, M and their correlation match the closed-form GLS solution; calibrators survive --zmin"; fi

run "$LANTERN" fit --data "$T" --columns "$COLS" "${FIX[@]}"
if [ "$STATUS" -eq 0 ] && grep -q "calibrators: 40 external distances set M, so H0 is measured: H0 = 71.09 +- 0.91" "$OUT"; then
    pass "the text report gives H0, M and their correlation"
else fail "the text report gives H0, M and their correlation"; fi

# the calibrators' covariance as a file of its own (their errors plus a
# shared 0.02 mag anchor) instead of err_calib_mu, against the GLS with
# the full matrix
CALCOLS="z=z,mb=mb,err_mb=dmb,x1=x1,err_x1=dx1,color=c,err_color=dc,calibrator=cal,calib_mu=mu_ext,id=name"
run "$LANTERN" fit --data "$T" --columns "$CALCOLS" --calib-cov "$T.calib_cov.txt" "${FIX[@]}" --format json
if [ "$STATUS" -eq 0 ] && /usr/bin/python3 - "$OUT" "$E2E_TMP/ref.json" <<'PY'
import json, sys
j, r = json.load(open(sys.argv[1])), json.load(open(sys.argv[2]))["calib_cov"]
p = j["params"]
print("# calib_cov: H0 lantern %.5f +- %.5f, GLS %.5f +- %.5f" % (
    p["h0"]["best"], p["h0"]["sd"], r["h0"], r["sd_h0"]))
sys.exit(0 if (abs(p["h0"]["best"] - r["h0"]) < 1e-3 * r["sd_h0"]
               and abs(p["offset"]["best"] - r["M"]) < 1e-3 * r["sd_M"]
               and abs(p["h0"]["sd"] / r["sd_h0"] - 1) < 0.005
               and abs(p["offset"]["sd"] / r["sd_M"] - 1) < 0.005) else 1)
PY
then pass "a calibrators' covariance file (--calib-cov) matches the GLS solution with the full matrix"
else fail "a calibrators' covariance file (--calib-cov) matches the GLS solution with the full matrix"; fi
{ echo 3; echo "1 0 0"; echo "0 1 0"; echo "0 0 1"; } >"$E2E_TMP/k3.txt"
run "$LANTERN" fit --data "$T" --columns "$CALCOLS" --calib-cov "$E2E_TMP/k3.txt" "${FIX[@]}"
expect_error "a calibrators' covariance of the wrong size: file and line" 2 "k3.txt:1: the matrix is 3 x 3 but the table .* has 40 calibrators"

# the same table as standardised magnitudes (mag = mb): mag - M = calib_mu
# for calibrators, the offset sampled, against the GLS with err^2 (+
# err_calib_mu^2) weights
MAGCOLS="z=z,mag=mb,err=dmb,calibrator=cal,calib_mu=mu_ext,err_calib_mu=dmu_ext,id=name"
run "$LANTERN" fit --data "$T" --columns "$MAGCOLS" --model lcdm-flat --fix omega_m=0.3 --zmin 0.015 --format json
if [ "$STATUS" -eq 0 ] && /usr/bin/python3 - "$OUT" "$E2E_TMP/ref.json" <<'PY'
import json, sys
j, r = json.load(open(sys.argv[1])), json.load(open(sys.argv[2]))["mag"]
p = j["params"]
print("# mag: H0 lantern %.5f +- %.5f, GLS %.5f +- %.5f; M lantern %.6f, GLS %.6f" % (
    p["h0"]["best"], p["h0"]["sd"], r["h0"], r["sd_h0"], p["offset"]["best"], r["M"]))
ok = (abs(p["h0"]["best"] - r["h0"]) < 1e-3 * r["sd_h0"]
      and abs(p["offset"]["best"] - r["M"]) < 1e-3 * r["sd_M"]
      and abs(p["h0"]["sd"] / r["sd_h0"] - 1) < 0.005
      and abs(p["offset"]["sd"] / r["sd_M"] - 1) < 0.005
      and abs(j["calibrators"]["h0_offset_correlation"] - r["corr"]) < 0.005
      and j["offset"]["mode"] == "sampled" and j["n_data"] == r["n_kept"])
sys.exit(0 if ok else 1)
PY
then pass "standardised magnitudes with calibrators: H0 and M match the closed-form GLS solution"
else fail "standardised magnitudes with calibrators: H0 and M match the closed-form GLS solution"; fi
run "$LANTERN" fit --data "$T" --columns "$MAGCOLS" --model lcdm-flat --offset marginal
expect_error "calibrators refuse a marginalised offset" 2 "the table has 40 calibrators, which measure the offset \(M\): it is sampled, not marginal"
run "$LANTERN" inspect --data "$T" --columns "$MAGCOLS"
if [ "$STATUS" -eq 0 ] && grep -q "^calibrators 40" "$OUT"; then
    pass "inspect counts a standardised table's calibrators"
else fail "inspect counts a standardised table's calibrators"; fi
run "$LANTERN" fit --data "$T" --columns "z=z,mu=mb,err=dmb,calibrator=cal,calib_mu=mu_ext" --model lcdm-flat
expect_error "calibrators refused for distance moduli" 2 "calibrator is a calibrators' role: it goes with mb \(light curves\) or mag"

# a calibrator whose calib_mu is a placeholder: file and line
awk -F, 'NR == 4 {$10 = "nan"} {print}' OFS=, "$T" >"$E2E_TMP/bad.csv"
run "$LANTERN" fit --data "$E2E_TMP/bad.csv" --columns "$COLS" "${FIX[@]}"
expect_error "a calibrator with a placeholder calib_mu: file and line" 2 "bad.csv:4: a calibrator \(column 'cal' is 1\) whose calib_mu \(column 'mu_ext'\) is a placeholder"
# a placeholder in an ordinary column is still refused
awk -F, 'NR == 60 {$3 = "nan"} {print}' OFS=, "$T" >"$E2E_TMP/bad2.csv"
run "$LANTERN" fit --data "$E2E_TMP/bad2.csv" --columns "$COLS" "${FIX[@]}"
expect_error "nan in mb refused with file and line" 2 "bad2.csv:60: column 'mb' \(mb\): 'nan' is not a finite number"
exit 0
