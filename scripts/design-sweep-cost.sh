#!/bin/bash
# The dearest design of the ±10 % part of the design sweep: each requirement run under callgrind,
# the largest instruction count printed with its command (start-up included, about 1.1 M).
# Usage: scripts/design-sweep-cost.sh  (after cargo build --release -p biasjig)
cd "$(dirname "$0")/.."
B=target/release/biasjig
out=$(mktemp)
max=0; maxargs=""
for pol in "" "--pnp"; do for vcc in 9 12 15 24; do for gain in 6 10 15 20 30; do for rl in 10k 47k; do for sw in 0 0.2; do
  swing=$(python3 -c "print($sw*$vcc)")
  args="design --vcc $vcc --gain $gain --gain-tol 10 --rl $rl --rs 600 --ic-max 2m --swing $swing --temp-min -10 --temp-max 55 --beta 180 --beta-min 100 --beta-max 300 $pol"
  valgrind --tool=callgrind --callgrind-out-file="$out" $B $args >/dev/null 2>&1
  n=$(sed -n 's/^summary: \([0-9]*\).*/\1/p' "$out")
  if [ "$n" -gt "$max" ]; then max=$n; maxargs="$args"; fi
done; done; done; done; done
echo "max $max : $maxargs"
rm -f "$out"
