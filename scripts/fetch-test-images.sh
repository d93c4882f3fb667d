#!/usr/bin/env bash
# Fetches the permissively licensed sample photographs shipped by Debian's python3-skimage
# package (camera, coffee, chelsea, brick, grass, gravel: CC0; astronaut, rocket: public
# domain) into data/test-images/ for the benchmark and the image tests. Idempotent: does
# nothing when the images are already there. Never run by the product itself.
set -euo pipefail

root="$(cd "$(dirname "${BASH_SOURCE[0]}")/.." && pwd)"
dest="$root/data/test-images"
wanted=(camera.png coffee.png chelsea.png brick.png grass.png gravel.png astronaut.png rocket.jpg)

missing=0
for f in "${wanted[@]}"; do
  [[ -s "$dest/$f" ]] || missing=1
done
if [[ $missing -eq 0 ]]; then
  echo "test images present in data/test-images"
  exit 0
fi

command -v apt-get >/dev/null || { echo "fetch-test-images: apt-get is required" >&2; exit 1; }
work="$(mktemp -d)"
trap 'rm -rf "$work"' EXIT
cd "$work"
if ! apt-get download python3-skimage >/dev/null 2>&1; then
  apt-get update >/dev/null
  apt-get download python3-skimage >/dev/null
fi
deb="$(ls python3-skimage_*.deb | head -n 1)"
dpkg-deb -x "$deb" extracted
data_dir="$(find extracted -type d -path '*skimage/data' | head -n 1)"
[[ -n "$data_dir" ]] || { echo "fetch-test-images: no skimage/data folder in $deb" >&2; exit 1; }

mkdir -p "$dest.partial"
for f in "${wanted[@]}"; do
  [[ -f "$data_dir/$f" ]] || { echo "fetch-test-images: $f missing from $deb" >&2; exit 1; }
  cp "$data_dir/$f" "$dest.partial/$f"
done
# Only complete sets land in place, so an interrupted run leaves nothing half-copied.
mkdir -p "$dest"
mv "$dest.partial"/* "$dest"/
rmdir "$dest.partial"
echo "fetched ${#wanted[@]} images into data/test-images"
