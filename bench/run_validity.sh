#!/bin/sh
# Runs the validity benchmarks one after another (raw outputs in bench/out/).
# Usage: nohup nice -n 10 sh bench/run_validity.sh > bench/out/validity.log 2>&1 &
# To keep editing src/ while it runs, run it from a snapshot of the tree:
#   git archive HEAD src bench | tar -x -C /tmp/snap
#   cd /tmp/snap && BENCH_OUT=$PWD_OF_TREE/bench/out PYTHONPATH=/tmp/snap/src PY=$TREE/.venv/bin/python sh bench/run_validity.sh
set -e
cd "$(dirname "$0")/.."
PY=${PY:-.venv/bin/python}
JOBS=${JOBS:-2}
$PY bench/bench_control_null.py --datasets 200 --jobs "$JOBS" ${DESIGNS:+--designs "$DESIGNS"}
$PY bench/bench_interval.py --datasets 200 --reps 0 --jobs "$JOBS"
$PY bench/bench_control_power.py --datasets 50 --jobs "$JOBS"
$PY bench/bench_interval.py --datasets 100 --reps 10 --jobs "$JOBS"
