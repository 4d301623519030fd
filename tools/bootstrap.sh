#!/usr/bin/env bash
# Create .venv (Python 3.11+) and install gapmatch with its test extra, once.
# Re-running is cheap: pip skips what is already installed.
set -euo pipefail
cd "$(dirname "$0")/.."
PY="${PYTHON:-python3.11}"
command -v "$PY" >/dev/null 2>&1 || PY=python3
if [ ! -x .venv/bin/python ]; then
  "$PY" -m venv .venv
fi
.venv/bin/python -m pip install --quiet --upgrade pip >/dev/null
.venv/bin/python -m pip install --quiet -e '.[test]'
