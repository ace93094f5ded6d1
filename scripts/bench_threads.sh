#!/usr/bin/env bash
# The default thread count against one thread, on a loaded machine (issue 16).
#
# An OpenMP parallel region around microseconds of work stalls when the
# machine has other work: threads spin at the region's barrier while one of
# them waits for a core. The stall needs load, so this starts one busy
# background process, then runs `lantern compare` on the binned Pantheon
# table (two models) with the default threads and with --threads 1,
# alternating, RUNS times each, and prints both medians and their ratio.
# The aim (issue 16): the default is no slower than 1.5 times one thread.
#
#   scripts/bench_threads.sh            (make bench runs it)
#   RUNS=3 LANTERN=/path/to/lantern scripts/bench_threads.sh
set -eu
cd "$(dirname "$0")/.."
LANTERN=${LANTERN:-bin/lantern}
RUNS=${RUNS:-5}
P="${LANTERN_SHARED:-../shared}/data/pantheon2018"
ARGS=(compare --data "$P/lcparam_DS17f.txt" --columns z=zcmb,zhel=zhel,mag=mb,err=dmb
      --cov "$P/sys_DS17f.txt" --models lcdm-flat,wcdm-flat --prior w0=uniform:-2:0
      --format json --quiet)
if [ ! -r "$P/lcparam_DS17f.txt" ]; then
    echo "threads under load: skipped (no $P/lcparam_DS17f.txt)"
    exit 0
fi

bash -c 'while :; do :; done' &
busy=$!
trap 'kill "$busy" 2>/dev/null || true' EXIT

# seconds of wall time of one run; a failed run fails the benchmark
timed() {
    local t0=$EPOCHREALTIME
    "$LANTERN" "${ARGS[@]}" "$@" >/dev/null 2>&1
    echo "$EPOCHREALTIME $t0" | awk '{printf "%.3f\n", $1 - $2}'
}
median() { printf '%s\n' "$@" | sort -g | awk '{a[NR] = $1} END {print (NR % 2) ? a[(NR + 1) / 2] : (a[NR / 2] + a[NR / 2 + 1]) / 2}'; }

dflt=() one=()
for ((i = 0; i < RUNS; i++)); do
    dflt+=("$(timed)")
    one+=("$(timed --threads 1)")
done
md=$(median "${dflt[@]}")
m1=$(median "${one[@]}")
echo "compare, binned Pantheon, 2 models, 1 busy background process, $RUNS runs each:" \
     "default threads median $md s, --threads 1 median $m1 s," \
     "ratio $(awk -v a="$md" -v b="$m1" 'BEGIN {printf "%.2f", a / b}') (aim: at most 1.5)"
echo "  default: ${dflt[*]}"
echo "  --threads 1: ${one[*]}"
