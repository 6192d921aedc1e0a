#!/usr/bin/env bash
# Install Loadledger for this user (no administrator rights needed):
#   the program        ~/.local/share/loadledger/        (XDG_DATA_HOME is honoured)
#   the command        ~/.local/bin/loadledger
#   the menu entry     ~/.local/share/applications/loadledger.desktop, its icon and the
#                      .loadledger file type
# Running it again replaces the installed copy (an update); uninstall.sh takes it all away.
set -euo pipefail
here="$(cd "$(dirname "$0")" && pwd)"
data="${XDG_DATA_HOME:-$HOME/.local/share}"
target="$data/loadledger"
command_dir="$HOME/.local/bin"
[ -x "$here/loadledger/loadledger" ] || { echo "install.sh: run it from the unpacked folder." >&2; exit 2; }

# Copy beside the old copy first, then swap: a copy that fails halfway leaves the old one working.
mkdir -p "$data"
rm -rf "$target.new"
cp -a "$here/loadledger" "$target.new"
rm -rf "$target"
mv "$target.new" "$target"
mkdir -p "$command_dir"
ln -sfn "$target/loadledger" "$command_dir/loadledger"

for icon in "$here"/share/icons/hicolor/*/apps/loadledger.*; do
  size="$(basename "$(dirname "$(dirname "$icon")")")"
  mkdir -p "$data/icons/hicolor/$size/apps"
  cp "$icon" "$data/icons/hicolor/$size/apps/"
done
mkdir -p "$data/applications" "$data/mime/packages"
sed "s|@PROGRAM@|$target/loadledger|" "$here/share/loadledger.desktop" \
  > "$data/applications/loadledger.desktop"
cp "$here/share/loadledger-mime.xml" "$data/mime/packages/loadledger.xml"
# Refresh the desktop's caches where the tools exist (desktops without them read the files).
command -v update-mime-database >/dev/null && update-mime-database "$data/mime" >/dev/null 2>&1 || true
command -v update-desktop-database >/dev/null && update-desktop-database "$data/applications" >/dev/null 2>&1 || true
command -v gtk-update-icon-cache >/dev/null && gtk-update-icon-cache -q -t "$data/icons/hicolor" >/dev/null 2>&1 || true

echo "Loadledger $("$target/loadledger" --version | cut -d' ' -f2) installed in $target."
echo "Open it from the applications menu, or run: loadledger"
case ":$PATH:" in
  *":$command_dir:"*) ;;
  *) echo "Note: $command_dir is not on your PATH; run $target/loadledger or add it." ;;
esac
# The window on an X11 desktop (Wayland desktops offer X11 too): Qt and its X11 platform plugin.
qt="$target/_internal/PySide6/Qt"
if ! missing="$(bash "$here/missing-libraries.sh" "$qt/plugins/platforms/libqxcb.so" \
  "$qt/lib/libQt6XcbQpa.so.6" "$qt/lib/libQt6Gui.so.6" "$qt/lib/libQt6Widgets.so.6")"; then
  echo "The window needs system libraries this computer lacks; ask for these packages:"
  echo "$missing" | sed 's/^/  /'
fi
