#!/usr/bin/env bash
# Set up the test environment and run the test suite (benchmarks are separate: see DEVELOPERS.md).
set -euo pipefail
cd "$(dirname "$0")/.."
bash installer/setup-env.sh test
export QT_QPA_PLATFORM=offscreen
# The tests run on every core (pytest-xdist); give -n 0 to run them in this one process.
exec .venv/bin/python -m pytest -n auto "$@"
