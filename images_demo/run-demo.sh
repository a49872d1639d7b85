#!/usr/bin/env bash
# The demo of README command (a): Ostwick Optical Workshop (an invented shop)
# inspects lot OW-117 of plano-convex lenses against its test plate, its lab
# reads the radius of a long-radius lens from Newton's rings, and a window is
# mapped against the reference flat.
# Usage: bash images_demo/run-demo.sh [FIGURA]   (default: build/figura)
# Results go to out/demo/; the lot report to out/demo/lot-ow117/.
set -uo pipefail
here="$(cd "$(dirname "$0")" && pwd)"
top="$(cd "$here/.." && pwd)"
figura="${1:-build/figura}"
out="out/demo"
mkdir -p "$out/rendered"
status=0

echo "== 1. The demo photos are re-rendered from their gap files (same seeds)"
bash "$here/render.sh" "$figura" "$out/rendered" >/dev/null || exit 2
echo "   rendered into $out/rendered/ (compare with images_demo/)"

echo
echo "== 2. Why the contact spot is dark: crown glass on crown glass with an air gap"
"$figura" layers --upper-index 1.5168 --gap-index 1.0 --lower-index 1.5168 --wavelength sodium \
  --json "$out/layers.json" || exit 2

echo
echo "== 3. Lot OW-117 against the CC 51.68 mm test plate: figura inspect (job: config/ow117-job.ini)"
echo "   Seven photos, parts 01 to 07 (manifest config/ow117-parts.csv). Part 03 rocked on its"
echo "   rim in the press test: the manifest's contact column gives it contact = edge. Part 07"
echo "   was taken with the gain at maximum."
"$figura" inspect --job "$top/config/ow117-job.ini" --out "$out/lot-ow117" --force --jobs 2 \
  "$here"/ow117-01.tif "$here"/ow117-02.tif "$here"/ow117-03.tif "$here"/ow117-04.jpg \
  "$here"/ow117-05.tif "$here"/ow117-06.tif "$here"/ow117-07.tif
lot=$?
echo "   figura inspect exit code $lot (0 all pass, 1 a fail or indeterminate, 2 an unusable photo)"
[ "$lot" -le 2 ] || status=$lot

echo
echo "== 4. Lab bench: Newton's rings of a long-radius lens on a flat (mercury e line, 18 um per pixel)"
"$figura" rings "$here/lab-nr-01.tif" --wavelength mercury-e --pixel-pitch 18um \
  --json "$out/lab-nr-01.json" --overlay "$out/lab-nr-01-overlay.png" \
  --plot "$out/lab-nr-01-plot.svg" || status=$?

echo
echo "== 5. Window W01 on the reference flat (helium d line, air wedge thin on the left): surface map"
"$figura" map "$here/flat-w01.tif" --wavelength helium-d --thin-side left --pixel-pitch 60um \
  --json "$out/flat-w01.json" --height "$out/flat-w01-height.tif" \
  --picture "$out/flat-w01-map.png" || status=$?

echo
echo "The lot report: $out/lot-ow117/index.html (open it in a browser), one PDF"
echo "per part beside it, and summary.csv / summary.json."
echo "Other results (JSON, overlays, plots, the window's map) are in $out/;"
echo "truth files for comparison are beside the photos in images_demo/ (*.truth.json)."
exit $status
