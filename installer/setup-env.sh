#!/usr/bin/env bash
# Create (or refresh) the project's virtual environment in .venv.
#   installer/setup-env.sh          the application
#   installer/setup-env.sh test     the application plus the test tools and open data sets
# Re-running is cheap: nothing is reinstalled while pyproject.toml is unchanged.
set -euo pipefail
cd "$(dirname "$0")/.."
extra="${1:-}"
python="${PYTHON:-python3}"
"$python" - <<'PY' || { echo "Loadledger needs Python 3.11 or newer (set PYTHON=...)." >&2; exit 2; }
import sys
sys.exit(0 if sys.version_info >= (3, 11) else 1)
PY
[ -x .venv/bin/python ] || "$python" -m venv .venv
stamp=".venv/.installed-${extra:-app}"
want="$(sha256sum pyproject.toml | cut -d' ' -f1)"
if [ "$(cat "$stamp" 2>/dev/null)" != "$want" ]; then
  .venv/bin/python -m pip install --quiet --upgrade pip
  if [ -n "$extra" ]; then
    .venv/bin/python -m pip install --quiet -e ".[${extra}]"
  else
    .venv/bin/python -m pip install --quiet -e .
  fi
  echo "$want" > "$stamp"
fi
bash installer/qt-system-libraries.sh
