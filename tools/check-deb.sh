#!/usr/bin/env bash
# Fresh-machine check of the Debian package (by hand, not part of CI; see
# DEVELOPERS.md): builds the .deb with CPack in a build tree, makes a clean
# Debian 12 (bookworm) root with debootstrap in a scratch folder, installs
# the package there with `apt-get install ./figura_*.deb` (apt pulls the
# dependencies dpkg-shlibdeps recorded from the Debian mirror), then runs
# `figura --version` and `figura rings` on a demo JPEG (decoded through the
# OpenCV codec module the package installs) inside the clean root.
#
# Usage (as root):  bash tools/check-deb.sh [BUILD_DIR] [SCRATCH_DIR]
#   BUILD_DIR    a configured build tree (default: build-deb, configured
#                here as Release when absent)
#   SCRATCH_DIR  where the clean root is made (default:
#                /tmp/figura-check-deb); it is removed first and at the end
#                unless KEEP_ROOT=1
# Needs debootstrap (apt-get install debootstrap; a tool of this check, not
# a project dependency) and access to the Debian mirror (MIRROR, default
# http://deb.debian.org/debian). Exit code 0 when every step passed.
set -euo pipefail

top="$(cd "$(dirname "$0")/.." && pwd)"
build="${1:-$top/build-deb}"
scratch="${2:-/tmp/figura-check-deb}"
mirror="${MIRROR:-http://deb.debian.org/debian}"
root="$scratch/root"
start=$(date +%s)

step() { printf '\n== %s (%ds)\n' "$*" $(( $(date +%s) - start )); }
die() { echo "check-deb: $*" >&2; exit 1; }

[ "$(id -u)" -eq 0 ] || die "run as root (debootstrap and chroot need it)"
command -v debootstrap >/dev/null || die "debootstrap is missing: apt-get install debootstrap"

step "1. Build the package in $build"
if [ ! -f "$build/CMakeCache.txt" ]; then
  cmake -S "$top" -B "$build" -G Ninja -DCMAKE_BUILD_TYPE=Release -DFIGURA_BUILD_TESTS=OFF
fi
cmake --build "$build" -j2 --target figura figura_opencv_codecs
rm -f "$build"/figura_*.deb
(cd "$build" && cpack -G DEB >/dev/null)
deb="$(ls "$build"/figura_*.deb)"
echo "package: $deb ($(du -k "$deb" | cut -f1) KiB)"
dpkg-deb --field "$deb" Package Version Depends

step "2. A clean Debian 12 root (debootstrap --variant=minbase bookworm)"
cleanup() {
  for m in proc dev/pts dev; do
    mountpoint -q "$root/$m" 2>/dev/null && umount -l "$root/$m"
  done
  if [ "${KEEP_ROOT:-0}" != 1 ]; then rm -rf "$scratch"; fi
}
trap cleanup EXIT
rm -rf "$scratch"
mkdir -p "$scratch"
debootstrap --variant=minbase bookworm "$root" "$mirror" >"$scratch/debootstrap.log" 2>&1 ||
  { tail -20 "$scratch/debootstrap.log"; die "debootstrap failed"; }
echo "base system: $(du -smx "$root" | cut -f1) MiB, $(chroot "$root" dpkg-query -f '.\n' -W | wc -l) packages"
mount -t proc proc "$root/proc"
mount --bind /dev "$root/dev"
mount --bind /dev/pts "$root/dev/pts"
cp /etc/resolv.conf "$root/etc/resolv.conf"
echo "deb $mirror bookworm main" >"$root/etc/apt/sources.list"

step "3. apt-get install ./$(basename "$deb") inside it"
cp "$deb" "$root/tmp/"
before=$(chroot "$root" dpkg-query -f '.\n' -W | wc -l)
chroot "$root" apt-get update -qq
chroot "$root" env DEBIAN_FRONTEND=noninteractive apt-get install -y -qq \
  "/tmp/$(basename "$deb")" >"$scratch/apt.log" 2>&1 ||
  { tail -20 "$scratch/apt.log"; die "apt-get install failed"; }
after=$(chroot "$root" dpkg-query -f '.\n' -W | wc -l)
echo "packages pulled in: $((after - before)) (root now $(du -smx "$root" | cut -f1) MiB)"
chroot "$root" dpkg -L figura | grep -E 'bin/|lib/|share/figura/|man1/' | sed 's/^/  /'

step "4. figura --version and figura rings on a demo JPEG inside the clean root"
# No figura build tree, no compiler, no -dev package in here: only the
# package and what apt pulled in.
chroot "$root" sh -c 'command -v c++ cmake' && die "the clean root has a compiler"
chroot "$root" figura --version
mkdir -p "$root/tmp/demo"
cp "$top/images_demo/ow117-04.jpg" "$top/images_demo/ow117-04.truth.json" "$root/tmp/demo/"
chroot "$root" figura rings /tmp/demo/ow117-04.jpg --wavelength sodium --pixel-pitch 40um \
  --reference-radius -51.68mm --test-diameter 20mm --json /tmp/demo/ow117-04.json
python3 - "$root/tmp/demo/ow117-04.json" "$root/tmp/demo/ow117-04.truth.json" <<'EOF'
import json, sys
r = json.load(open(sys.argv[1]))
t = json.load(open(sys.argv[2]))
got = r["part_radius_mm"]
true = t["settings"]["gap"]["part_radius_mm"]
u95 = r["part_radius_u95_mm"]
print(f"part radius {got:.5f} mm, truth {true:.5f} mm, U95 {u95:.5f} mm, "
      f"input format {r['input']['format']}")
sys.exit(0 if r["status"]["state"] != "error" and abs(got - true) <= max(u95, 2e-4) else 1)
EOF
# The codec module is what read the JPEG: without it the photo is refused.
module="$(chroot "$root" dpkg -L figura | grep '\.so$' | head -1)"
[ -n "$module" ] || die "the package holds no codec module"
mv "$root$module" "$root$module.off"
if chroot "$root" figura rings /tmp/demo/ow117-04.jpg --wavelength sodium \
     --pixel-pitch 40um >/dev/null 2>"$scratch/nomodule.txt"; then
  die "a JPEG was read without the codec module"
fi
echo "without $module: $(head -1 "$scratch/nomodule.txt")"
mv "$root$module.off" "$root$module"

step "done: the package installs and runs on a fresh Debian 12"
