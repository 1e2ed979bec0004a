#!/usr/bin/env bash
# Start the dashboard on the demo data (sets up .venv first if needed).
set -euo pipefail
cd "$(dirname "$0")/.."
scripts/setup.sh
exec .venv/bin/python -m streamlit run app.py "$@"
