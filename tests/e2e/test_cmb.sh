#!/usr/bin/env bash
# End-to-end tests of the CMB distance-prior term (--cmb, --cmb-cov) and of
# the probes combined. The CMB file is ../shared/data/cmb_distance_priors/
# (Planck 2018 distance priors, values FROM MEMORY and l_A in doubt: see its
# SOURCE.md; these tests use it to exercise the code against independent
# computations, not to check the published numbers). References: an
# independent numpy computation of R and l_A (tests/reference/cmb_numpy.py,
# Hu & Sugiyama 1996 z_*, the baryon-photon sound horizon).
source "$(dirname "$0")/lib.sh"
S="${LANTERN_SHARED:-$ROOT/../shared}/data"
CMB=(--cmb "$S/cmb_distance_priors/planck2018_priors.csv"
     --cmb-cov "$S/cmb_distance_priors/planck2018_priors_cov.txt")
BAO=(--bao "$S/desi2024_bao/bao_dr1.csv" --bao-cov "$S/desi2024_bao/bao_dr1_cov.txt")
SN=(--data "$S/pantheon2018/lcparam_DS17f.txt" --columns z=zcmb,zhel=zhel,mag=mb,err=dmb
    --cov "$S/pantheon2018/sys_DS17f.txt")
PY=/usr/bin/python3

# ---- the term's chi2 against numpy at lantern's best fit ----
run "$LANTERN" fit "${CMB[@]}" --model lcdm-flat --format json
cp "$OUT" "$E2E_TMP/cmb_fit.json"
if [ "$STATUS" -eq 0 ] && msg=$(cd "$ROOT/tests/reference" && $PY - "$E2E_TMP/cmb_fit.json" \
    "$S/cmb_distance_priors" <<'EOF'
import json, sys
import numpy as np
import cmb_numpy as cn
j = json.load(open(sys.argv[1]))
p = {k: v["best"] for k, v in j["params"].items()}
assert set(p) == {"h0", "omega_m", "omega_b_h2"}, p
assert j["fixed"]["t_cmb"] == 2.7255 and j["fixed"]["m_nu"] == 0.06, j["fixed"]
q = cn.cmb_quantities("lcdm-flat", p)
rows = [l.strip().split(",") for l in open(sys.argv[2] + "/planck2018_priors.csv")][1:]
obs = {name: float(v) for name, v in rows}
pred = {"shift_r": q["shift_r"], "acoustic_l": q["acoustic_l"], "omega_b_h2": p["omega_b_h2"]}
cov = np.loadtxt(sys.argv[2] + "/planck2018_priors_cov.txt", skiprows=1)
r = np.array([obs[n] - pred[n] for n, _ in rows])
chi2 = float(r @ np.linalg.solve(cov, r))
print("chi2_min %.6g (numpy %.6g at the same point), n_data %d" % (j["chi2_min"], chi2, j["n_data"]))
assert abs(j["chi2_min"] - chi2) < 1e-6 * max(1.0, chi2) and j["n_data"] == 3, (j["chi2_min"], chi2)
# three data, three free parameters: the best fit meets every datum
assert chi2 < 1e-6, chi2
EOF
); then pass "CMB alone: chi2 at the best fit = numpy's ($msg)"
else fail "CMB alone: chi2 at the best fit = numpy's ($msg)"; fi

# a z column gives z_* (here 1089.92, a Boltzmann-code value) instead of the
# formula's; the omega_b_h2 row leaves it empty
printf 'quantity,value,err,z\nshift_r,1.7502,0.0046,1089.92\nacoustic_l,301.471,0.09,1089.92\nomega_b_h2,0.02236,0.00015,\n' \
    >"$E2E_TMP/zstar.csv"
run "$LANTERN" fit --cmb "$E2E_TMP/zstar.csv" --model lcdm-flat --fix omega_b_h2=0.02236 \
    --fix h0=67.4 --format json
cp "$OUT" "$E2E_TMP/zstar.json"
if [ "$STATUS" -eq 0 ] && msg=$(cd "$ROOT/tests/reference" && $PY - "$E2E_TMP/zstar.json" <<'EOF'
import json, sys
import cmb_numpy as cn
j = json.load(open(sys.argv[1]))
om = j["params"]["omega_m"]["best"]
p = {"h0": 67.4, "omega_m": om, "omega_b_h2": 0.02236, "m_nu": 0.06, "t_cmb": cn.T_CMB,
     "n_eff": cn.N_EFF}
bg = cn.Background("lcdm-flat", p)
zs = 1089.92
rs = cn.r_s(zs, bg, 67.4, 0.02236)
r = (1.7502 - cn.shift_r(bg, 67.4, zs)) / 0.0046
la = (301.471 - cn.acoustic_l(bg, 67.4, zs, rs)) / 0.09
chi2 = r * r + la * la
print("omega_m %.5f, chi2_min %.6g (numpy %.6g with z_* = 1089.92)" % (om, j["chi2_min"], chi2))
assert abs(j["chi2_min"] - chi2) < 1e-6 * max(1, chi2), (j["chi2_min"], chi2)
EOF
); then pass "a z column sets z_*: chi2 = numpy's at z_* = 1089.92 ($msg)"
else fail "a z column sets z_*: chi2 = numpy's at z_* = 1089.92 ($msg)"; fi

# ---- the probes combined: flat w0-wa ----
# Each probe added may only narrow omega_m (sd_combined <= sd_alone (1 +
# 4/sqrt(2 ESS)), the Monte Carlo error of an sd); all three converge. BAO
# comes with BBN's omega_b h^2 (DESI 2024 VI, from memory): with r_d from
# the formula and nothing else on omega_b h^2, h0 and omega_b_h2 would only
# be known along a ridge through their priors.
BBN=(--measure omega_b_h2=0.02218:0.00055)
for combo in sn sn_bao sn_bao_cmb; do
    case $combo in
    sn) args=("${SN[@]}") ;;
    sn_bao) args=("${SN[@]}" "${BAO[@]}" "${BBN[@]}") ;;
    sn_bao_cmb) args=("${SN[@]}" "${BAO[@]}" "${BBN[@]}" "${CMB[@]}") ;;
    esac
    run "$LANTERN" sample "${args[@]}" --model w0wa-flat --format json --quiet --seed 7
    cp "$OUT" "$E2E_TMP/$combo.json"
    echo "$STATUS" >"$E2E_TMP/$combo.status"
done
if msg=$($PY - "$E2E_TMP" <<'EOF'
import json, math, sys
d = sys.argv[1]
out, prev = [], None
for combo in ["sn", "sn_bao", "sn_bao_cmb"]:
    status = int(open(f"{d}/{combo}.status").read())
    j = json.load(open(f"{d}/{combo}.json"))
    om, ess = j["params"]["omega_m"], j["convergence"]["ess_min"]
    out.append(f"{combo}: omega_m {om['mean']:.4f} +- {om['sd']:.4f}, w0 "
               f"{j['params']['w0']['mean']:.3f} +- {j['params']['w0']['sd']:.3f} (ESS {ess:.0f})")
    assert status == 0 and j["converged"], out[-1]
    if prev:
        assert om["sd"] <= prev[0] * (1 + 4 / math.sqrt(2 * min(ess, prev[1]))), out
    prev = (om["sd"], ess)
print("; ".join(out))
EOF
); then pass "SN, SN+BAO+BBN, SN+BAO+BBN+CMB on w0wa-flat converge and each probe narrows omega_m ($msg)"
else fail "SN, SN+BAO+BBN, SN+BAO+BBN+CMB on w0wa-flat converge and each probe narrows omega_m ($msg)"; fi

# ---- refusals ----
printf 'quantity,value,err\nshift_r,1.75,0.005\ntheta_s,1.04,0.001\n' >"$E2E_TMP/bad.csv"
run "$LANTERN" fit --cmb "$E2E_TMP/bad.csv" --model lcdm-flat
expect_error "an unknown CMB quantity names the file and line" 2 "bad.csv:3: unknown CMB quantity 'theta_s'"
printf 'quantity,value,err\nshift_r,1.75,0.005\nshift_r,1.76,0.005\n' >"$E2E_TMP/twice.csv"
run "$LANTERN" fit --cmb "$E2E_TMP/twice.csv" --model lcdm-flat
expect_error "a CMB quantity twice" 2 "twice.csv:3: shift_r is given twice"
run "$LANTERN" fit --cmb-cov "$S/cmb_distance_priors/planck2018_priors_cov.txt" --model lcdm-flat \
    --measure h0=70:1
expect_error "--cmb-cov needs --cmb" 2 "--cmb-cov: needs a CMB file"
# w0 + wa >= 0 everywhere: no point has an early universe the CMB term can read
run "$LANTERN" fit "${CMB[@]}" --model w0wa-flat --prior w0=uniform:-0.5:0 --prior wa=uniform:0.6:1
expect_error "w0 + wa >= 0 everywhere: zero posterior, refused" 1 "no start .*possible"
