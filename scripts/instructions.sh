#!/usr/bin/env bash
# Deterministic instruction counts of the core benchmarks under callgrind.
# Each bench binary takes a count N as its argument; the per-item figure is
# (Ir(N2) - Ir(N1)) / (N2 - N1), which cancels start-up and the one-off work.
# Usage: scripts/instructions.sh [bench ...]   (default: every core bench)
set -euo pipefail
cd "$(dirname "$0")/.."
command -v valgrind >/dev/null || { echo "instructions.sh: valgrind is needed (apt-get install valgrind)" >&2; exit 1; }
benches=("$@")
if [ ${#benches[@]} -eq 0 ]; then
  benches=($(sed -n 's/^name = "\(.*\)"$/\1/p' core/Cargo.toml | grep -v '^biasjig-core$'))
fi
for b in "${benches[@]}"; do
  bin=$(cargo bench -p biasjig-core --bench "$b" --no-run --message-format=json 2>/dev/null \
        | sed -n 's/.*"executable":"\([^"]*\)".*/\1/p' | tail -1)
  [ -x "$bin" ] || { echo "instructions.sh: no binary for bench $b" >&2; exit 1; }
  read -r n1 n2 unit < <("$bin" --counts 2>/dev/null || echo "100 1100 item")
  ir() {
    local out; out=$(mktemp)
    valgrind --tool=callgrind --callgrind-out-file="$out" "$bin" "$1" >/dev/null 2>&1
    sed -n 's/^summary: \([0-9]*\).*/\1/p' "$out"; rm -f "$out"
  }
  a=$(ir "$n1"); c=$(ir "$n2")
  echo "$b: $(( (c - a) / (n2 - n1) )) instructions per $unit (callgrind, N=$n1 and N=$n2)"
done
