#!/usr/bin/env bash
# Mixing check over invented galaxies from `caldera mock`: dwarfs, low-surface-brightness
# galaxies and bulge-dominated spirals, with SIDM halos over a range of σ/m, each fitted with the
# SIDM model under the default settings. Prints one line per galaxy (τ_max, converged, wall time)
# and a summary; exits non-zero when a chain is unconverged or τ_max exceeds 100 steps.
# Usage: tests/mock_mixing.sh [N_PER_CLASS (default 6)] [OUTPUT_DIR]
set -euo pipefail
root="$(cd "$(dirname "$0")/.." && pwd)"
per_class="${1:-6}"
out="${2:-$(mktemp -d)}"
(cd "$root" && cargo build --release --quiet --bin caldera)
caldera="$root/target/release/caldera"
mkdir -p "$out/tables"

# Parameters drawn from fixed seeds, so that every run makes the same galaxies. Ranges are
# invented for this check (common practice for each class, not a survey's distribution).
python3 - "$per_class" > "$out/specs.txt" <<'PY'
import math, random, sys
n = int(sys.argv[1])
rng = random.Random(20261203)
def log_uniform(lo, hi):
    return math.exp(rng.uniform(math.log(lo), math.log(hi)))
rows = []
for i in range(n):
    v200 = rng.uniform(35, 70)
    rows.append(("dwarf", i, v200, log_uniform(8, 18), log_uniform(0.3, 20),
                 f"--gas-mass {log_uniform(1e8, 8e8):.4g} --gas-scale {rng.uniform(1.0, 2.5):.3g} "
                 f"--disk-mass {log_uniform(2e7, 3e8):.4g} --disk-scale {rng.uniform(0.5, 1.2):.3g} "
                 f"--bulge-mass 0 --r-min 0.2 --r-max {rng.uniform(3, 7):.3g} --points {rng.randint(8, 16)} "
                 f"--distance {rng.uniform(3, 12):.3g} --distance-err 0.5"))
for i in range(n):
    v200 = rng.uniform(70, 130)
    rows.append(("lsb", i, v200, log_uniform(5, 12), log_uniform(0.3, 20),
                 f"--gas-mass {log_uniform(1e9, 5e9):.4g} --gas-scale {rng.uniform(4, 8):.3g} "
                 f"--disk-mass {log_uniform(5e8, 5e9):.4g} --disk-scale {rng.uniform(2.5, 5):.3g} "
                 f"--bulge-mass 0 --r-min 0.5 --r-max {rng.uniform(12, 25):.3g} --points {rng.randint(12, 22)} "
                 f"--distance {rng.uniform(15, 60):.3g} --distance-err 2"))
for i in range(n):
    v200 = rng.uniform(150, 250)
    rows.append(("spiral", i, v200, log_uniform(6, 12), log_uniform(0.1, 5),
                 f"--gas-mass {log_uniform(3e9, 1e10):.4g} --gas-scale {rng.uniform(6, 10):.3g} "
                 f"--disk-mass {log_uniform(2e10, 7e10):.4g} --disk-scale {rng.uniform(2.5, 4.5):.3g} "
                 f"--bulge-mass {log_uniform(8e9, 3e10):.4g} --bulge-scale {rng.uniform(0.4, 1.0):.3g} "
                 f"--r-min 0.5 --r-max {rng.uniform(20, 35):.3g} --points {rng.randint(18, 30)} "
                 f"--distance {rng.uniform(10, 40):.3g} --distance-err 1.5"))
for kind, i, v200, c200, sigma_m, extra in rows:
    print(f"Mock {kind} {i + 1:02d}|{v200:.4g}|{c200:.4g}|{sigma_m:.4g}|{extra}|{rng.randint(1, 10**6)}")
PY

made=0
while IFS='|' read -r name v200 c200 sigma_m extra seed; do
    file="$out/tables/$(echo "$name" | tr ' ' '_' | tr 'A-Z' 'a-z').ecsv"
    # Heavy baryons leave no core for a large σ/m: halve it until one exists (at most 4 times).
    for attempt in 1 2 3 4 5; do
        # shellcheck disable=SC2086 # `extra` holds several flags.
        if "$caldera" --quiet mock --name "$name" --halo sidm --v200 "$v200" --c200 "$c200" \
            --cross-section "$sigma_m" $extra --inclination 60 --inclination-err 3 \
            --seed "$seed" --out "$file" 2>/dev/null; then
            made=$((made + 1))
            break
        fi
        sigma_m=$(python3 -c "print($sigma_m / 2)")
        [ "$attempt" = 5 ] && echo "skipped $name: no SIDM halo for these parameters"
    done
done < "$out/specs.txt"

start=$(date +%s.%N)
"$caldera" --quiet fit "$out/tables" --models sidm --out "$out/fits" --force --no-figures
end=$(date +%s.%N)

python3 - "$out/fits/results.csv" "$start" "$end" "$made" "$(nproc)" <<'PY'
import csv, sys
path, start, end, made, cores = sys.argv[1], float(sys.argv[2]), float(sys.argv[3]), int(sys.argv[4]), sys.argv[5]
with open(path) as f:
    rows = list(csv.DictReader(line for line in f if not line.startswith("#")))
bad = 0
for row in rows:
    tau = float(row["tau_max"])
    ok = row["converged"] == "True" and tau <= 100
    bad += not ok
    print(f"{row['galaxy']:<16} tau_max {tau:7.1f}  converged {row['converged']:<5}  "
          f"sigma/m median {float(row['sigma_m_median [cm2 / g]']):.3g} cm2/g  {'' if ok else '<-- fails'}")
print(f"{len(rows)} of {made} mocks fitted in {float(end) - float(start):.1f} s on {cores} cores; "
      f"{bad} unconverged or with tau_max > 100 steps")
sys.exit(1 if bad or len(rows) != made else 0)
PY
