#!/usr/bin/env bash
# Regenerates Caldera's demo catalogue: 16 invented galaxies of the invented "Kiln" survey,
# made by Caldera's own mock generator. Each galaxy's true parameters are in its .truth.json.
#
# Scenario: SIDM with a cross-section that falls with velocity (dwarfs ~3-7 cm^2/g, low-surface-
# brightness galaxies ~1-3 cm^2/g, spirals ~0.2-0.6 cm^2/g), plus one collisionless NFW spiral
# and one Burkert-cored dwarf for model comparison. Halo age 10 Gyr, H0 = 70 km/s/Mpc.
#
# Usage: demo_galaxies/make_demo.sh [OUTPUT_DIR]   (default: demo_galaxies)
# The binary is $CALDERA if set, else target/release/caldera (built with cargo if missing).
set -euo pipefail
root="$(cd "$(dirname "$0")/.." && pwd)"
out="${1:-$root/demo_galaxies}"
mkdir -p "$out"
caldera="${CALDERA:-$root/target/release/caldera}"
if [ ! -x "$caldera" ]; then
  (cd "$root" && cargo build --release --quiet --bin caldera)
fi
mock() { "$caldera" --quiet mock --force "$@"; }

# Dwarfs: gas-rich, small stellar disks, V_max ~ 30-60 km/s.
mock --name "Kiln D01" --halo sidm --v200 32 --c200 16 --cross-section 7 \
  --gas-mass 1.2e8 --gas-scale 1.2 --disk-mass 3e7 --disk-scale 0.5 \
  --r-min 0.2 --r-max 3.5 --points 14 --error-fraction 0.08 --error-floor 2.5 \
  --distance 3.2 --distance-err 0.3 --inclination 52 --inclination-err 5 --seed 1101 \
  --out "$out/kiln_d01.ecsv"
mock --name "Kiln D02" --halo sidm --v200 38 --c200 15 --cross-section 6 \
  --gas-mass 2.5e8 --gas-scale 1.6 --disk-mass 6e7 --disk-scale 0.6 \
  --r-min 0.25 --r-max 4.5 --points 16 --error-fraction 0.07 --error-floor 2.5 \
  --distance 4.1 --distance-err 0.4 --inclination 63 --inclination-err 4 --seed 1102 \
  --out "$out/kiln_d02.ecsv"
mock --name "Kiln D03" --halo sidm --v200 45 --c200 14 --cross-section 5 \
  --gas-mass 4e8 --gas-scale 2.0 --disk-mass 1.5e8 --disk-scale 0.8 \
  --r-min 0.3 --r-max 6 --points 18 --error-fraction 0.06 --error-floor 2 \
  --distance 5.5 --distance-err 0.5 --inclination 58 --inclination-err 4 --seed 1103 \
  --out "$out/kiln_d03.ecsv"
mock --name "Kiln D04" --halo sidm --v200 46 --c200 13 --cross-section 4 \
  --gas-mass 6e8 --gas-scale 2.2 --disk-mass 3e8 --disk-scale 1.0 \
  --r-min 0.3 --r-max 7 --points 20 --error-fraction 0.05 --error-floor 2 \
  --distance 7.0 --distance-err 0.7 --inclination 70 --inclination-err 3 --seed 1104 \
  --out "$out/kiln_d04.ecsv"
mock --name "Kiln D05" --halo sidm --v200 50 --c200 13 --cross-section 3 \
  --gas-mass 8e8 --gas-scale 2.5 --disk-mass 4e8 --disk-scale 1.1 \
  --r-min 0.4 --r-max 8 --points 20 --error-fraction 0.05 --error-floor 2 \
  --distance 8.3 --distance-err 0.8 --inclination 45 --inclination-err 5 --seed 1105 \
  --out "$out/kiln_d05.ecsv"
mock --name "Kiln D06" --halo burkert --rho0 4e7 --r0 2.2 \
  --gas-mass 3e8 --gas-scale 1.8 --disk-mass 1e8 --disk-scale 0.7 \
  --r-min 0.3 --r-max 6 --points 16 --error-fraction 0.06 --error-floor 2 \
  --distance 6.1 --distance-err 0.6 --inclination 55 --inclination-err 4 --seed 1106 \
  --notes "cored empirical halo (Burkert) for model comparison" \
  --out "$out/kiln_d06.ecsv"

# Low-surface-brightness galaxies: extended disks, V_max ~ 70-120 km/s.
mock --name "Kiln L01" --halo sidm --v200 70 --c200 11 --cross-section 3 \
  --gas-mass 1.5e9 --gas-scale 4.0 --disk-mass 1e9 --disk-scale 3.0 \
  --r-min 0.5 --r-max 14 --points 20 --error-fraction 0.05 --error-floor 3 \
  --distance 18 --distance-err 1.8 --inclination 48 --inclination-err 4 --seed 1201 \
  --out "$out/kiln_l01.ecsv"
mock --name "Kiln L02" --halo sidm --v200 80 --c200 10 --cross-section 2.5 \
  --gas-mass 2e9 --gas-scale 4.5 --disk-mass 2e9 --disk-scale 3.5 \
  --r-min 0.6 --r-max 16 --points 22 --error-fraction 0.05 --error-floor 3 \
  --distance 24 --distance-err 2.4 --inclination 60 --inclination-err 4 --seed 1202 \
  --out "$out/kiln_l02.ecsv"
mock --name "Kiln L03" --halo sidm --v200 90 --c200 10 --cross-section 2 \
  --gas-mass 2.5e9 --gas-scale 5.0 --disk-mass 3e9 --disk-scale 4.0 \
  --r-min 0.8 --r-max 20 --points 22 --error-fraction 0.04 --error-floor 3 \
  --distance 30 --distance-err 3 --inclination 66 --inclination-err 3 --seed 1203 \
  --out "$out/kiln_l03.ecsv"
mock --name "Kiln L04" --halo sidm --v200 100 --c200 9 --cross-section 1.5 \
  --gas-mass 3e9 --gas-scale 5.5 --disk-mass 5e9 --disk-scale 4.5 \
  --r-min 1.0 --r-max 22 --points 20 --error-fraction 0.04 --error-floor 3 \
  --distance 38 --distance-err 3.8 --inclination 57 --inclination-err 4 --seed 1204 \
  --out "$out/kiln_l04.ecsv"
mock --name "Kiln L05" --halo sidm --v200 110 --c200 9 --cross-section 1.2 \
  --gas-mass 3.5e9 --gas-scale 6.0 --disk-mass 7e9 --disk-scale 5.0 \
  --r-min 1.0 --r-max 25 --points 22 --error-fraction 0.04 --error-floor 3 \
  --distance 45 --distance-err 4.5 --inclination 72 --inclination-err 3 --seed 1205 \
  --out "$out/kiln_l05.ecsv"

# Spirals: massive stellar disks, some with bulges, V_max ~ 150-230 km/s.
mock --name "Kiln S01" --halo sidm --v200 150 --c200 9 --cross-section 0.6 \
  --gas-mass 5e9 --gas-scale 7 --disk-mass 3e10 --disk-scale 2.8 \
  --r-min 0.5 --r-max 28 --points 24 --error-fraction 0.03 --error-floor 4 \
  --distance 16 --distance-err 1.2 --inclination 62 --inclination-err 3 --seed 1301 \
  --out "$out/kiln_s01.ecsv"
mock --name "Kiln S02" --halo sidm --v200 165 --c200 8.5 --cross-section 0.5 \
  --gas-mass 6e9 --gas-scale 8 --disk-mass 4e10 --disk-scale 3.0 \
  --bulge-mass 8e9 --bulge-scale 0.6 \
  --r-min 0.5 --r-max 30 --points 24 --error-fraction 0.03 --error-floor 4 \
  --distance 21 --distance-err 1.6 --inclination 55 --inclination-err 3 --seed 1302 \
  --out "$out/kiln_s02.ecsv"
mock --name "Kiln S03" --halo sidm --v200 180 --c200 8 --cross-section 0.35 \
  --gas-mass 7e9 --gas-scale 9 --disk-mass 5e10 --disk-scale 3.4 \
  --bulge-mass 1.5e10 --bulge-scale 0.8 \
  --r-min 0.6 --r-max 34 --points 26 --error-fraction 0.03 --error-floor 4 \
  --distance 27 --distance-err 2 --inclination 68 --inclination-err 2 --seed 1303 \
  --out "$out/kiln_s03.ecsv"
mock --name "Kiln S04" --halo sidm --v200 200 --c200 7.5 --cross-section 0.2 \
  --gas-mass 8e9 --gas-scale 10 --disk-mass 6e10 --disk-scale 3.8 \
  --r-min 0.8 --r-max 38 --points 26 --error-fraction 0.03 --error-floor 5 \
  --distance 33 --distance-err 2.5 --inclination 59 --inclination-err 3 --seed 1304 \
  --out "$out/kiln_s04.ecsv"
mock --name "Kiln S05" --halo nfw --v200 190 --c200 9 \
  --gas-mass 7e9 --gas-scale 9 --disk-mass 5e10 --disk-scale 3.5 \
  --bulge-mass 1.2e10 --bulge-scale 0.7 \
  --r-min 0.6 --r-max 36 --points 24 --error-fraction 0.03 --error-floor 4 \
  --distance 29 --distance-err 2.2 --inclination 64 --inclination-err 3 --seed 1305 \
  --notes "collisionless NFW halo for model comparison" \
  --out "$out/kiln_s05.ecsv"

# Index: per-galaxy metadata completing the tables (survey notes).
cat > "$out/index.csv" <<'INDEX'
file,notes
kiln_d01.ecsv,Kiln survey dwarf (invented)
kiln_s05.ecsv,Kiln survey spiral (invented); collisionless NFW halo for model comparison
INDEX
