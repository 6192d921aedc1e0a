#!/usr/bin/env bash
# Remove what install.sh put in place. Project files and the window's settings stay.
set -euo pipefail
data="${XDG_DATA_HOME:-$HOME/.local/share}"
target="$data/loadledger"
command="$HOME/.local/bin/loadledger"
if [ -L "$command" ] && [ "$(readlink "$command")" = "$target/loadledger" ]; then
  rm -f "$command"
fi
rm -rf "$target" "$target.new"
rm -f "$data/applications/loadledger.desktop" "$data/mime/packages/loadledger.xml"
rm -f "$data"/icons/hicolor/*/apps/loadledger.png "$data"/icons/hicolor/scalable/apps/loadledger.svg
command -v update-mime-database >/dev/null && update-mime-database "$data/mime" >/dev/null 2>&1 || true
command -v update-desktop-database >/dev/null && update-desktop-database "$data/applications" >/dev/null 2>&1 || true
echo "Loadledger removed (your project files and settings were left alone)."
