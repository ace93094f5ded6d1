#!/usr/bin/env bash
# The standardisation term on a real light-curve table (issue 21): the run
# file configs/jla-standardise.ini (JLA's 740 objects, flat LCDM, the latent
# likelihood with alpha, beta, gamma, M, four sigma_int and the 16
# population parameters): evaluations per second of the likelihood on one
# thread ('lantern bench'), then the whole 'lantern sample --out DIR'
# command with the default threads: its wall time (goal: under 60 s), its
# evaluations, smallest ESS, and which sampler finished it.
#
#   scripts/bench_standardise.sh          (make bench runs it)
set -eu
cd "$(dirname "$0")/.."
LANTERN=${LANTERN:-bin/lantern}
J="${LANTERN_SHARED:-../shared}/data/jla2014/jla_lcparams.txt"
if [ ! -r "$J" ]; then
    echo "standardisation: skipped (no $J)"
    exit 0
fi
out=$(mktemp -d)
trap 'rm -rf "$out"' EXIT
"$LANTERN" bench configs/jla-standardise.ini 2>&1 | sed 's/^/  /'
t0=$(date +%s%N)
"$LANTERN" sample configs/jla-standardise.ini --out "$out/run" --force --quiet > /dev/null 2>&1 || true
t1=$(date +%s%N)
/usr/bin/python3 - "$out/run/summary.json" "$(((t1 - t0) / 1000000))" <<'PY'
import json, sys
d = json.load(open(sys.argv[1]))
c = d["convergence"]
print("  sample --out: %.1f s wall (goal < 60 s), %d evaluations, smallest ESS %d, %s%s" % (
    int(sys.argv[2]) / 1000, c["evaluations"], round(c["ess_min"]),
    "importance sampling" if "importance" in d["sampler"]["method"] else "MCMC",
    "" if d["converged"] else " (NOT converged)"))
PY
