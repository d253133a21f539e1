#!/usr/bin/env bash
# Create (or update) the project's virtual environment in .venv from the pinned constraints.
# Idempotent: re-runs pip only when pyproject.toml or constraints.txt changed.
set -euo pipefail
cd "$(dirname "$0")/.."
PY=${PYTHON:-python3}
VENV=.venv
STAMP=$VENV/.viscometry-stamp
want=$(cat pyproject.toml constraints.txt | sha256sum | cut -d' ' -f1)
if [ ! -x "$VENV/bin/python" ]; then
    echo "[bootstrap] creating $VENV with $($PY --version)"
    "$PY" -m venv "$VENV"
fi
if [ ! -f "$STAMP" ] || [ "$(cat "$STAMP")" != "$want" ]; then
    echo "[bootstrap] installing pinned dependencies (first run takes about two minutes)"
    "$VENV/bin/python" -m pip install --quiet --upgrade pip 2>&1 | grep -v "is ignored" || true
    "$VENV/bin/python" -m pip install --quiet -c constraints.txt -e ".[notebook,test,browser]" 2>&1 \
        | grep -v "is ignored: it is neither a file nor a directory" || true
    "$VENV/bin/python" -c "import viscometry, numpy, scipy, sympy, pint, pandas, nbval, ipywidgets" \
        || { echo "[bootstrap] install failed" >&2; exit 1; }
    echo "$want" > "$STAMP"
fi

# With --browser (make test): the real-browser workbook test drives Debian's Chromium through
# playwright (no browser download). Install it when missing and we can (root with apt-get, as
# on CI machines); otherwise the browser test is skipped locally and fails under CI=true.
if [ "${1:-}" = "--browser" ] && ! command -v chromium >/dev/null 2>&1; then
    if [ "$(id -u)" = "0" ] && command -v apt-get >/dev/null 2>&1; then
        echo "[bootstrap] installing Debian chromium for the browser test (about two minutes)"
        export DEBIAN_FRONTEND=noninteractive
        apt-get update -qq >/dev/null 2>&1 || true
        apt-get install -y -qq chromium >/dev/null 2>&1 \
            || echo "[bootstrap] could not install chromium; the browser test will not run" >&2
    else
        echo "[bootstrap] chromium not found and cannot be installed here; the browser test will be skipped" >&2
    fi
fi

