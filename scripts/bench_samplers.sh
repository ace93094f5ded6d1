#!/usr/bin/env bash
# The samplers' efficiency (issue 20): for each of the six models on the
# 1048-object Pantheon 2018 table (statistical errors), and for supernovae +
# DESI 2024 BAO + a BBN measurement of omega_b_h2 on flat w0-wa, the whole
# 'lantern sample --out DIR' command with its default sampler: evaluations
# (convergence.evaluations in summary.json: best fit, nested seed, pilot,
# warm-up, compression checks and polish included), the smallest ESS, ESS
# per evaluation, which sampler finished it, and the wall time of the whole
# command (median of RUNS runs) on one thread and with the default threads.
# The goal: ESS per evaluation >= 0.05 for every model; w0wa-flat under 2 s
# and lcdm-flat under 0.5 s, both with --out.
#
#   scripts/bench_samplers.sh            (make bench runs it)
#   RUNS=3 LANTERN=/path/to/lantern scripts/bench_samplers.sh
set -eu
cd "$(dirname "$0")/.."
LANTERN=${LANTERN:-bin/lantern}
RUNS=${RUNS:-3}
S="${LANTERN_SHARED:-../shared}/data"
P="$S/pantheon2018/lcparam_full_long_zhel.txt"
if [ ! -r "$P" ]; then
    echo "samplers: skipped (no $P)"
    exit 0
fi
SN=(--data "$P" --columns z=zcmb,zhel=zhel,mag=mb,err=dmb,id=name)
# BBN: omega_b h^2 = 0.02218 +- 0.00055 (the BBN value DESI 2024 VI used
# with its BAO, after Schoeneberg et al. 2024; from memory)
BAO=(--bao "$S/desi2024_bao/bao_dr1.csv" --bao-cov "$S/desi2024_bao/bao_dr1_cov.txt"
     --rd formula --measure omega_b_h2=0.02218:0.00055)
out=$(mktemp -d)
trap 'rm -rf "$out"' EXIT

# median wall time of RUNS runs of the command "$@" (seconds)
wall() {
    for _ in $(seq "$RUNS"); do
        local t0 t1
        t0=$(date +%s%N)
        "$@" > /dev/null 2>&1 || true
        t1=$(date +%s%N)
        echo $(((t1 - t0) / 1000000))
    done | sort -n | awk '{a[NR]=$1} END {printf "%.2f", a[int((NR+1)/2)] / 1000}'
}

printf '| %-22s | %11s | %6s | %10s | %-10s | %9s | %9s |\n' "posterior" "evaluations" "ESS" \
    "ESS / eval" "sampler" "1 thread" "default"
printf '| %-22s | %11s | %6s | %10s | %-10s | %9s | %9s |\n' "---" "---:" "---:" "---:" "---" \
    "---:" "---:"
row() {
    local name=$1
    shift
    "$LANTERN" sample "$@" --out "$out/run" --force --quiet --threads 1 > /dev/null 2>&1 || true
    local stats
    stats=$(/usr/bin/python3 - "$out/run/summary.json" <<'EOF'
import json, sys
d = json.load(open(sys.argv[1]))
c = d["convergence"]
print(c["evaluations"], round(c["ess_min"]), "%.3f" % c["ess_per_evaluation"],
      "importance" if "importance" in d["sampler"]["method"] else "mcmc",
      "yes" if d["converged"] else "no")
EOF
)
    read -r ev ess per method conv <<< "$stats"
    [ "$conv" = yes ] || method="$method (not converged)"
    local t1 td
    t1=$(wall "$LANTERN" sample "$@" --out "$out/run" --force --quiet --threads 1)
    td=$(wall "$LANTERN" sample "$@" --out "$out/run" --force --quiet)
    printf '| %-22s | %11s | %6s | %10s | %-10s | %7s s | %7s s |\n' "$name" "$ev" "$ess" "$per" \
        "$method" "$t1" "$td"
}
for m in lcdm-flat lcdm wcdm-flat wcdm w0wa-flat w0wa; do
    row "$m" "${SN[@]}" --model "$m"
done
row "w0wa-flat SN+BAO+BBN" "${SN[@]}" "${BAO[@]}" --model w0wa-flat
