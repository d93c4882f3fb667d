#!/usr/bin/env bash
# `npm test`: install what is missing, start a throwaway MariaDB and Redis, then type check, lint, build the
# client and run every vitest project; stop everything it started. Ends with `N passed, N failed`.
set -uo pipefail
root="$(cd "$(dirname "${BASH_SOURCE[0]}")/.." && pwd)"
cd "$root"

bash scripts/ensure-deps.sh || exit 1
bash scripts/db.sh ensure || exit 1
bash scripts/redis.sh ensure || exit 1
bash scripts/ensure-chromium.sh || exit 1
bash scripts/ensure-gcc.sh || exit 1
if [ -f scripts/fetch-test-images.sh ]; then bash scripts/fetch-test-images.sh || exit 1; fi

# Throwaway instances: their own data folders and ports, removed afterwards.
tmp="$(mktemp -d /tmp/cwt.XXXXXX)"
export DB_DIR="$tmp/db"
export DB_PORT="$(node scripts/free-port.mjs)"
export DB_HOST=127.0.0.1 DB_NAME=cellwright_test DB_USER=cellwright DB_PASSWORD="test-$(od -An -N8 -tx1 /dev/urandom | tr -d ' \n')"
export NODE_ENV=test LOG_LEVEL=silent
# Tests never use a Redis named by the caller's REDIS_URL: they get their own, whose URL they find in REDIS_URL.
unset REDIS_URL
export REDIS_DIR="$tmp/redis"
cleanup() {
  # Emptied here: with REDIS_URL set the script leaves a server alone, and this one is ours.
  REDIS_URL="" bash scripts/redis.sh stop >/dev/null 2>&1 || true
  bash scripts/db.sh stop >/dev/null 2>&1 || true
  rm -rf "$tmp"
}
trap cleanup EXIT
trap 'exit 130' INT TERM
bash scripts/db.sh start || exit 1
# Picked once MariaDB holds its port, so the two cannot be handed the same one.
export REDIS_PORT="$(node scripts/free-port.mjs)"
bash scripts/redis.sh start || exit 1
export REDIS_URL="redis://127.0.0.1:$REDIS_PORT"

failed_steps=()
step() {
  local name="$1"; shift
  echo "── $name" >&2
  if ! "$@"; then failed_steps+=("$name"); fi
}
step "type check" npx tsc --noEmit -p tsconfig.json
step "lint" npx eslint --max-warnings=0 .
step "client build" npx vite build --logLevel warn
report="$tmp/vitest.json"
step "vitest" npx vitest run --reporter=default --reporter=json --outputFile.json="$report" "$@"

# A failed type check, lint or build counts as one failed check each in the closing line.
gate_failures=0
for s in "${failed_steps[@]}"; do [ "$s" = vitest ] || gate_failures=$((gate_failures + 1)); done
summary="$(node -e '
  const fs = require("fs");
  let r = { numPassedTests: 0, numFailedTests: 0, numPendingTests: 0, numTodoTests: 0 };
  try { r = JSON.parse(fs.readFileSync(process.argv[1], "utf8")); } catch {}
  const extra = Number(process.argv[2]) || 0;
  const skipped = (r.numPendingTests || 0) + (r.numTodoTests || 0);
  let line = `${r.numPassedTests} passed, ${r.numFailedTests + extra} failed`;
  if (skipped) line += `, ${skipped} skipped`;
  console.log(line);
' "$report" "$gate_failures")"

if [ "${#failed_steps[@]}" -gt 0 ]; then
  echo "failed steps: ${failed_steps[*]}" >&2
fi
echo "$summary"
[ "${#failed_steps[@]}" -eq 0 ]
