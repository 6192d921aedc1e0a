"""What adopting and tracking a budget cost, on the bundled invented Orrinvale campus.

Run with ``.venv/bin/python tests/benchmarks/bench_tracking.py`` (not collected by pytest).
Each step runs the command line in a process of its own (``python -m engine.cli.main``; its
time includes the imports) and prints its wall time:

1. set-up: ``new`` (the sample's files, as ``installer/run-sample.sh`` imports them),
   ``clean --apply-recommended`` and ``fit``;
2. the fiscal-year 2027 budget as of 2026-06-30 with the sample rate card: once to keep its
   models, again without adopting it ("before"), and the same budget with ``--adopt FY2027``
   ("after": the adoption's own work is the adopted model's prediction per day under every
   weather scenario);
3. ``track --budget FY2027`` as of 2026-10-31 (the sample's last day) with the workbook,
   whose year-end outlook is a fresh budget of the same months.

Then the campus rows of the tracking: per month the budget P50, the actual, the variance and
its weather and usage effects; and the outlook beside the adopted total.
"""

from __future__ import annotations

import json
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]
DATA = ROOT / "sample" / "data"
RATE_CARD = ROOT / "sample" / "tariffs" / "orrinvale-main-electric.ratecard.toml"
#: The five building meters the main electric account's bills cover (the meters count).
ELECTRIC = ("Library", "Science Labs", "Residence Hall", "Athletics Center", "Administration")
BUDGET = ("--start", "2026-07", "--fiscal-year", "2027", "--as-of", "2026-06-30",
          "--tariff", str(RATE_CARD), "--json")  # fmt: skip


def command(*args: object) -> tuple[float, str]:
    """Run ``loadledger ARGS`` in its own process; its wall time in seconds and its output."""
    started = time.perf_counter()
    done = subprocess.run(
        [sys.executable, "-m", "engine.cli.main", *map(str, args)],
        capture_output=True,
        text=True,
        cwd=ROOT,
    )
    if done.returncode:
        raise SystemExit(f"loadledger {' '.join(map(str, args))} failed:\n{done.stderr}")
    return time.perf_counter() - started, done.stdout


def main() -> None:
    with tempfile.TemporaryDirectory() as folder:
        project = Path(folder) / "sample.loadledger"
        seconds, _ = command(
            "new", project, "--timezone", "America/Chicago",
            "--meters", DATA / "electricity-15min.xlsx",
            "--meters", DATA / "gas-boilerhouse-daily.csv",
            "--meters", DATA / "chilled-water-plant.csv",
            "--bills", DATA / "electric-bills.csv",
            *[arg for meter in ELECTRIC for arg in ("--meter-account", f"{meter}=electric-bills")],
            "--weather", DATA / "weather-station.csv",
            "--calendar", DATA / "campus-calendar.csv", "--holidays", "US-IL",
        )  # fmt: skip
        print(f"new                         {seconds:6.1f} s")
        seconds, _ = command("clean", project, "--apply-recommended")
        print(f"clean --apply-recommended   {seconds:6.1f} s")
        seconds, _ = command("fit", project)
        print(f"fit                         {seconds:6.1f} s")
        seconds, _ = command("budget", project, *BUDGET)
        print(f"budget FY2027 (first)       {seconds:6.1f} s  (models refitted and kept)")
        before, _ = command("budget", project, *BUDGET)
        print(f"budget FY2027 (before)      {before:6.1f} s")
        after, _ = command("budget", project, *BUDGET, "--adopt", "FY2027")
        print(f"budget FY2027 --adopt       {after:6.1f} s  (+{after - before:.1f} s)")
        workbook = Path(folder) / "tracking.xlsx"
        seconds, text = command("track", project, "--budget", "FY2027", "--as-of",
                                "2026-10-31", "--xlsx", workbook, "--json")  # fmt: skip
        print(f"track as of 2026-10-31      {seconds:6.1f} s")
        report = json.loads(text)
    campus = report["campus"] or report["utilities"][0]
    print(f"\n{campus['group']}: kWh")
    print(f"{'month':<8} {'status':<10} {'P50':>11} {'actual':>11} {'variance':>10} "
          f"{'weather':>10} {'usage':>10}")  # fmt: skip
    for month in campus["months"]:
        if month["actual"] is None:
            continue
        print(
            f"{month['month']:<8} {month['status']:<10} {month['budget_to_date']:>11,.0f} "
            f"{month['actual']:>11,.0f} {month['variance_kwh']:>10,.0f} "
            f"{_or_dash(month['weather_kwh']):>10} {_or_dash(month['usage_kwh']):>10}"
        )
    outlook, adopted = campus["outlook"]["quantiles"], campus["adopted_total"]["quantiles"]
    print(
        f"outlook P10/P50/P90 {outlook['10']:,.0f} / {outlook['50']:,.0f} / {outlook['90']:,.0f}"
        f"; adopted {adopted['10']:,.0f} / {adopted['50']:,.0f} / {adopted['90']:,.0f}"
    )
    for caution in report["cautions"]:
        print(f"note: {caution}")


def _or_dash(value: float | None) -> str:
    return "-" if value is None else f"{value:,.0f}"


if __name__ == "__main__":
    main()
