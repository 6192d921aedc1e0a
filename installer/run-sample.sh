#!/usr/bin/env bash
# The main job on the bundled sample, with no display: set up, import the invented campus into
# a project, apply the recommended cleaning, fit each meter's model, and write the budget
# workbook for the fiscal year July 2026 – June 2027 (actuals to the end of October, then the
# forecast). The main electric account's bills cover the five building meters, which belong
# to it (--meter-account), so the campus totals count the meters, not the bills too. The
# invented campus closes on the US federal holidays only (sample/README.md), not on Illinois's
# own (`calendar --propose` says so of a project given US-IL), hence --holidays US.
# Everything goes to out/.
set -euo pipefail
cd "$(dirname "$0")/.."
bash installer/setup-env.sh
mkdir -p out
data=sample/data
project=out/sample-campus.loadledger
run() { .venv/bin/loadledger "$@"; }
run new "$project" --overwrite --timezone America/Chicago \
  --meters "$data/electricity-15min.xlsx" \
  --meters "$data/gas-boilerhouse-daily.csv" \
  --meters "$data/chilled-water-plant.csv" \
  --bills "$data/electric-bills.csv" \
  --meter-account "Library=electric-bills" --meter-account "Science Labs=electric-bills" \
  --meter-account "Residence Hall=electric-bills" \
  --meter-account "Athletics Center=electric-bills" \
  --meter-account "Administration=electric-bills" \
  --weather "$data/weather-station.csv" \
  --calendar "$data/campus-calendar.csv" --holidays US > out/sample-import.txt
echo "imported the sample campus into $project (report: out/sample-import.txt)"
run clean "$project" --apply-recommended > out/sample-cleaning.txt
echo "applied the recommended cleaning (report: out/sample-cleaning.txt)"
run fit "$project" > out/sample-models.txt
echo "fitted and compared the models (report: out/sample-models.txt)"
run budget "$project" --start 2026-07 --fiscal-year 2027 \
  --tariff sample/tariffs/orrinvale-main-electric.ratecard.toml \
  --xlsx out/sample-budget.xlsx "$@"
