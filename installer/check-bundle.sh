#!/usr/bin/env bash
# Smoke-test the built bundle the way a person meets it: copied to a fresh folder and run from
# another directory with an empty environment (env -i) and a fresh home folder, no display.
#   bash installer/check-bundle.sh [BUNDLE_FOLDER]      (default dist/loadledger)
# Runs --version, inspect and a one-shot budget workbook on the bundled sample campus, a project
# with public holidays, and --self-check (the window shows every step). Fails on any non-zero
# exit or any traceback.
set -euo pipefail
cd "$(dirname "$0")/.."
bundle="$(cd "${1:-dist/loadledger}" && pwd)"
scratch="$(mktemp -d)"
trap 'rm -rf "$scratch"' EXIT
cp -a "$bundle" "$scratch/loadledger"
mkdir -p "$scratch/home" "$scratch/work"
program="$scratch/loadledger/loadledger"
[ -x "$program" ] || program="$scratch/loadledger/loadledger.exe"
sample="$scratch/loadledger/sample/data"
failed=0
# PYTHONTZPATH hides the system's zone files, as on Windows: the bundled tzdata must serve.
clean_env=(HOME="$scratch/home" PATH=/usr/bin:/bin QT_QPA_PLATFORM=offscreen
  PYTHONTZPATH="$scratch/no-zone-files")
case "$(uname -s)" in
  MINGW* | MSYS* | CYGWIN*)  # Windows programs need their system folder and a fresh profile
    profile="$(cygpath -w "$scratch/home")"
    clean_env+=(SYSTEMROOT="$SYSTEMROOT" USERPROFILE="$profile" APPDATA="$profile\\Roaming"
      LOCALAPPDATA="$profile\\Local" TEMP="$profile" TMP="$profile") ;;
esac

run() {  # run NAME ARGS...: the bundled program with nothing from this environment
  local name="$1"; shift
  local began=$SECONDS status=0
  (cd "$scratch/work" && env -i "${clean_env[@]}" "$program" "$@") \
    > "$scratch/$name.out" 2> "$scratch/$name.err" || status=$?
  # a traceback anywhere, or a meter whose worker process died, is a failure too
  if [ "$status" -ne 0 ] || grep -q -e "Traceback" -e "worker process died" \
    "$scratch/$name.out" "$scratch/$name.err"; then
    echo "FAILED  $name (exit $status, $((SECONDS - began)) s):"
    sed 's/^/    /' "$scratch/$name.out" "$scratch/$name.err" | tail -40
    failed=1
  else
    echo "ok      $name ($((SECONDS - began)) s): $(head -n 1 "$scratch/$name.out")"
  fi
}

run version --version
run inspect inspect "$sample/electricity-15min.xlsx" --timezone America/Chicago
run budget budget --meters "$sample/electricity-15min.xlsx" \
  --weather-file "$sample/weather-station.csv" --timezone America/Chicago \
  --start 2026-11 --months 3 --xlsx "$scratch/work/budget.xlsx"
if [ "$(head -c 2 "$scratch/work/budget.xlsx" 2>/dev/null)" != "PK" ]; then
  echo "FAILED  budget: no workbook was written"
  failed=1
fi
# the bundled holiday data: a project of the daily gas meter with Illinois's public holidays
run calendar new "$scratch/work/campus.loadledger" --meters "$sample/gas-boilerhouse-daily.csv" \
  --timezone America/Chicago --calendar "$sample/campus-calendar.csv" --holidays US-IL
run holidays calendar "$scratch/work/campus.loadledger" --json
grep -q "Independence Day" "$scratch/holidays.out" \
  || { echo "FAILED  the bundled holidays named no Independence Day"; failed=1; }
run self-check --self-check
grep -q "^loadledger [0-9]" "$scratch/version.out" || { echo "FAILED  --version printed no version"; failed=1; }

# The Linux .tar.gz, when built: install.sh twice (an update), the installed command, uninstall.sh.
tarball="$(ls dist/loadledger-*-linux-*.tar.gz 2>/dev/null | head -n 1 || true)"
if [ -n "$tarball" ]; then
  mkdir -p "$scratch/unpacked" "$scratch/person"
  tar -C "$scratch/unpacked" -xzf "$tarball"
  unpacked="$(echo "$scratch"/unpacked/loadledger-*)"
  as_person() { env -i HOME="$scratch/person" PATH=/usr/bin:/bin "$@" >> "$scratch/install.out" 2>&1; }
  installed="$scratch/person/.local/share/loadledger/loadledger"
  entry="$scratch/person/.local/share/applications/loadledger.desktop"
  if as_person bash "$unpacked/install.sh" && as_person bash "$unpacked/install.sh" \
    && as_person "$scratch/person/.local/bin/loadledger" --version && [ -f "$entry" ] \
    && grep -q "^Exec=\"$installed\" --project %f" "$entry" \
    && as_person bash "$unpacked/uninstall.sh" && [ ! -e "$installed" ] && [ ! -e "$entry" ]; then
    echo "ok      install.sh twice, the installed command, uninstall.sh ($(basename "$tarball"))"
  else
    echo "FAILED  installing $(basename "$tarball"):"
    sed 's/^/    /' "$scratch/install.out" | tail -20
    failed=1
  fi
fi
[ "$failed" -eq 0 ] && echo "bundle check passed: $bundle"
exit "$failed"
