#!/usr/bin/env bash
# Takes the README's screenshot of the desktop app on a demo galaxy, with no GPU: Xvfb as the
# display, Mesa's software OpenGL (llvmpipe) for eframe's glow renderer, Pillow to grab the screen.
# Usage: tests/screenshot_app.sh [OUTPUT.png]   (default assets/app.png)
set -euo pipefail
root="$(cd "$(dirname "$0")/.." && pwd)"
out="${1:-$root/assets/app.png}"
if ! command -v Xvfb >/dev/null; then
  DEBIAN_FRONTEND=noninteractive apt-get install -y -q xvfb libgl1-mesa-dri libegl1 libegl-mesa0 \
    libx11-6 libx11-xcb1 libxcursor1 libxrandr2 libxi6 libxkbcommon-x11-0 >/dev/null
fi
python3 -c "import PIL" 2>/dev/null || python3 -m pip install --quiet pillow
(cd "$root" && cargo build --release --quiet --bin caldera-app)
display=":97"
Xvfb "$display" -screen 0 1400x860x24 >/dev/null 2>&1 &
xvfb=$!
trap 'kill "$app" "$xvfb" 2>/dev/null || true' EXIT
sleep 2
export DISPLAY="$display" LIBGL_ALWAYS_SOFTWARE=1 WINIT_UNIX_BACKEND=x11
cd "$root"
target/release/caldera-app demo_galaxies --export-dir "$(mktemp -d)" &
app=$!
# The pointer starts at the screen's centre, over the plot, where egui_plot marks the nearest
# curve point; it is moved to the status bar first (xdotool, when installed).
sleep 2
if command -v xdotool >/dev/null; then xdotool mousemove 1390 850; fi
sleep "${SCREENSHOT_WAIT:-12}"
python3 - "$display" "$out" <<'PY'
import sys
from PIL import ImageGrab
ImageGrab.grab(xdisplay=sys.argv[1]).save(sys.argv[2])
print("saved", sys.argv[2])
PY
