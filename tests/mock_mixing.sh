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
# Per class: V200 (km/s), c200, σ/m (cm²/g), gas and stellar-disk mass (Msun) and scale (kpc),
# bulge mass (Msun; None for none) and scale (kpc), radii (kpc), points, distance and its error (Mpc).
classes = {
    "dwarf": dict(v200=(35, 70), c200=(8, 18), sigma_m=(0.3, 20), gas=(1e8, 8e8), gas_scale=(1.0, 2.5),
                  disk=(2e7, 3e8), disk_scale=(0.5, 1.2), bulge=None, r_min=0.2, r_max=(3, 7),
                  points=(8, 16), distance=(3, 12), distance_err=0.5),
    "lsb": dict(v200=(70, 130), c200=(5, 12), sigma_m=(0.3, 20), gas=(1e9, 5e9), gas_scale=(4, 8),
                disk=(5e8, 5e9), disk_scale=(2.5, 5), bulge=None, r_min=0.5, r_max=(12, 25),
                points=(12, 22), distance=(15, 60), distance_err=2),
    "spiral": dict(v200=(150, 250), c200=(6, 12), sigma_m=(0.1, 5), gas=(3e9, 1e10), gas_scale=(6, 10),
                   disk=(2e10, 7e10), disk_scale=(2.5, 4.5), bulge=((8e9, 3e10), (0.4, 1.0)),
                   r_min=0.5, r_max=(20, 35), points=(18, 30), distance=(10, 40), distance_err=1.5),
}
rows = []
for kind, c in classes.items():
    for i in range(n):
        v200 = rng.uniform(*c["v200"])
        c200, sigma_m = log_uniform(*c["c200"]), log_uniform(*c["sigma_m"])
        # Drawn in the order the flags are written (the seed fixes the galaxies).
        extra = (f"--gas-mass {log_uniform(*c['gas']):.4g} --gas-scale {rng.uniform(*c['gas_scale']):.3g} "
                 f"--disk-mass {log_uniform(*c['disk']):.4g} --disk-scale {rng.uniform(*c['disk_scale']):.3g} ")
        if c["bulge"]:
            extra += (f"--bulge-mass {log_uniform(*c['bulge'][0]):.4g} "
                      f"--bulge-scale {rng.uniform(*c['bulge'][1]):.3g} ")
        else:
            extra += "--bulge-mass 0 "
        extra += (f"--r-min {c['r_min']} --r-max {rng.uniform(*c['r_max']):.3g} "
                  f"--points {rng.randint(*c['points'])} --distance {rng.uniform(*c['distance']):.3g} "
                  f"--distance-err {c['distance_err']}")
        rows.append((kind, i, v200, c200, sigma_m, extra))
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
            --seed "$seed" --out "$file" --force 2>/dev/null; then
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
    again = row.get("resampled_in_halo_coordinates") == "True"
    print(f"{row['galaxy']:<16} tau_max {tau:7.1f}  converged {row['converged']:<5}  "
          f"sigma/m median {float(row['sigma_m_median [cm2 / g]']):.3g} cm2/g  "
          f"{'(halo coordinates) ' if again else ''}{'' if ok else '<-- fails'}")
print(f"{len(rows)} of {made} mocks fitted in {float(end) - float(start):.1f} s on {cores} cores; "
      f"{bad} unconverged or with tau_max > 100 steps")
sys.exit(1 if bad or len(rows) != made else 0)
PY
