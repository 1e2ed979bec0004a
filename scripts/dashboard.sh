#!/usr/bin/env bash
# Start the dashboard on the demo data (sets up .venv first if needed). serve.py serves app.py
# and loads the first page's modules while the server waits for its first user.
set -euo pipefail
cd "$(dirname "$0")/.."
scripts/setup.sh
exec .venv/bin/python -m streamlit run serve.py "$@"
