#!/usr/bin/env bash
# Set up (or refresh) the project's virtual environment in .venv with every extra: the
# dashboard, PostgreSQL, numba, the test, documentation and browser tools, the linters.
# The versions are the tested ones of constraints.txt (docs/contributing/installs.md).
# Used by scripts/dashboard.sh and scripts/test.sh; safe to run again.
set -euo pipefail
cd "$(dirname "$0")/.."
PYTHON=${PYTHON:-python3}
if [ ! -x .venv/bin/python ]; then
  "$PYTHON" -m venv .venv
fi
stamp=.venv/.installed
if [ ! -f "$stamp" ] || [ pyproject.toml -nt "$stamp" ] || [ constraints.txt -nt "$stamp" ]; then
  .venv/bin/python -m pip install --quiet --upgrade pip
  .venv/bin/python -m pip install --quiet -c constraints.txt -e ".[dashboard,postgres,fast,test,docs,browser,dev]"
  touch "$stamp"
fi
