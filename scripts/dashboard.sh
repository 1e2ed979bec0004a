#!/usr/bin/env bash
# Start the dashboard on the demo data (sets up .venv first if needed). serve.py serves app.py
# and loads the first page's modules while the server waits for its first user.
set -euo pipefail
cd "$(dirname "$0")/.."
scripts/setup.sh
# Streamlit's upload limit is the package's (model/io/upload_limits.toml, or
# STREAMLIT_SERVER_MAX_UPLOAD_SIZE when set): the value the upload guard applies too.
limit=$(.venv/bin/python -c "from model.io.uploads import upload_limit_mb; print(upload_limit_mb())")
exec .venv/bin/python -m streamlit run serve.py --server.maxUploadSize "$limit" "$@"
