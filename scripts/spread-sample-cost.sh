#!/bin/bash
# Instructions per Monte Carlo sample of `biasjig spread` as a user runs it (a stage with a load, so
# the midband gain of every sample is computed): callgrind on the command with --runs 2000 and
# --runs 22000, the difference divided by 20 000 (start-up, worst case and sensitivity cancel).
# Usage: scripts/spread-sample-cost.sh  (after cargo build --release -p biasjig)
#        SPREAD_ARGS="spread --design FILE --json" scripts/spread-sample-cost.sh  (another stage or
#        requirement, for example a design whose low corner is sampled)
set -euo pipefail
cd "$(dirname "$0")/.."
B=target/release/biasjig
ARGS="${SPREAD_ARGS:-spread --vcc 12 --r1 47k --r2 10k --rc 4k7 --re1 220 --re2 1k --rl 15k --rs 600 --beta 180 --beta-min 100 --beta-max 300 --temp-min -10 --temp-max 55 --json}"
ir() { local o; o=$(mktemp); valgrind --tool=callgrind --callgrind-out-file="$o" $B $ARGS --runs "$1" >/dev/null 2>&1; sed -n 's/^summary: \([0-9]*\).*/\1/p' "$o"; rm -f "$o"; }
a=$(ir 2000); c=$(ir 22000)
echo "spread (command line, with the gain): $(( (c - a) / 20000 )) instructions per sample (N=2000 and 22000)"
