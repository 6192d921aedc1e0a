#!/usr/bin/env bash
# The main job on the bundled sample, with no display: set up, then import the invented campus
# into a project file and print what was found. Output goes to out/.
set -euo pipefail
cd "$(dirname "$0")/.."
bash installer/setup-env.sh
mkdir -p out
data=sample/data
.venv/bin/loadledger new out/sample-campus.loadledger --overwrite --timezone America/Chicago \
  --meters "$data/electricity-15min.xlsx" \
  --meters "$data/gas-boilerhouse-daily.csv" \
  --meters "$data/chilled-water-plant.csv" \
  --bills "$data/electric-bills.csv" \
  --weather "$data/weather-station.csv" \
  --calendar "$data/campus-calendar.csv" --holidays US-IL "$@"
