#!/usr/bin/env bash
# End-to-end tests of a run file's combinations of probes ([run] probes):
# each combination run for each model in its own folder, the tables naming
# the probes of each column and comparing models only within one data set,
# the plane figure overlaying every combination's filled regions.
# References: the binned Pantheon 2018 release (Scolnic et al. 2018), DESI
# 2024 BAO (DESI 2024 VI) and the numpy grid of ../shared/data/desi2024_bao/
# SOURCE.md (flat LCDM, r_d free: Omega_m 0.2951 +- 0.0146); the Planck
# 2018 distance priors of ../shared/data/cmb_distance_priors/ (values from
# memory: used here to exercise the code, not to check published numbers).
source "$(dirname "$0")/lib.sh"
S="${LANTERN_SHARED:-$ROOT/../shared}/data"
PY=/usr/bin/python3
D="$E2E_TMP/probes"
mkdir -p "$D"

# write_ini FILE PROBES [EXTRA DATA LINES]: a run file on the binned Pantheon
# data, DESI BAO and the CMB priors, with [run] probes = PROBES
write_ini() {
    cat >"$1" <<EOF
[run]
name = probes
probes = $2
models = lcdm-flat, wcdm-flat

[data]
file = $S/pantheon2018/lcparam_DS17f.txt
columns = z=zcmb,zhel=zhel,mag=mb,err=dmb
cov = $S/pantheon2018/sys_DS17f.txt
bao = $ROOT/data/desi2024_bao/bao_dr1.csv
bao_cov = $ROOT/data/desi2024_bao/bao_dr1_cov.txt
rd = free
$3

[model]
# the survey's; the combination without it has no offset
offset = marginal

[priors]
# read only where h0 is a parameter (the combination with the CMB)
h0 = uniform:50:90

[sampler]
seed = 11
chains = 4
target_ess = 400

[nested]
live_points = 100
EOF
}
CMBLINES="cmb = $S/cmb_distance_priors/planck2018_priors.csv
cmb_cov = $S/cmb_distance_priors/planck2018_priors_cov.txt"

# ---- refusals, each naming the run file's line ----
# refused N PROBES EXTRA NAME PATTERN: the run file badN.ini is refused
refused() {
    write_ini "$D/bad$1.ini" "$2" "$3"
    run "$LANTERN" run "$D/bad$1.ini" --out "$D/bad"
    expect_error "$4" 2 "bad$1.ini:3: \[run\] probes: $5"
}
refused 1 "sn, bao+snx" "$CMBLINES" "an unknown probe is refused naming the run file and line" \
    "unknown probe 'snx'"
refused 2 "sn, cmb" "" "a probe the run file does not give is refused" \
    "'cmb' is not given in this run file \(\[data\] cmb\)"
refused 3 "sn, bao" "$CMBLINES" "a probe given but in no combination is refused" \
    "no combination uses cmb"
refused 4 "sn+bao, bao + sn" "" "a combination listed twice (in any order) is refused" \
    "sn\+bao is listed twice"
refused 5 "bao cmb, sn" "$CMBLINES" "two probes without a '+' are refused, not read as one" \
    "'bao cmb' has a space inside: join probes with '\+'"
if [ ! -e "$D/bad" ]; then pass "a refused run file leaves no folder"
else fail "a refused run file leaves no folder"; fi

# ---- the run: three combinations, two models ----
write_ini "$D/probes.ini" "sn, bao, sn + bao + cmb" "$CMBLINES"
run "$LANTERN" run "$D/probes.ini" --out "$D/run" --quiet
if [ "$STATUS" -eq 0 ] || [ "$STATUS" -eq 3 ]; then pass "lantern run with [run] probes finishes"
else fail "lantern run with [run] probes finishes"; fi
cp "$OUT" "$E2E_TMP/run_table.txt"
if grep -q "note: lcdm-flat (sn): the prior on h0 does not apply" "$ERR" &&
    grep -q "note: wcdm-flat (bao): the prior on h0 does not apply" "$ERR" &&
    ! grep -q "(sn+bao+cmb): the prior on h0" "$ERR"
then pass "the run says where the run file's h0 prior is passed over, and only there"
else fail "the run says where the run file's h0 prior is passed over, and only there"; fi

# each combination's data as lantern reads it for one probe: the same digest
run "$LANTERN" fit --data "$S/pantheon2018/lcparam_DS17f.txt" --columns z=zcmb,zhel=zhel,mag=mb,err=dmb \
    --cov "$S/pantheon2018/sys_DS17f.txt" --model lcdm-flat --format json
cp "$OUT" "$E2E_TMP/fit_sn.json"
run "$LANTERN" fit --bao "$ROOT/data/desi2024_bao/bao_dr1.csv" \
    --bao-cov "$ROOT/data/desi2024_bao/bao_dr1_cov.txt" --rd free --model lcdm-flat --format json
cp "$OUT" "$E2E_TMP/fit_bao.json"

if msg=$($PY - "$D/run" "$E2E_TMP/fit_sn.json" "$E2E_TMP/fit_bao.json" 2>&1 <<'EOF'
import json, math, os, sys
d = sys.argv[1]
combos = {"sn": "sn", "bao": "bao", "sn+bao+cmb": "sn+bao+cmb"}
s = {}
for c in combos:
    for m in ("lcdm-flat", "wcdm-flat"):
        s[c, m] = json.load(open(os.path.join(d, c, m, "summary.json")))
        assert s[c, m]["data"]["probes"] == c, (c, m, s[c, m]["data"]["probes"])
# the terms each combination has, and only those
assert "bao" not in s["sn", "lcdm-flat"] and "cmb" not in s["sn", "lcdm-flat"]
assert s["bao", "lcdm-flat"]["data"]["file"] == "" and "cmb" not in s["bao", "lcdm-flat"]
assert s["bao", "lcdm-flat"]["bao"]["rd"] == "free"
# beside the CMB, r_d comes from its formula: rd_h goes, omega_b_h2 and h0 come
full = s["sn+bao+cmb", "lcdm-flat"]
assert full["bao"]["rd"] == "formula" and full["cmb"]["n_data"] == 3, full["bao"]
assert {"h0", "omega_b_h2"} <= set(full["params"]) and "rd_h" not in full["params"]
# the [priors] h0 applied where h0 is a parameter, passed over elsewhere
assert full["params"]["h0"]["prior"] == "U(50, 90)", full["params"]["h0"]
assert "h0" not in s["sn", "lcdm-flat"]["params"] and "h0" not in s["bao", "lcdm-flat"]["params"]
# the sn and bao combinations read exactly what one probe alone reads
fsn, fbao = json.load(open(sys.argv[2])), json.load(open(sys.argv[3]))
assert s["sn", "lcdm-flat"]["data"]["digest"] == fsn["data"]["digest"]
assert s["bao", "lcdm-flat"]["data"]["digest"] == fbao["data"]["digest"]
assert s["sn", "lcdm-flat"]["n_data"] == 40 and s["bao", "lcdm-flat"]["n_data"] == 12
assert full["n_data"] == 40 + 12 + 3, full["n_data"]
# BAO alone, flat LCDM, r_d free: the numpy grid of SOURCE.md (0.2951 +- 0.0146)
p = s["bao", "lcdm-flat"]["params"]["omega_m"]
ess = s["bao", "lcdm-flat"]["convergence"]["ess_min"]
tol = max(0.1, 4 / math.sqrt(ess)) * 0.0146
assert abs(p["mean"] - 0.2951) < tol, (p["mean"], tol)
# each probe added narrows omega_m (within the Monte Carlo error of an sd)
for m in ("lcdm-flat", "wcdm-flat"):
    sd = {c: s[c, m]["params"]["omega_m"]["sd"] for c in combos}
    e = {c: s[c, m]["convergence"]["ess_min"] for c in combos}
    for alone in ("sn", "bao"):
        grow = 1 + 4 / math.sqrt(2 * min(e[alone], e["sn+bao+cmb"]))
        assert sd["sn+bao+cmb"] <= sd[alone] * grow, (m, alone, sd)
print("BAO-alone omega_m %.4f (numpy 0.2951, tol %.4f); sd sn %.3f, bao %.3f, all %.4f" % (
    p["mean"], tol, s["sn", "lcdm-flat"]["params"]["omega_m"]["sd"],
    s["bao", "lcdm-flat"]["params"]["omega_m"]["sd"], full["params"]["omega_m"]["sd"]))
EOF
); then pass "each combination is run on its own probes ($msg)"
else fail "each combination is run on its own probes ($msg)"; fi

# ---- the tables: columns named by their probes, comparisons within one data set ----
if msg=$($PY - "$D/run" 2>&1 <<'EOF'
import json, os, sys
d = sys.argv[1]
j = json.load(open(os.path.join(d, "summary.json")))
labels = [c["label"] for c in j["comparison"]]
want = [f"{m} ({c})" for c in ("sn", "bao", "sn+bao+cmb") for m in ("lcdm-flat", "wcdm-flat")]
assert labels == want, labels
assert [m["folder"] for m in j["models"]] == [
    f"{c}/{m}" for c in ("sn", "bao", "sn+bao+cmb") for m in ("lcdm-flat", "wcdm-flat")]
# Delta AIC and ln B of wcdm-flat against lcdm-flat of the same combination,
# recomputed from the two models' own summaries
for k in (0, 2, 4):
    ref, other = j["comparison"][k], j["comparison"][k + 1]
    assert ref["reference"] == ref["label"] and ref["delta_aic"] == 0, ref
    assert other["reference"] == ref["label"], other
    sref = json.load(open(os.path.join(d, j["models"][k]["folder"], "summary.json")))
    soth = json.load(open(os.path.join(d, j["models"][k + 1]["folder"], "summary.json")))
    assert abs(other["delta_aic"] - (soth["aic"] - sref["aic"])) < 1e-9
    lnb = soth["evidence"]["ln_z"] - sref["evidence"]["ln_z"]
    assert abs(other["ln_b"] - lnb) < 1e-9, (other["ln_b"], lnb)
md = open(os.path.join(d, "constraints.md")).read()
assert "| parameter | lcdm-flat (sn) | wcdm-flat (sn) | lcdm-flat (bao) |" in md, md[:300]
assert "| AIC - AIC(reference) |" in md
assert "the first model of its data (the reference), lcdm-flat (sn); lcdm-flat (bao); lcdm-flat (sn+bao+cmb)." in md
assert "left blank" not in md
tex = open(os.path.join(d, "constraints.tex")).read()
# six columns: a tabular of four, then one of two (four fit a page's width)
assert " & SN & SN & BAO & BAO \\\\" in tex and " & SN+BAO+CMB & SN+BAO+CMB \\\\" in tex, tex[:400]
assert "to the first column of the same data" in tex
# every parameter by its symbol: no bare underscore reaches LaTeX
assert "$\\Omega_\\mathrm{b} h^2$ &" in tex and "$H_0$" in tex
assert "omega_b_h2" not in tex and "rd_h" not in tex, tex
csv = open(os.path.join(d, "constraints.csv")).read().splitlines()
assert any(l.startswith("wcdm-flat (sn+bao+cmb),w0,") for l in csv), csv[:5]
print("6 columns; Delta AIC and ln B each to lcdm-flat of its combination")
EOF
); then pass "tables name each column's probes and compare within a combination ($msg)"
else fail "tables name each column's probes and compare within a combination ($msg)"; fi

# ---- figures: the wCDM Omega_m - w0 plane overlays the three combinations, filled ----
if ls "$D/run/plane_wcdm-flat.png" "$D/run/plane_wcdm-flat.pdf" "$D/run/traces_wcdm-flat_bao.png" \
    "$D/run/traces_wcdm-flat_sn+bao+cmb.png" >/dev/null 2>&1 && [ ! -e "$D/run/plane_lcdm-flat.png" ] &&
    msg=$(cd "$ROOT/tests/e2e" && $PY - "$D/run/plane_wcdm-flat.png" 2>&1 <<'EOF'
import sys
from figures import png_rows
w, h, bpp, rows = png_rows(sys.argv[1])
# the 95% fill of each combination: its colour at 25% against white (the
# first three colours of the figures' palette: src/report/plotkit.c)
colours = [(0, 114, 178), (213, 94, 0), (0, 158, 115)]
tints = [tuple(round(255 - 0.25 * (255 - c)) for c in col) for col in colours]
count = [0] * 3
for row in rows:
    for x in range(w):
        px = tuple(row[x * bpp:x * bpp + 3])
        for k, t in enumerate(tints):
            if all(abs(a - b) <= 2 for a, b in zip(px, t)):
                count[k] += 1
frac = [c / (w * h) for c in count]
assert all(f > 0.001 for f in frac), frac
print("95%% fills cover %s of the figure" % ", ".join("%.1f%%" % (100 * f) for f in frac))
EOF
); then pass "the Omega_m - w0 plane of wcdm-flat overlays each combination's filled regions ($msg)"
else fail "the Omega_m - w0 plane of wcdm-flat overlays each combination's filled regions ($msg)"; fi
$PY "$ROOT/tests/e2e/figures.py" "$D/run"/*.png "$D/run"/*.pdf >"$E2E_TMP/fig.log" 2>&1 &&
    pass "every figure of the run is a valid, non-blank PNG or PDF" ||
    { fail "every figure of the run is a valid, non-blank PNG or PDF"; head -3 "$E2E_TMP/fig.log"; }

# ---- resumed: every combination kept; the report rebuilt the same ----
cp "$D/run/constraints.md" "$E2E_TMP/before.md"
run "$LANTERN" run "$D/probes.ini" --resume "$D/run"
if { [ "$STATUS" -eq 0 ] || [ "$STATUS" -eq 3 ]; } &&
    [ "$(grep -c 'finished earlier, kept' "$ERR")" -eq 6 ] &&
    grep -q "\[6/6\] wcdm-flat (sn+bao+cmb): finished earlier, kept" "$ERR" &&
    cmp -s "$E2E_TMP/before.md" "$D/run/constraints.md"
then pass "a finished run of combinations resumed keeps all six and the same table"
else fail "a finished run of combinations resumed keeps all six and the same table"; fi
run "$LANTERN" report "$D/run"
if { [ "$STATUS" -eq 0 ] || [ "$STATUS" -eq 3 ]; } && cmp -s "$E2E_TMP/before.md" "$D/run/constraints.md"
then pass "lantern report rebuilds a run of combinations with its labels"
else fail "lantern report rebuilds a run of combinations with its labels"; fi

# ---- the README's combined-probes table: its flat LCDM columns ----
# configs/combined-probes.ini runs every model with the same seed, so its
# lcdm-flat columns are what the file gives with lcdm-flat alone, to the
# digit (the w0-wa columns take some 15 minutes, too long for make test).
# Numbers, not memory: skipped under the sanitizers (LANTERN_BIN set).
if [ -z "${LANTERN_BIN:-}" ]; then
    run "$LANTERN" run "$ROOT/configs/combined-probes.ini" --override run.models=lcdm-flat \
        --out "$E2E_TMP/paper" --quiet
    if [ "$STATUS" -eq 0 ] && msg=$($PY - "$ROOT/README.md" "$E2E_TMP/paper/constraints.md" 2>&1 <<'PYEOF'
import sys
def table(lines, first):
    i = next(k for k, l in enumerate(lines) if l.startswith(first))
    rows = []
    for l in lines[i:]:
        if not l.startswith("|"):
            break
        rows.append([c.strip() for c in l.strip().strip("|").split("|")])
    return {r[0]: r[1:] for r in rows if r[0] != "---"}
readme = table(open(sys.argv[1]).read().splitlines(), "| parameter | lcdm-flat (sn) | w0wa-flat (sn) |")
got = table(open(sys.argv[2]).read().splitlines(), "| parameter |")
head_r, head_g = readme["parameter"], got["parameter"]
n = 0
for label in head_g:
    kr, kg = head_r.index(label), head_g.index(label)
    for row, cells in got.items():
        # the comparisons: alone in each combination here, so blank (and
        # headed "first"); in the README against lcdm-flat itself, +0.00
        if row == "parameter" or row.startswith(("AIC -", "BIC -", "ln B")):
            continue
        assert readme[row][kr] == cells[kg], (label, row, readme[row][kr], cells[kg])
        n += 1
print("%d cells of %s" % (n, ", ".join(head_g)))
PYEOF
    ); then pass "the README's combined-probes table: its flat LCDM columns are what the run file gives ($msg)"
    else fail "the README's combined-probes table: its flat LCDM columns are what the run file gives ($msg)"; fi
else
    echo "# the README's combined-probes numbers: not checked under the sanitizers"
fi
