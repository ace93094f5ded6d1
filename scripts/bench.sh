#!/usr/bin/env bash
# Runs every benchmark program built from tests/bench/ (make bench).
set -eu
cd "$(dirname "$0")/.."
echo "machine: $(nproc) cores, $(grep -m1 'model name' /proc/cpuinfo | cut -d: -f2 | sed 's/^ *//')"
for b in build/tests/bench/bench_*; do
    [ -x "$b" ] || continue
    echo
    echo "== $(basename "$b")"
    "$b"
done
echo
echo "== samplers: the whole sample command per model (scripts/bench_samplers.sh; about a minute)"
bash scripts/bench_samplers.sh
echo
echo "== standardisation: JLA light curves (scripts/bench_standardise.sh; about a minute)"
bash scripts/bench_standardise.sh
echo
echo "== threads under load (scripts/bench_threads.sh; about a minute)"
bash scripts/bench_threads.sh
echo
echo "== side by side with numpy/scipy (scripts/bench_table.py; a few minutes)"
/usr/bin/python3 scripts/bench_table.py
