#!/usr/bin/env bash
# End-to-end tests of "lantern forecast": Fisher errors against the MCMC of a
# simulated survey of the same design, the contract's fields, the figure,
# and the refusals. (tests/reference/astropy_fisher.py checks the Fisher
# matrix itself against one built from astropy's distances.)
source "$(dirname "$0")/lib.sh"
W="$ROOT/configs/forecast-wide.ini"

run "$LANTERN" forecast "$W" --format json --out "$E2E_TMP/f"
cp "$OUT" "$E2E_TMP/forecast.json"
if [ "$STATUS" -eq 0 ] && /usr/bin/python3 - "$OUT" "$E2E_TMP/f" <<'PY'
import json, sys
j = json.load(open(sys.argv[1]))
assert json.load(open(sys.argv[2] + "/summary.json")) == j
assert j["command"] == "forecast" and j["model"] == "w0wa-flat" and j["n_data"] == 20000
assert list(j["params"]) == ["omega_m", "w0", "wa"]
assert j["params"]["omega_m"]["prior"] == "N(0.31, 0.01)"
assert j["params"]["w0"]["fiducial"] == -1 and j["params"]["wa"]["fiducial"] == 0
f = j["figure_of_merit"]
assert "arXiv:0901.0721" in f["definition"] and "1/sqrt(det Cov(w0, wa))" in f["definition"]
c = j["covariance"]["matrix"]
# FoM = 1/sqrt(det Cov(w0, wa)) from the printed covariance
assert abs(f["value"] - (c[1][1] * c[2][2] - c[1][2] ** 2) ** -0.5) < 1e-9 * f["value"]
# the pivot: w_p = w0 + wa (1 - a_p) uncorrelated with wa (Huterer & Turner 2001)
ap = 1 / (1 + f["z_pivot"])
assert abs(c[1][2] + (1 - ap) * c[2][2]) < 1e-9 * c[2][2]
assert abs(f["w_pivot_sd"] ** 2 - (c[1][1] - c[1][2] ** 2 / c[2][2])) < 1e-12
# Gaussian priors enter as 1/sd^2: with the others fixed, sigma <= the prior's
assert j["params"]["omega_m"]["sd"] < 0.01
# ... and the JSON says so: the matrix holds the prior, matrix_data_only not
fi = j["fisher"]
assert fi["includes_gaussian_priors"] == ["omega_m"], fi["includes_gaussian_priors"]
assert "1/sd^2" in fi["note"]
m, m0 = fi["matrix"], fi["matrix_data_only"]
assert abs(m[0][0] - m0[0][0] - 1 / 0.01 ** 2) < 1e-9 * m[0][0]
assert all(m[a][b] == m0[a][b] for a in range(3) for b in range(3) if (a, b) != (0, 0))
PY
then pass "forecast JSON: fields, FoM and pivot from the covariance, prior, --out summary"
else fail "forecast JSON: fields, FoM and pivot from the covariance, prior, --out summary"; fi
[ -s "$E2E_TMP/f/ellipse_w0_wa.png" ] && [ -s "$E2E_TMP/f/ellipse_w0_wa.pdf" ] &&
    pass "--out draws the w0-wa ellipse (png and pdf)" || fail "--out draws the w0-wa ellipse (png and pdf)"

# One realization of the design, sampled: a survey this large is Gaussian
# enough that the posterior sds and the Fisher errors agree within 10%.
"$LANTERN" simulate "$W" --out "$E2E_TMP/sim" >/dev/null
S="$E2E_TMP/sim"
run "$LANTERN" sample --data "$S/survey.csv" --columns z=z,zhel=zhel,mag=mag,err=err,id=id \
    --modes "$S/modes.csv" --model w0wa-flat --prior omega_m=gauss:0.31:0.01 \
    --target-ess 2000 --seed 5 --quiet --format json
if [ "$STATUS" -eq 0 ] && /usr/bin/python3 - "$OUT" "$E2E_TMP/forecast.json" <<'PY'
import json, sys
import numpy as np
m = json.load(open(sys.argv[1])); f = json.load(open(sys.argv[2]))
for p in ("omega_m", "w0", "wa"):
    a, b = m["params"][p]["sd"], f["params"][p]["sd"]
    print("  %s: MCMC sd %.4g, Fisher %.4g (%+.1f%%)" % (p, a, b, 100 * (b / a - 1)))
    assert abs(b / a - 1) < 0.10, p
names = m["covariance"]["names"]; c = np.array(m["covariance"]["matrix"])
i, k = names.index("w0"), names.index("wa")
fom = 1 / np.sqrt(c[i, i] * c[k, k] - c[i, k] ** 2)
print("  FoM: MCMC %.4g, Fisher %.4g" % (fom, f["figure_of_merit"]["value"]))
assert abs(f["figure_of_merit"]["value"] / fom - 1) < 0.15
PY
then pass "Fisher errors agree with the MCMC of a 20000-object simulated survey within 10% (FoM within 15%)"
else fail "Fisher errors agree with the MCMC of a 20000-object simulated survey within 10% (FoM within 15%)"; fi

run "$LANTERN" forecast "$ROOT/data/lamplighter.ini"
expect_stdout "the table gives the marginal error of omega_m" '^  omega_m +0\.31 +0\.020'
run "$LANTERN" forecast "$ROOT/data/lamplighter.ini" --model w0wa-flat
expect_stdout "w0-wa models print the figure of merit and its normalisation" 'figure of merit 1/sqrt\(det Cov\(w0, wa\)\) = '

# Refusals.
printf '[forecast]\nmodel = lcdm-flatt\n' | cat "$ROOT/data/lamplighter.ini" - >"$E2E_TMP/bad.ini"
run "$LANTERN" forecast "$E2E_TMP/bad.ini"
expect_error "an unknown model names the file and line" 2 "bad.ini:[0-9]+: unknown model 'lcdm-flatt'"
printf '[fixed]\nomega_m = 0.3\n' | cat "$ROOT/data/lamplighter.ini" - >"$E2E_TMP/fixed.ini"
run "$LANTERN" forecast "$E2E_TMP/fixed.ini"
expect_error "nothing left free is refused" 2 "nothing to forecast"
printf '[priors]\nomega_q = gauss:1:1\n' | cat "$ROOT/data/lamplighter.ini" - >"$E2E_TMP/prior.ini"
run "$LANTERN" forecast "$E2E_TMP/prior.ini"
expect_error "an unknown parameter names its line" 2 "prior.ini:[0-9]+: unknown parameter 'omega_q'"
run "$LANTERN" forecast "$ROOT/data/lamplighter.ini" --format csv
expect_status "--format csv is refused" 2
# a forecast file is a scenario too: simulate passes over its own sections
run "$LANTERN" simulate "$W" --out "$E2E_TMP/sim2"
expect_status "lantern simulate reads a forecast file" 0
