#!/usr/bin/env bash
# Build the standalone bundle: dist/loadledger/ holds the `loadledger` program (the window and
# every command) with Python, Qt and every library inside; on Linux also the .tar.gz with
# install.sh (and a .deb when dpkg-deb is there). Prints the bundle's size, the build time and
# the time the bundled window takes to appear.
#   bash installer/build-bundle.sh
# The build environment is build/venv (created here; set LOADLEDGER_BUILD_VENV to use another
# virtual environment that has the application installed). PyInstaller is installed into it
# when missing. Needs Python 3.11+ (PYTHON=...) and the package registry on the first run.
set -euo pipefail
cd "$(dirname "$0")/.."
started=$SECONDS
python="${PYTHON:-python3}"
venv="${LOADLEDGER_BUILD_VENV:-build/venv}"
if [ -x "$venv/Scripts/python.exe" ]; then bin="$venv/Scripts"; else bin="$venv/bin"; fi
if [ ! -x "$bin/python" ] && [ ! -x "$bin/python.exe" ]; then
  "$python" -c 'import sys; sys.exit(sys.version_info < (3, 11))' \
    || { echo "Loadledger needs Python 3.11 or newer (set PYTHON=...)." >&2; exit 2; }
  "$python" -m venv "$venv"
  if [ -x "$venv/Scripts/python.exe" ]; then bin="$venv/Scripts"; else bin="$venv/bin"; fi
fi
stamp="$venv/.installed-bundle"
want="$("$bin/python" -c 'import hashlib; print(hashlib.sha256(open("pyproject.toml", "rb").read()).hexdigest())')"
if [ "$(cat "$stamp" 2>/dev/null)" != "$want" ]; then
  "$bin/python" -m pip install --quiet --upgrade pip
  "$bin/python" -m pip install --quiet -e .
  echo "$want" > "$stamp"
fi
"$bin/python" -c "import PyInstaller" 2>/dev/null \
  || "$bin/python" -m pip install --quiet "pyinstaller>=6.10"
if [ "$(uname -s)" = "Linux" ]; then
  if ! QT_QPA_PLATFORM=offscreen "$bin/python" -c "import PySide6.QtWidgets" 2>/dev/null; then
    echo "Qt cannot load; missing system libraries:" >&2
    qt="$("$bin/python" -c 'import PySide6, os; print(os.path.dirname(PySide6.__file__))')"
    bash installer/missing-libraries.sh "$qt/Qt/lib" >&2 || true
    exit 2
  fi
fi

"$bin/python" installer/icons.py build/icons
build_started=$SECONDS
"$bin/python" -m PyInstaller --noconfirm --clean --log-level WARN \
  --distpath dist --workpath build/pyinstaller installer/loadledger.spec
build_seconds=$((SECONDS - build_started))
if [ "$(uname -s)" = "Linux" ] && command -v strip >/dev/null && command -v file >/dev/null; then
  # A Python built from source leaves debugging sections in libpython (about 18 MB).
  find dist/loadledger -name '*.so*' -type f -exec file {} + | grep 'with debug_info' \
    | cut -d: -f1 | while read -r library; do strip --strip-debug "$library"; done
fi
version="$("$bin/python" -c 'import engine; print(engine.__version__)')"
program=dist/loadledger/loadledger
[ -x "$program" ] || program=dist/loadledger/loadledger.exe

# The time to a shown window, the first run after the build, with no display and a fresh home.
timing="$("$bin/python" installer/time-start.py "$program")" || { echo "$timing" >&2; exit 1; }

packages=""
if [ "$(uname -s)" = "Linux" ]; then
  bash installer/package-linux.sh "$version"
  packages="$(ls dist/loadledger-"$version"-linux-*.tar.gz dist/loadledger_"$version"_*.deb 2>/dev/null || true)"
fi
echo
echo "bundle:           dist/loadledger ($(du -sh dist/loadledger | cut -f1) unpacked; target 350M)"
for file in $packages; do
  echo "package:          $file ($(du -h "$file" | cut -f1))"
done
echo "build:            ${build_seconds} s for PyInstaller, $((SECONDS - started)) s in all"
echo "window shown:     $timing (target 4 s)"
