#!/usr/bin/env bash
# The static checks, with the project venv's tools (scripts/setup.sh makes .venv):
# ruff (lint, then format), mypy (types of the package) and import-linter (the layer
# contract). Every tool runs even when an earlier one fails; a failing tool's own output
# is shown, then one line per tool. The exit status is non-zero when any of them fails.
set -uo pipefail
cd "$(dirname "$0")/.."
bin=.venv/bin
status=0
summary=()
run() {
  local name=$1
  shift
  local out
  if [ ! -x "$bin/$1" ]; then
    summary+=("FAILED  $name: $bin/$1 is missing (run scripts/setup.sh)")
    status=1
    return
  fi
  if out=$("$bin/$@" 2>&1); then
    summary+=("ok      $name")
  else
    printf '%s\n%s\n\n' "---- $name: $*" "$out"
    summary+=("FAILED  $name ($*; its output is above)")
    status=1
  fi
}
run "ruff lint" ruff check --output-format=concise .
run "ruff format" ruff format --check .
run "mypy" mypy
run "import-linter" lint-imports
printf '%s\n' "${summary[@]}"
exit $status
