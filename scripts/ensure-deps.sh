#!/usr/bin/env bash
# Installs the npm dependencies when they are missing or older than package-lock.json.
set -euo pipefail
cd "$(dirname "${BASH_SOURCE[0]}")/.."
stamp=node_modules/.package-lock.json
if [ ! -d node_modules ] || [ ! -f "$stamp" ] || [ package-lock.json -nt "$stamp" ]; then
  echo "[deps] installing npm dependencies (npm ci)" >&2
  npm ci --no-audit --no-fund --loglevel=error >&2
  touch "$stamp"
fi
