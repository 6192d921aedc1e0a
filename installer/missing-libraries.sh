#!/usr/bin/env bash
# List the system libraries that shared libraries (files, or every one under a folder) need but
# this machine lacks, each with the Debian/Ubuntu package that provides it (Linux only).
#   installer/missing-libraries.sh PATH...    prints "libEGL.so.1 (package libegl1)" lines
# Exit status 0 when nothing is missing, 1 otherwise.
set -euo pipefail
[ $# -gt 0 ] || { echo "usage: missing-libraries.sh FILE_OR_FOLDER..." >&2; exit 2; }
package_of() {
  case "$1" in
    libEGL.so*) echo libegl1 ;;
    libGL.so* | libGLX.so*) echo libgl1 ;;
    libOpenGL.so*) echo libopengl0 ;;
    libxkbcommon-x11.so*) echo libxkbcommon-x11-0 ;;
    libxkbcommon.so*) echo libxkbcommon0 ;;
    libfontconfig.so*) echo libfontconfig1 ;;
    libfreetype.so*) echo libfreetype6 ;;
    libdbus-1.so*) echo libdbus-1-3 ;;
    libglib-2.0.so* | libgthread-2.0.so* | libgobject-2.0.so*) echo libglib2.0-0 ;;
    libX11-xcb.so*) echo libx11-xcb1 ;;
    libX11.so*) echo libx11-6 ;;
    libxcb-cursor.so*) echo libxcb-cursor0 ;;
    libxcb-icccm.so*) echo libxcb-icccm4 ;;
    libxcb-image.so*) echo libxcb-image0 ;;
    libxcb-keysyms.so*) echo libxcb-keysyms1 ;;
    libxcb-render-util.so*) echo libxcb-render-util0 ;;
    libxcb-xinerama.so*) echo libxcb-xinerama0 ;;
    libxcb-xkb.so*) echo libxcb-xkb1 ;;
    libxcb-randr.so*) echo libxcb-randr0 ;;
    libxcb-shape.so*) echo libxcb-shape0 ;;
    libxcb-xfixes.so*) echo libxcb-xfixes0 ;;
    libxcb-sync.so*) echo libxcb-sync1 ;;
    libxcb-render.so*) echo libxcb-render0 ;;
    libxcb-shm.so*) echo libxcb-shm0 ;;
    libxcb.so*) echo libxcb1 ;;
    libwayland-*) echo "libwayland-client0 libwayland-cursor0 libwayland-egl1" ;;
    libSM.so*) echo libsm6 ;;
    libICE.so*) echo libice6 ;;
    *) echo "unknown: search with 'apt-file search $1'" ;;
  esac
}
missing="$(find "$@" -name '*.so*' -type f -print0 \
  | xargs -0 -r ldd 2>/dev/null | awk '/=> not found/ {print $1}' | sort -u)"
[ -z "$missing" ] && exit 0
for library in $missing; do
  echo "$library (package $(package_of "$library"))"
done
exit 1
