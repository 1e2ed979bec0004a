#!/usr/bin/env bash
# Run the whole test suite (sets up .venv, and Debian's chromium for the browser tests).
# With no arguments: every test but the browser ones on both cores; then the browser tests
# on both cores (each worker has its own chromium and a dashboard its tests share; a test
# file that saves starts a dashboard of its own); last, the browser tests marked
# browser_alone, one at a time (the load test: 20 sessions with a time limit each).
# With arguments: pytest with those arguments, as given.
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
if [ $# -gt 0 ]; then
  exec .venv/bin/python -m pytest "$@"
fi
status=0
.venv/bin/python -m pytest -m "not browser" -n 2 || status=$?
.venv/bin/python -m pytest -m "browser and not browser_alone" -n 2 || status=$?
.venv/bin/python -m pytest -m browser_alone || status=$?
exit $status
