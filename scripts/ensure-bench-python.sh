#!/usr/bin/env bash
# `npm run bench` measures the engine against scikit-learn and faiss from Debian's packages, run by Debian's own
# python3 (/usr/bin/python3). Install them when missing: OpenBLAS is named so that NumPy and SciPy run on it (without
# it Debian's alternatives may choose the reference BLAS), and threadpoolctl reports which kernel family ran.
# python3-faiss is optional: the bench skips faiss where it does not import.
set -euo pipefail

PY=/usr/bin/python3
if [ -x "$PY" ] && "$PY" -c 'import sklearn, numpy, threadpoolctl' >/dev/null 2>&1 && ls /usr/lib/*/libopenblas.so.0 >/dev/null 2>&1; then
  exit 0
fi

echo "[bench] installing Debian's python3-sklearn, python3-threadpoolctl and OpenBLAS (and python3-faiss where available)" >&2
export DEBIAN_FRONTEND=noninteractive
sudo=""
if [ "$(id -u)" != 0 ]; then sudo="sudo"; fi
$sudo apt-get update -qq >/dev/null || true
$sudo apt-get install -y -qq --no-install-recommends python3 python3-sklearn python3-threadpoolctl libopenblas0-pthread >/dev/null
$sudo apt-get install -y -qq --no-install-recommends python3-faiss >/dev/null 2>&1 || echo "[bench] python3-faiss is not installable here; faiss is skipped" >&2
