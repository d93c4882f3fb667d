#!/usr/bin/env bash
# The firmware tests compile the exported C decoder with Debian's gcc (plain and with -fsanitize=address,undefined);
# install gcc and the C library headers when either is missing. libasan and libubsan come with gcc (libgcc-*-dev);
# libc6-dev is only a recommendation of gcc, so it is named here.
set -euo pipefail

if command -v gcc >/dev/null 2>&1 && [ -f /usr/include/stdio.h ]; then
  exit 0
fi

echo "[gcc] installing Debian's gcc and libc6-dev" >&2
export DEBIAN_FRONTEND=noninteractive
sudo=""
if [ "$(id -u)" != 0 ]; then sudo="sudo"; fi
$sudo apt-get update -qq >/dev/null || true
$sudo apt-get install -y -qq --no-install-recommends gcc libc6-dev >/dev/null
