#!/usr/bin/env bash
# End-to-end tests of "lantern distance", "--help" and "--version": what a
# user types and what a script reads back.
source "$(dirname "$0")/lib.sh"

run "$LANTERN" --version
expect_stdout "--version prints the version" '^lantern [0-9]+\.[0-9]+\.[0-9]+$'

run "$LANTERN" --help
expect_stdout "--help lists the distance command" '^  distance '

run "$LANTERN"
expect_status "no command is bad usage" 2

run "$LANTERN" fly
expect_error "unknown command" 2 "unknown command 'fly'"

run "$LANTERN" distance --help
expect_stdout "distance --help lists every model" 'w0wa-flat'
for word in omega_de t_cmb n_eff z-range "omega h\^2"; do
    if grep -q -- "$word" "$OUT"; then pass "distance --help explains $word"; else fail "distance --help explains $word"; fi
done

# The acceptance command of issue 2: the contract's columns, in order.
run "$LANTERN" distance --model w0wa --set h0=70,omega_m=0.3,omega_de=0.65,w0=-0.9,wa=0.3 \
    --z 0.1,0.5,1,2 --format csv
header='z,comoving_mpc,transverse_mpc,luminosity_mpc,angular_mpc,distmod,lookback_gyr,age_gyr,hubble_km_s_mpc'
if [ "$STATUS" -eq 0 ] && [ "$(head -1 "$OUT")" = "$header" ] && [ "$(wc -l <"$OUT")" -eq 5 ]; then
    pass "csv has the contract's header and one row per redshift"
else
    fail "csv has the contract's header and one row per redshift"
fi
# The input order is kept and every row has nine finite numbers.
if awk -F, 'NR == 1 { next } { if (NF != 9) bad = 1; for (i = 1; i <= NF; i++) if ($i !~ /^-?[0-9.e+-]+$/) bad = 1 }
            END { exit bad }' "$OUT" && [ "$(cut -d, -f1 "$OUT" | tail -n +2 | tr '\n' ' ')" = "0.1 0.5 1 2 " ]; then
    pass "csv rows are in input order, nine numbers each"
else
    fail "csv rows are in input order, nine numbers each"
fi

# The same numbers in every format.
run "$LANTERN" distance --model lcdm --set omega_m=0.25,omega_de=0.8 --z 2,0.3 --format json
cp "$OUT" "$E2E_TMP/json"
run "$LANTERN" distance --model lcdm --set omega_m=0.25,omega_de=0.8 --z 2,0.3 --format csv
if /usr/bin/python3 - "$E2E_TMP/json" "$OUT" <<'PY'
import csv, json, sys
j = json.load(open(sys.argv[1]))
rows = list(csv.DictReader(open(sys.argv[2])))
assert j["model"] == "lcdm" and abs(j["params"]["omega_k"] - (-0.05)) < 1e-15
assert [r["z"] for r in j["rows"]] == [2, 0.3]
for a, b in zip(j["rows"], rows):
    for k, v in b.items():
        assert float(v) == a[k], (k, v, a[k])
PY
then pass "json and csv carry the same numbers"; else fail "json and csv carry the same numbers"; fi

run "$LANTERN" distance --model lcdm-flat --z-range 0.1:1:10
if [ "$STATUS" -eq 0 ] && [ "$(grep -cE '^ +[0-9.]+ +[0-9.]+ ' "$OUT")" -eq 10 ] && grep -q 'Mpc' "$OUT" &&
   grep -q 'radiation off' "$OUT"; then
    pass "table: ten rows with units and the parameters"
else
    fail "table: ten rows with units and the parameters"
fi

run "$LANTERN" distance --model lcdm-flat --z-range 0.01:1:3:log --format csv
if [ "$STATUS" -eq 0 ] && [ "$(cut -d, -f1 "$OUT" | tail -n +2 | tr '\n' ' ')" = "0.01 0.1 1 " ]; then
    pass "--z-range with log spacing"
else
    fail "--z-range with log spacing"
fi

# De Sitter: the age is infinite, null in JSON, inf in CSV.
run "$LANTERN" distance --model lcdm-flat --set omega_m=0 --z 1 --format json
if [ "$STATUS" -eq 0 ] && grep -q '"age_gyr":[[:space:]]*null' "$OUT"; then
    pass "de Sitter age is null in json"
else
    fail "de Sitter age is null in json"
fi
run "$LANTERN" distance --model lcdm-flat --set omega_m=0 --z 1 --format csv
expect_stdout "de Sitter age is inf in csv" '^1,.*,inf,70'

# Bad usage and unphysical parameters: status 2, a message, nothing on stdout.
run "$LANTERN" distance --z 1
expect_error "missing --model" 2 "--model is required"
run "$LANTERN" distance --model lcdm-flatt --z 1
expect_error "unknown model" 2 "unknown model 'lcdm-flatt'"
run "$LANTERN" distance --model lcdm-flat
expect_error "no redshifts" 2 "exactly one of --z and --z-range"
run "$LANTERN" distance --model lcdm-flat --z 1 --z-range 0:1:2
expect_error "both --z and --z-range" 2 "exactly one of --z and --z-range"
run "$LANTERN" distance --model lcdm-flat --z 0.1,,2
expect_error "empty redshift in the list" 2 "--z: '' is not a redshift"
run "$LANTERN" distance --model lcdm-flat --z 0.1,-2
expect_error "negative redshift" 2 "--z: '-2' is not a redshift"
run "$LANTERN" distance --model lcdm-flat --z 0.1,nan
expect_error "nan redshift" 2 "--z: 'nan' is not a redshift"
run "$LANTERN" distance --model lcdm-flat --z-range 0:1
expect_error "short --z-range" 2 "--z-range: '0:1' is not LO:HI:N"
run "$LANTERN" distance --model lcdm-flat --z-range 0:1:10:log
expect_error "log range from zero" 2 "log spacing needs LO > 0"
run "$LANTERN" distance --model lcdm-flat --z-range 2:1:10
expect_error "reversed range" 2 "need 0 <= LO <= HI"
run "$LANTERN" distance --model lcdm-flat --set omega_de=0.7 --z 1
expect_error "omega_de in a flat model" 2 "omega_de is derived"
run "$LANTERN" distance --model lcdm --set omega_k=0.1 --z 1
expect_error "omega_k is derived" 2 "omega_k is derived"
run "$LANTERN" distance --model lcdm --set wa=0.1 --z 1
expect_error "parameter the model lacks" 2 "model lcdm has no parameter wa"
run "$LANTERN" distance --model lcdm --set Om0=0.3 --z 1
expect_error "unknown parameter" 2 "unknown parameter 'Om0'"
run "$LANTERN" distance --model lcdm --set h0=abc --z 1
expect_error "non-numeric value" 2 "value of h0 is not a finite number"
run "$LANTERN" distance --model lcdm --set h0 --z 1
expect_error "--set without =" 2 "not of the form name=value"
run "$LANTERN" distance --model lcdm --set h0=70,h0=71 --z 1
expect_error "parameter set twice" 2 "h0 is given twice"
run "$LANTERN" distance --model lcdm --set h0=-70 --z 1
expect_error "negative h0" 2 "h0 must be positive"
run "$LANTERN" distance --model lcdm --set omega_m=0.1,omega_de=2 --z 0.05,2
expect_error "bounce before z = 2" 2 "not positive at z = "
run "$LANTERN" distance --model lcdm --set omega_m=0.5,omega_de=1.5 --z 100
expect_error "closed universe antipode" 2 "antipode"
run "$LANTERN" distance --model lcdm-flat --z 1 --format xml
expect_error "unknown format" 2 "'xml' is not one of table, csv, json"
run "$LANTERN" distance --model lcdm-flat --z 1 --bogus
expect_error "unknown option" 2 "unknown argument '--bogus'"
run "$LANTERN" distance --model
expect_error "option without its value" 2 "--model: needs a value"
run "$LANTERN" distance --model lcdm --set m_nu=0.3 --z 1
expect_error "m_nu with radiation off" 2 "m_nu and omega_b_h2 act only with radiation on"
run "$LANTERN" distance --model w0wa-flat --set w0=-0.5,wa=0.6,t_cmb=2.7255 --z 1 --format json
if [ "$STATUS" -eq 0 ] && /usr/bin/python3 -c '
import json, sys
e = json.load(open(sys.argv[1]))["early_universe"]
assert all(v is None for v in e.values()), e
' "$OUT"; then pass "w0 + wa >= 0: no early-universe numbers (null)"
else fail "w0 + wa >= 0: no early-universe numbers (null)"; fi
run "$LANTERN" distance --model=lcdm-flat --z=0.5 --set=h0=70 --format=csv
expect_stdout "--flag=value works as --flag value" "^0\.5,"
SETS=(); for i in $(seq 65); do SETS+=(--set h0=70); done
run "$LANTERN" distance --model lcdm-flat --z 1 "${SETS[@]}"
expect_error "a repeated option past its limit" 2 "--set: given more than 64 times"

# A write error (full disk) is a failed run, status 1, not a silent success.
if [ -w /dev/full ]; then
    "$LANTERN" distance --model lcdm-flat --z-range 0.1:1:2000 --format csv >/dev/full 2>"$ERR"
    STATUS=$?
    : >"$OUT"
    expect_error "write error gives status 1" 1 "could not write"
fi
