#!/usr/bin/env bash
# The whole test suite, as CI runs it (called by `make test`).
set -euo pipefail
cd "$(dirname "$0")/.."
export PYTHONHASHSEED=0 TQDM_DISABLE=1
exec .venv/bin/python -m pytest --nbval --nbval-current-env \
    --nbval-sanitize-with workbooks/sanitize.cfg -q "$@"
