#!/usr/bin/env bash
# Traps (issue 22, item 9): a --cov that already holds the statistical
# errors, warned about; inspect's diagnosis of a covariance that is not
# positive definite; warnings with ids and --no-warn ID.
source "$(dirname "$0")/lib.sh"
P="${LANTERN_SHARED:-$ROOT/../shared}/data/pantheon2018"
D=(--data "$P/lcparam_DS17f.txt" --columns z=zcmb,zhel=zhel,mag=mb,err=dmb)

# The total covariance of the binned Pantheon 2018 data, diag(dmb^2) + sys
# (SOURCE.md beside the files), written as one file, as releases often
# ship it: given with --cov and without --no-err-diag, dmb^2 counts twice.
/usr/bin/python3 - "$P" "$E2E_TMP" <<'PY'
import sys
import numpy as np
p, out = sys.argv[1], sys.argv[2]
err = np.loadtxt(p + "/lcparam_DS17f.txt", usecols=(5,))
v = np.loadtxt(p + "/sys_DS17f.txt")
n = int(v[0])
total = np.diag(err ** 2) + v[1:].reshape(n, n)
with open(out + "/total.txt", "w") as f:
    f.write("%d\n" % n)
    f.writelines("%.12e\n" % x for x in total.ravel())
PY
TOTAL="$E2E_TMP/total.txt"

# ---- the double diagonal ----
run "$LANTERN" inspect "${D[@]}" --cov "$TOTAL" --format json
if [ "$STATUS" -eq 0 ] &&
   grep -q "^lantern: warning \[cov-double-diagonal\]: $TOTAL: its diagonal reaches err^2 on 40 of 40 rows, .*give --no-err-diag" "$ERR" &&
   /usr/bin/python3 -c '
import json, sys
j = json.load(open(sys.argv[1]))
assert "cov-double-diagonal" in j["warning_ids"], j["warning_ids"]
assert len(j["warning_ids"]) == len(j["warnings"])
' "$OUT"; then pass "a --cov holding diag(err^2) + sys, without --no-err-diag, is warned about (stderr and JSON)"
else fail "a --cov holding diag(err^2) + sys, without --no-err-diag, is warned about (stderr and JSON)"; fi

# the real systematics-only matrix must not trip it (its C_ii reach dmb^2 on
# 1 of 40 rows), nor the total with --no-err-diag
run "$LANTERN" inspect "${D[@]}" --cov "$P/sys_DS17f.txt"
a=$STATUS
nsys=$(grep -c "cov-double-diagonal" "$ERR")
run "$LANTERN" inspect "${D[@]}" --cov "$TOTAL" --no-err-diag
if [ "$a" -eq 0 ] && [ "$nsys" -eq 0 ] && [ "$STATUS" -eq 0 ] && ! grep -q "cov-double-diagonal" "$ERR"; then
    pass "Pantheon's sys_DS17f.txt (systematics only) and the total with --no-err-diag draw no double-diagonal warning"
else fail "Pantheon's sys_DS17f.txt (systematics only) and the total with --no-err-diag draw no double-diagonal warning"; fi

# What the trap costs, flat LCDM: the published stat+sys sigma(Omega_m) is
# 0.022 (Scolnic et al. 2018, ApJ 859, 101; quoted from memory in SOURCE.md);
# diag + sys as one file with --no-err-diag is the same matrix as diag(err^2)
# + sys (the same sigma to the optimiser's precision); without --no-err-diag
# it is larger.
sd() { "$LANTERN" fit "${D[@]}" "$@" --model lcdm-flat --format json 2>/dev/null |
    /usr/bin/python3 -c 'import json,sys; print(json.load(sys.stdin)["params"]["omega_m"]["sd"])'; }
s_sys=$(sd --cov "$P/sys_DS17f.txt")
s_twice=$(sd --cov "$TOTAL")
s_once=$(sd --cov "$TOTAL" --no-err-diag)
if /usr/bin/python3 -c '
import sys
sys_, twice, once = map(float, sys.argv[1:])
assert abs(sys_ - 0.022) < 0.001, sys_
assert abs(once - sys_) < 1e-4 * sys_, (once, sys_)  # the optimiser precision
assert twice > 1.15 * sys_, (twice, sys_)
print("# sigma(Omega_m): diag+sys %.4f, the total given twice %.4f" % (sys_, twice))
' "$s_sys" "$s_twice" "$s_once"; then
    pass "the double-counted diagonal inflates sigma(Omega_m) (README's numbers)"
else fail "the double-counted diagonal inflates sigma(Omega_m) (README's numbers) [$s_sys $s_twice $s_once]"; fi

# several tables: a table's own --cov, and a cross-covariance over both
run "$LANTERN" inspect --data "$P/lcparam_DS17f.txt" --table-name first --columns z=zcmb,zhel=zhel,mag=mb,err=dmb --cov "$TOTAL" \
    --data "$P/lcparam_DS17f.txt" --table-name second --columns z=zcmb,zhel=zhel,mag=mb,err=dmb --cov "$P/sys_DS17f.txt"
if [ "$STATUS" -eq 0 ] && [ "$(grep -c "cov-double-diagonal" "$ERR")" -eq 1 ] &&
   grep -q "^lantern: warning \[cov-double-diagonal\]: first: $TOTAL: its diagonal" "$ERR"; then
    pass "joined tables: the table whose --cov holds err^2 is named, the other not"
else fail "joined tables: the table whose --cov holds err^2 is named, the other not"; fi
/usr/bin/python3 - "$P" "$E2E_TMP" <<'PY'
import sys
import numpy as np
p, out = sys.argv[1], sys.argv[2]
err = np.loadtxt(p + "/lcparam_DS17f.txt", usecols=(5,))
e = np.concatenate([err, err])
np.savetxt(out + "/cross.txt", np.diag(e ** 2), fmt="%.10e")
PY
cat >"$E2E_TMP/joined.ini" <<EOF
[data]
cross_cov = $E2E_TMP/cross.txt
[survey.first]
file = $P/lcparam_DS17f.txt
columns = z=zcmb,zhel=zhel,mag=mb,err=dmb
cov = $P/sys_DS17f.txt
[survey.second]
file = $P/lcparam_DS17f.txt
columns = z=zcmb,zhel=zhel,mag=mb,err=dmb
cov = $P/sys_DS17f.txt
[model]
name = lcdm-flat
EOF
run "$LANTERN" fit "$E2E_TMP/joined.ini" --format json
if [ "$STATUS" -eq 0 ] && grep -q "^lantern: warning \[cov-double-diagonal\]: $E2E_TMP/cross.txt: its diagonal reaches err^2 on 80 of 80 rows.*no_err_diag = true in each \[survey.NAME\]" "$ERR"; then
    pass "a cross-covariance holding the tables' err^2 is warned about"
else fail "a cross-covariance holding the tables' err^2 is warned about"; fi

# ---- inspect on a covariance that is not positive definite ----
# The identity with the block [[1, 1.5], [1.5, 1]] on objects 3 and 4:
# eigenvalues 1 - 1.5 = -0.5 along (e3 - e4)/sqrt(2), 2.5, and 1 four times
# (closed form; numpy.linalg.eigvalsh checks it below).
printf 'id z mu err\n' >"$E2E_TMP/six.txt"
for i in 1 2 3 4 5 6; do echo "sn$i 0.$i 4$i.0 0.1" >>"$E2E_TMP/six.txt"; done
/usr/bin/python3 -c '
import sys
import numpy as np
c = np.eye(6)
c[2, 3] = c[3, 2] = 1.5
np.savetxt(sys.argv[1], c, fmt="%.6g")
' "$E2E_TMP/bad.txt"
SIX=(--data "$E2E_TMP/six.txt" --columns z=z,mu=mu,err=err,id=id --cov "$E2E_TMP/bad.txt" --no-err-diag --no-warn no-zhel)
run "$LANTERN" inspect "${SIX[@]}"
if [ "$STATUS" -eq 2 ] &&
   grep -q "^lantern: $E2E_TMP/bad.txt: the covariance matrix is not positive definite (Cholesky fails at row 4 of 6); the total is $E2E_TMP/bad.txt$" "$ERR" &&
   grep -q "^ *1 negative eigenvalue; the smallest: -0.5, 1, 1, 1, 1$" "$OUT" &&
   grep -qE "^ +3 +3 +sn3 +0.30000 +0.7071$" "$OUT" && grep -qE "^ +4 +4 +sn4 +0.40000 +-0.7071$" "$OUT" &&
   grep -q "hint: objects 'sn3' and 'sn4' are correlated beyond 1" "$OUT"; then
    pass "inspect on a matrix that is not positive definite: the eigenvalue -0.5, objects sn3 and sn4 at +-0.7071, a hint, status 2"
else fail "inspect on a matrix that is not positive definite: the eigenvalue -0.5, objects sn3 and sn4 at +-0.7071, a hint, status 2"; fi
run "$LANTERN" inspect "${SIX[@]}" --format json
if [ "$STATUS" -eq 2 ] && /usr/bin/python3 -c '
import json, sys
import numpy as np
j = json.load(open(sys.argv[1]))
c = j["covariance"]
assert c["positive_definite"] is False and c["kind"] == "dense" and c["condition"] is None
ref = np.linalg.eigvalsh(np.loadtxt(sys.argv[2]))
assert abs(c["min_eigenvalue"] - ref[0]) < 1e-12 and abs(ref[0] + 0.5) < 1e-12
d = c["diagnosis"]
assert d["n_negative"] == 1 and d["n_zero"] == 0
assert np.allclose(d["smallest_eigenvalues"], ref[:5], atol=1e-12)
top = d["direction"][:2]
assert {x["id"] for x in top} == {"sn3", "sn4"}
assert all(abs(abs(x["weight"]) - 2 ** -0.5) < 1e-12 for x in top)
assert top[0]["weight"] > 0 > top[1]["weight"]
assert {x["z"] for x in top} == {0.3, 0.4} and {x["row"] for x in top} == {3, 4}
assert abs(d["pair_correlation"] - 1.5) < 1e-12 and "sn3" in d["hint"]
' "$OUT" "$E2E_TMP/bad.txt"; then pass "inspect --format json: covariance.diagnosis against numpy.linalg.eigvalsh"
else fail "inspect --format json: covariance.diagnosis against numpy.linalg.eigvalsh"; fi

# a larger case with several negative eigenvalues: numpy.linalg.eigh as the
# reference for the eigenvalues, the count and the direction's heaviest objects
/usr/bin/python3 - "$E2E_TMP" <<'PY'
import sys
import numpy as np
out = sys.argv[1]
rng = np.random.default_rng(22)
n = 40
a = rng.normal(size=(n, n))
c = (a + a.T) / 2 + 0.5 * n ** 0.5 * np.eye(n)  # a few eigenvalues left below 0
with open(out + "/forty.txt", "w") as f:
    f.write("id z mu err\n")
    for i in range(n):
        f.write("obj%02d %.3f %.3f 0.1\n" % (i + 1, 0.02 + 0.03 * i, 35 + 0.2 * i))
np.savetxt(out + "/forty_cov.txt", c, fmt="%.17g")
PY
run "$LANTERN" inspect --data "$E2E_TMP/forty.txt" --columns z=z,mu=mu,err=err,id=id --cov "$E2E_TMP/forty_cov.txt" --no-err-diag --format json
if [ "$STATUS" -eq 2 ] && /usr/bin/python3 -c '
import json, sys
import numpy as np
d = json.load(open(sys.argv[1]))["covariance"]["diagnosis"]
w, v = np.linalg.eigh(np.loadtxt(sys.argv[2]))
assert 2 <= (w < 0).sum() == d["n_negative"], ((w < 0).sum(), d["n_negative"])
assert np.allclose(d["smallest_eigenvalues"], w[:5], rtol=0, atol=1e-10)
u = v[:, 0] * np.sign(v[np.argmax(np.abs(v[:, 0])), 0])
heavy = np.argsort(-np.abs(u))[:5]
assert [x["object"] - 1 for x in d["direction"]] == list(heavy)
assert np.allclose([x["weight"] for x in d["direction"]], u[heavy], atol=1e-9)
' "$OUT" "$E2E_TMP/forty_cov.txt"; then pass "inspect's diagnosis of a 40x40 matrix with negative eigenvalues matches numpy.linalg.eigh"
else fail "inspect's diagnosis of a 40x40 matrix with negative eigenvalues matches numpy.linalg.eigh"; fi

# the other commands still refuse it (status 2, nothing on stdout) and
# point to inspect
run "$LANTERN" fit "${SIX[@]}" --model lcdm-flat
expect_error "fit refuses a covariance that is not positive definite and points to inspect" 2 \
    "not positive definite.*\('lantern inspect' with the same data options shows its negative directions\)"

# ---- warning ids and --no-warn ----
run "$LANTERN" inspect "${D[@]}" --cov "$TOTAL"
both=$(grep -c "^lantern: warning \[\(header-extra-names\|cov-double-diagonal\)\]: " "$ERR")
run "$LANTERN" inspect "${D[@]}" --cov "$TOTAL" --no-warn header-extra-names
if [ "$both" -eq 2 ] && [ "$STATUS" -eq 0 ] && ! grep -q "header-extra-names\|biascor" "$ERR" &&
   grep -q "^lantern: warning \[cov-double-diagonal\]" "$ERR"; then
    pass "--no-warn header-extra-names silences that kind and no other"
else fail "--no-warn header-extra-names silences that kind and no other"; fi
run "$LANTERN" inspect "${D[@]}" --cov "$TOTAL" --no-warn header-extra-names,cov-double-diagonal --format json
if [ "$STATUS" -eq 0 ] && [ ! -s "$ERR" ] && /usr/bin/python3 -c '
import json, sys
j = json.load(open(sys.argv[1]))
assert j["warning_ids"] == ["header-extra-names", "cov-double-diagonal"], j["warning_ids"]
' "$OUT"; then pass "a comma list silences both; the JSON keeps every warning"
else fail "a comma list silences both; the JSON keeps every warning"; fi
run "$LANTERN" fit "${D[@]}" --cov "$TOTAL" --model lcdm-flat --no-warn header-extra-names --no-warn cov-double-diagonal
if [ "$STATUS" -eq 0 ] && ! grep -q "warning" "$ERR"; then pass "--no-warn repeated, on fit"
else fail "--no-warn repeated, on fit"; fi
run "$LANTERN" inspect "${D[@]}" --no-warn header-extra
expect_error "an unknown id is a usage error listing the known ones" 2 \
    "--no-warn: unknown kind of warning 'header-extra' \(the kinds: header-extra-names, no-zhel, .*cov-double-diagonal"
printf '[data]\nfile = %s/lcparam_DS17f.txt\ncolumns = z=zcmb,zhel=zhel,mag=mb,err=dmb\nno_warn = header-extra-names\n[model]\nname = lcdm-flat\n' "$P" >"$E2E_TMP/nw.ini"
run "$LANTERN" fit "$E2E_TMP/nw.ini"
if [ "$STATUS" -eq 0 ] && [ ! -s "$ERR" ]; then pass "[data] no_warn in a run file"
else fail "[data] no_warn in a run file"; fi
run "$LANTERN" run "$E2E_TMP/nw.ini" --no-warn no-such-kind --out "$E2E_TMP/nwrun"
expect_error "lantern run --no-warn checks its ids" 2 "--no-warn: unknown kind of warning 'no-such-kind'"

# ---- fit, sample and compare summaries list each warning's id beside it ----
run "$LANTERN" fit "${D[@]}" --cov "$P/sys_DS17f.txt" --model lcdm-flat --format json
cp "$OUT" "$E2E_TMP/fit.json"
L=(--data "$ROOT/data/lamplighter/survey.csv" --columns z=z,zhel=zhel,mag=mag,err=err,id=id
   --modes "$ROOT/data/lamplighter/modes.csv")
run "$LANTERN" sample "${L[@]}" --model w0wa-flat --sampler mcmc --target-ess 300 --seed 4 \
    --format json --no-warn prior-edge
cp "$OUT" "$E2E_TMP/sample.json"
run "$LANTERN" compare "${D[@]}" --cov "$P/sys_DS17f.txt" --models lcdm-flat,w0wa-flat \
    --live-points 100 --format json
cp "$OUT" "$E2E_TMP/compare.json"
if /usr/bin/python3 - "$E2E_TMP" <<'PY'
import json, sys
t = sys.argv[1]
fit, smp, cmp = (json.load(open("%s/%s.json" % (t, n))) for n in ("fit", "sample", "compare"))
assert fit["warning_ids"] == ["header-extra-names"], fit["warning_ids"]
assert fit["warnings"][0].endswith("lcparam_DS17f.txt:1: the header names 19 columns but rows "
                                   "have 18 fields; the trailing name biascor, filled by no row "
                                   "and mapped to no role, is ignored"), fit["warnings"]
assert "prior-edge" in smp["warning_ids"], smp["warning_ids"]
assert "omega_m" in smp["warnings"][smp["warning_ids"].index("prior-edge")]
for j in [fit, smp] + cmp["models"]:
    assert len(j["warnings"]) == len(j["warning_ids"]), j
ids = [i for m in cmp["models"] for i in m["warning_ids"]]
assert set(ids) <= {"prior-edge", "dic"}, ids
PY
then pass "fit, sample and compare summaries: warning_ids beside warnings (--no-warn keeps them)"
else fail "fit, sample and compare summaries: warning_ids beside warnings (--no-warn keeps them)"; fi
