#!/usr/bin/env bash
# End-to-end tests of the standardisation (issue 21) on the JLA release
# file (../shared/data/jla2014; Betoule et al. 2014, A&A 568, A22): the
# fit of flat LCDM with alpha, beta, the host-mass step, a sigma_int per
# sample, 150 km/s of peculiar velocities and lensing 0.055 z, by both
# likelihoods, against an independent numpy/scipy implementation of the
# same likelihoods (tests/reference/helpers/jla_standardise_numpy.py): best fits
# within 0.05 of the reference's Laplace sigma, the sigmas within 1%, a
# sigma_int at 0 reported as a one-sided limit, the chi2 method's tuned
# sigma_int. The published values are printed beside them for the reader;
# they are no tolerance, since the file lacks the systematic covariance.
source "$(dirname "$0")/lib.sh"
J="${LANTERN_SHARED:-$ROOT/../shared}/data/jla2014/jla_lcparams.txt"
COLS="z=zcmb,zhel=zhel,mb=mb,err_mb=dmb,x1=x1,err_x1=dx1,color=color,err_color=dcolor,mass=3rdvar,cov_mb_x1=cov_m_s,cov_mb_color=cov_m_c,cov_x1_color=cov_s_c,dz=dz,group=set,id=name"

/usr/bin/python3 "$ROOT/tests/reference/helpers/jla_standardise_numpy.py" "$J" >"$E2E_TMP/ref.json" 2>"$E2E_TMP/ref.err"
if [ $? -eq 0 ]; then pass "the numpy reference ran"; else STATUS=1; cp "$E2E_TMP/ref.err" "$ERR"; : >"$OUT"; fail "the numpy reference ran"; fi

echo "# published (Betoule et al. 2014, with the systematic covariance the file lacks; SOURCE.md):"
echo "#   Omega_m 0.295 +- 0.034, alpha 0.141 +- 0.006, beta 3.101 +- 0.075, Delta_M -0.070 +- 0.023"

# compare LANTERN_JSON METHOD: the fit against the reference's same method
compare() {
    /usr/bin/python3 - "$1" "$E2E_TMP/ref.json" "$2" <<'PY'
import json, sys
j, ref, method = json.load(open(sys.argv[1])), json.load(open(sys.argv[2])), sys.argv[3]
r = ref[method]
bad = []
for name, rp in r["params"].items():
    p = j["params"][name]
    if rp.get("at_bound"):
        # a scatter at 0: held at the edge, a one-sided limit, no sigma
        if not (p["best"] == 0.0 and p["sd"] is None and p.get("edge") == "lower"
                and p.get("limit95") and p["limit95"] > 0):
            bad.append((name, p))
        continue
    pull = (p["best"] - rp["best"]) / rp["sd"]
    rel = p["sd"] / rp["sd"] - 1
    print("# %-14s lantern %.6f +- %.6f  numpy %.6f +- %.6f  (%.3f sigma)"
          % (name, p["best"], p["sd"], rp["best"], rp["sd"], pull))
    if abs(pull) > 0.05 or abs(rel) > 0.01:
        bad.append((name, pull, rel))
if method == "chi2":
    tuned = j["standardisation"]["tuned_sigma_int"]
    for g, v in r["sigma_int"].items():
        got = tuned["sigma_int@" + g]
        print("# sigma_int@%s tuned: lantern %.6f numpy %.6f" % (g, got, v))
        if abs(got - v) > 1e-4:
            bad.append(("sigma_int@" + g, got, v))
    if abs(j["chi2_min"] - r["chi2"]) > 1e-3 * r["chi2"]:
        bad.append(("chi2", j["chi2_min"], r["chi2"]))
else:
    if abs(j["chi2_min"] - r["chi2"]) > 1e-3:
        bad.append(("chi2 (the quadratic forms)", j["chi2_min"], r["chi2"]))
if bad:
    print(bad)
    sys.exit(1)
PY
}

run "$LANTERN" fit --data "$J" --columns "$COLS" --model lcdm-flat --format json
cp "$OUT" "$E2E_TMP/latent.json"
if [ "$STATUS" -eq 0 ] && compare "$E2E_TMP/latent.json" latent; then
    pass "JLA, latent likelihood: the fit agrees with numpy (best within 0.05 sigma, sigma within 1%)"
else
    fail "JLA, latent likelihood: the fit agrees with numpy"
fi

run "$LANTERN" fit --data "$J" --columns "$COLS" --model lcdm-flat --standardise chi2 --format json
cp "$OUT" "$E2E_TMP/chi2.json"
if [ "$STATUS" -eq 0 ] && compare "$E2E_TMP/chi2.json" chi2; then
    pass "JLA, chi2 method: the fit and the tuned sigma_int agree with numpy"
else
    fail "JLA, chi2 method: the fit and the tuned sigma_int agree with numpy"
fi

# the table says what the JSON says: limits as '<', the tuned scatter, the method
run "$LANTERN" fit --data "$J" --columns "$COLS" --model lcdm-flat
if [ "$STATUS" -eq 0 ] && grep -qE "^  sigma_int@1 +0 +< 0\.[0-9]+ +U\(0, 1\)" "$OUT" &&
    grep -q "standardisation: latent likelihood, per-group scatter, host-mass step at 10, peculiar velocities 150 km/s" "$OUT"; then
    pass "the fit table shows a scatter at 0 as a limit and names the standardisation"
else
    fail "the fit table shows a scatter at 0 as a limit and names the standardisation"
fi

# a per-group prior in a run file: a known group is taken, an unknown one
# is refused with the file and line, naming the parameters there are
cat >"$E2E_TMP/groups.ini" <<INI
[data]
file = $J
columns = $COLS
[model]
name = lcdm-flat
[priors]
sigma_int@7 = uniform:0:0.5
INI
run "$LANTERN" fit "$E2E_TMP/groups.ini"
expect_error "an unknown group in a per-group prior: file and line" 2 "groups.ini:7: this standardisation \(latent, per-group scatter\) has no parameter 'sigma_int@7'; it has alpha, beta, gamma, sigma_int@1"
sed -i 's/^sigma_int@7 = .*/x1_sd@4 = uniform:0:7/' "$E2E_TMP/groups.ini"
run "$LANTERN" fit "$E2E_TMP/groups.ini" --format json
if [ "$STATUS" -eq 0 ] && grep -q '"prior":	"U(0, 7)"' "$OUT"; then
    pass "a per-group prior in a run file applies to its group"
else fail "a per-group prior in a run file applies to its group"; fi
