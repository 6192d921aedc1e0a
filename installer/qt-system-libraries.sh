#!/usr/bin/env bash
# Qt needs a few system libraries even when it draws offscreen. Install them from Debian's
# packages when they are missing (only possible as root; otherwise say what is needed).
set -euo pipefail
cd "$(dirname "$0")/.."
if QT_QPA_PLATFORM=offscreen .venv/bin/python -c "import PySide6.QtWidgets" 2>/dev/null; then
  exit 0
fi
packages="libegl1 libgl1 libxkbcommon0 libfontconfig1 libdbus-1-3 libglib2.0-0"
if [ "$(id -u)" = "0" ] && command -v apt-get >/dev/null; then
  apt-get update -qq && DEBIAN_FRONTEND=noninteractive apt-get install -y -qq $packages >/dev/null
else
  qt="$(.venv/bin/python -c 'import PySide6, os; print(os.path.dirname(PySide6.__file__))')"
  echo "Qt cannot load; it misses these system libraries:" >&2
  bash installer/missing-libraries.sh "$qt/Qt/lib" "$qt/Qt/plugins/platforms/libqoffscreen.so" \
    >&2 || true
  echo "(the usual set: $packages)" >&2
  exit 2
fi
