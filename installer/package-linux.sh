#!/usr/bin/env bash
# Package the built bundle (dist/loadledger) for Linux:
#   dist/loadledger-VERSION-linux-ARCH.tar.gz   the bundle, the menu entry, icons, install.sh
#                                                and uninstall.sh (per-user, no root needed)
#   dist/loadledger_VERSION_ARCH.deb            the same under /opt, when dpkg-deb is there
# Called by build-bundle.sh; needs build/icons (installer/icons.py).
#   bash installer/package-linux.sh VERSION
set -euo pipefail
cd "$(dirname "$0")/.."
version="${1:?usage: package-linux.sh VERSION}"
[ -x dist/loadledger/loadledger ] || { echo "build the bundle first (build-bundle.sh)" >&2; exit 2; }
machine="$(uname -m)"

# share/: the menu entry, the file type and the icon in each size, laid out as on the system.
share_tree() {
  local share="$1"
  mkdir -p "$share/icons/hicolor/scalable/apps"
  cp desktop/loadledger.svg "$share/icons/hicolor/scalable/apps/loadledger.svg"
  for png in build/icons/loadledger-*.png; do
    size="${png##*-}"; size="${size%.png}"
    mkdir -p "$share/icons/hicolor/${size}x${size}/apps"
    cp "$png" "$share/icons/hicolor/${size}x${size}/apps/loadledger.png"
  done
}

stage="build/package/loadledger-$version-linux-$machine"
rm -rf build/package && mkdir -p "$stage/share"
cp -a dist/loadledger "$stage/loadledger"
share_tree "$stage/share"
cp installer/linux/loadledger.desktop "$stage/share/loadledger.desktop"
cp installer/linux/loadledger-mime.xml "$stage/share/loadledger-mime.xml"
cp installer/linux/install.sh installer/linux/uninstall.sh installer/missing-libraries.sh "$stage/"
tar -C build/package -czf "dist/loadledger-$version-linux-$machine.tar.gz" "$(basename "$stage")"

command -v dpkg-deb >/dev/null || exit 0
arch="$(dpkg --print-architecture)"
root="build/package/deb"
mkdir -p "$root/DEBIAN" "$root/opt" "$root/usr/bin" "$root/usr/share/applications" \
  "$root/usr/share/mime/packages"
cp -a dist/loadledger "$root/opt/loadledger"
ln -s /opt/loadledger/loadledger "$root/usr/bin/loadledger"
share_tree "$root/usr/share"
sed "s|@PROGRAM@|/opt/loadledger/loadledger|" installer/linux/loadledger.desktop \
  > "$root/usr/share/applications/loadledger.desktop"
cp installer/linux/loadledger-mime.xml "$root/usr/share/mime/packages/loadledger.xml"
# The system libraries Qt's window needs that minimal installations may lack.
cat > "$root/DEBIAN/control" <<CONTROL
Package: loadledger
Version: $version
Architecture: $arch
Maintainer: Loadledger maintainers <maintainers@loadledger.invalid>
Section: science
Priority: optional
Installed-Size: $(du -sk "$root" | cut -f1)
Depends: libc6, libegl1, libgl1, libfontconfig1, libfreetype6, libdbus-1-3, libglib2.0-0, libxkbcommon0, libxkbcommon-x11-0, libx11-xcb1, libxcb-cursor0, libxcb-icccm4, libxcb-keysyms1, libxcb-shape0
Description: Meter data to an energy budget with an honest range
 Import meter spreadsheets, clean, profile, fit explainable models and budget the next
 month, quarter or fiscal year with P10/P50/P90; export a finance workbook. Window and
 command line in one program, with Python and Qt inside.
CONTROL
dpkg-deb --root-owner-group -Zgzip --build "$root" "dist/loadledger_${version}_${arch}.deb" >/dev/null
