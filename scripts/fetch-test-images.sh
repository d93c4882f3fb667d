#!/usr/bin/env bash
# Fetches the permissively licensed sample images shipped by Debian's python3-skimage
# package into data/test-images/ for the benchmark and the image tests. Only textures and
# objects: no people, no insignia or brand marks (the package's camera and astronaut images
# show people, and its rocket photograph bears a launch company's marks, so they are left out).
# Licences, as the package's skimage/data/_fetchers.py states them:
#   coffee, chelsea, brick, grass, gravel, cell: CC0
#   ihc (immunohistochemistry micrograph): no known copyright restrictions
#   hubble_deep_field: public domain (captured by NASA)
# Idempotent: does nothing when exactly these images are there; images no longer on the list
# are removed so the benchmark (which reads the whole folder) never measures them.
# Never run by the product itself.
set -euo pipefail

root="$(cd "$(dirname "${BASH_SOURCE[0]}")/.." && pwd)"
dest="$root/data/test-images"
wanted=(cell.png coffee.png chelsea.png brick.png grass.png gravel.png ihc.png hubble_deep_field.jpg)

is_wanted() {
  local w
  for w in "${wanted[@]}"; do [[ "$w" == "$1" ]] && return 0; done
  return 1
}
# Images left from an earlier list (e.g. ones showing people) go, so only the list is measured.
drop_unlisted() {
  local p
  shopt -s nullglob nocaseglob
  for p in "$dest"/*.png "$dest"/*.jpg "$dest"/*.jpeg; do
    is_wanted "$(basename "$p")" || { rm -f "$p"; echo "removed $(basename "$p") (no longer on the list)"; }
  done
  shopt -u nullglob nocaseglob
}

missing=0
for f in "${wanted[@]}"; do
  [[ -s "$dest/$f" ]] || missing=1
done
if [[ $missing -eq 0 ]]; then
  drop_unlisted
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
drop_unlisted
echo "fetched ${#wanted[@]} images into data/test-images"
