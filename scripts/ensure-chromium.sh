#!/usr/bin/env bash
# Browser tests drive Debian's own chromium package; a browser is never downloaded from elsewhere.
set -euo pipefail

if [ -x /usr/bin/chromium ]; then
  exit 0
fi

if [ "$(id -u)" -ne 0 ]; then
  echo "ensure-chromium: /usr/bin/chromium is missing; run this script as root to install Debian's chromium package" >&2
  exit 1
fi

apt-get update -qq
DEBIAN_FRONTEND=noninteractive apt-get install -y -qq chromium
