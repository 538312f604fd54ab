#!/usr/bin/env bash
# Benchmark of a whole catalogue run: fits the demo catalogue with SIDM and NFW halos on every
# core of this machine and reports the wall time and galaxies per minute.
# Usage: tests/bench_catalogue.sh [OUTPUT_DIR]
set -euo pipefail
root="$(cd "$(dirname "$0")/.." && pwd)"
out="${1:-$(mktemp -d)}"
(cd "$root" && cargo build --release --quiet --bin caldera)
galaxies=$(ls "$root"/demo_galaxies/*.ecsv | wc -l)
start=$(date +%s.%N)
"$root/target/release/caldera" --quiet fit "$root/demo_galaxies" --models sidm,nfw --out "$out" --force
end=$(date +%s.%N)
python3 - "$start" "$end" "$galaxies" "$(nproc)" <<'PY'
import sys
start, end, galaxies, cores = float(sys.argv[1]), float(sys.argv[2]), int(sys.argv[3]), sys.argv[4]
wall = end - start
print(f"demo catalogue: {galaxies} galaxies x 2 models in {wall:.1f} s on {cores} cores "
      f"= {galaxies / wall * 60:.1f} galaxies per minute")
PY
