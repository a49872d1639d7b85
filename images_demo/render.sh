#!/usr/bin/env bash
# Re-renders the demo photographs from the gap files beside them, with the
# seeds they record. Usage: bash images_demo/render.sh [FIGURA] [OUTDIR]
# (defaults: build/figura, images_demo itself).
set -euo pipefail
here="$(cd "$(dirname "$0")" && pwd)"
figura="${1:-build/figura}"
out="${2:-$here}"
mkdir -p "$out"
for gap in "$here"/*.ini; do
  name="$(basename "${gap%.ini}")"
  ext=tif
  grep -q '^jpeg-quality' "$gap" && ext=jpg
  [ -e "$out/$name.$ext" ] && [ "$out" = "$here" ] && rm -f "$out/$name.$ext" "$out/$name.truth.json"
  "$figura" simulate --gap "$gap" --out "$out/$name.$ext"
done
