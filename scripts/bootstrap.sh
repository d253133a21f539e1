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
    "$VENV/bin/python" -m pip install --quiet -c constraints.txt -e ".[notebook,test]" 2>&1 \
        | grep -v "is ignored: it is neither a file nor a directory" || true
    "$VENV/bin/python" -c "import viscometry, numpy, scipy, sympy, pint, pandas, nbval, ipywidgets" \
        || { echo "[bootstrap] install failed" >&2; exit 1; }
    echo "$want" > "$STAMP"
fi
