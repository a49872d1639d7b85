#!/usr/bin/env bash
# The demo of README command (a): Ostwick Optical Workshop (an invented shop)
# checks lot OW-117 of plano-convex lenses against its test plate, and its
# lab reads the radius of a long-radius lens from Newton's rings.
# Usage: bash images_demo/run-demo.sh [FIGURA]   (default: build/figura)
# Results go to out/demo/ (JSON per photo, overlays and plots).
set -uo pipefail
here="$(cd "$(dirname "$0")" && pwd)"
figura="${1:-build/figura}"
out="out/demo"
mkdir -p "$out/rendered"

echo "== 1. The demo photos are re-rendered from their gap files (same seeds)"
bash "$here/render.sh" "$figura" "$out/rendered" || exit 2

echo
echo "== 2. Why the contact spot is dark: crown glass on crown glass with an air gap"
"$figura" layers --upper-index 1.5168 --gap-index 1.0 --lower-index 1.5168 --wavelength sodium \
  --json "$out/layers.json" || exit 2

status=0
echo
echo "== 3. Lot OW-117 against the CC 51.68 mm test plate (sodium lamp, 40 um per pixel)"
for part in 01 02 04; do
  photo=$(ls "$here"/ow117-$part.* | grep -E '\.(tif|jpg)$')
  "$figura" rings "$photo" --wavelength sodium --pixel-pitch 40um \
    --reference-radius -51.68mm --contact centre \
    --json "$out/ow117-$part.json" --overlay "$out/ow117-$part-overlay.png" \
    --plot "$out/ow117-$part-plot.svg" || status=$?
done
# Part 03 rocks on its rim: the press test says contact at the edge.
"$figura" rings "$here/ow117-03.tif" --wavelength sodium --pixel-pitch 40um \
  --reference-radius -51.68mm --contact edge \
  --json "$out/ow117-03.json" --overlay "$out/ow117-03-overlay.png" \
  --plot "$out/ow117-03-plot.svg" || status=$?

echo
echo "== 4. Lab bench: Newton's rings of a long-radius lens on a flat (mercury e line, 18 um per pixel)"
"$figura" rings "$here/lab-nr-01.tif" --wavelength mercury-e --pixel-pitch 18um \
  --json "$out/lab-nr-01.json" --overlay "$out/lab-nr-01-overlay.png" \
  --plot "$out/lab-nr-01-plot.svg" || status=$?

echo
echo "Results (JSON, overlays, plots) are in $out/; truth files for comparison"
echo "are beside the photos in images_demo/ (*.truth.json)."
exit $status
