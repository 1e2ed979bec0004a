#!/usr/bin/env bash
# Run the whole test suite (sets up .venv, and Debian's chromium for the browser tests).
set -euo pipefail
cd "$(dirname "$0")/.."
scripts/setup.sh
if [ ! -x /usr/bin/chromium ]; then
  if [ "$(id -u)" = 0 ] && command -v apt-get >/dev/null; then
    echo "Installing Debian's chromium for the browser tests..."
    apt-get update -qq
    DEBIAN_FRONTEND=noninteractive apt-get install -y -qq chromium >/dev/null
  else
    echo "Note: /usr/bin/chromium is missing; install Debian's chromium package (as root:" \
         "apt-get install chromium) or the browser tests will fail." >&2
  fi
fi
exec .venv/bin/python -m pytest "$@"
