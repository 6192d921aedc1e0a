"""How long a person waits: the budget and fit commands end to end, now and at another revision.

Run with ``.venv/bin/python tests/benchmarks/bench_speed.py [--against REV]`` (not collected
by pytest). Every step runs the command line in a process of its own (``python -m
engine.cli.main``, so its time includes about 2 s of imports that the window pays once), and
its wall time and the peak memory of that process (``os.wait4``; worker processes are
separate) are printed. With ``--against REV`` the same steps run the engine of git revision
REV (exported with ``git archive``, its own project files) for the "before" column, and the
campus totals of both are printed so equal answers can be seen.

Steps, on the bundled invented Orrinvale campus (``sample/data``; 8 meters, 3 years and 4
months of 15-minute, hourly and daily readings) and on an invented 3-meter campus with 4
years of hourly readings and hourly weather, generated here:

1. ``new`` and ``clean --apply-recommended`` (the quick start's first two steps);
2. next-month budget from the freshly cleaned project with no stored models, as the window
   runs it (in a process with the engine imported that has started its worker processes'
   server on opening, as the window does, so its workers import nothing; target ≤ 20 s; the
   server's start-up in the background is printed beside it), and the same through the
   command line;
3. the same budget again with typical weather instead of past years', through the command line
   and as the window runs it, in a process that has imported the engine (target ≤ 3 s: the
   window imports the budget code when it opens, which ``--version`` does not);
4. the fiscal-year budget (July–June) with the stored models, likewise through the command
   line and as the window runs it (target ≤ 5 s);
5. ``fit --meter Library``: one meter, 3 years of 15-minute readings, default families,
   12 origins (target ≤ 5 s);
6. one-shot ``budget --meters … --weather-file …`` of the 3-meter campus, beside a plain
   pandas read of the same file (target ≤ 15 s);
7. the README's quick start end to end: new, clean, fit, fiscal-year budget with the rate card
   and the workbook (target ≤ 60 s);
with every peak at most 1.5 GB. Steps 2–5 are what the window runs: budgets are timed in a
process with the engine imported; the fit's target is held after the command line's start-up
and the imports a fit needs, which the window pays once when it opens (timed as ``fit`` of a
project file that does not exist: it stops with exit 2 once that code is loaded; the command
line loads the modelling code only for the commands that model, so ``--version`` no longer
pays it).
"""

from __future__ import annotations

import argparse
import json
import os
import shutil
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np
import pandas as pd

ROOT = Path(__file__).resolve().parents[2]
DATA = ROOT / "sample" / "data"
RATE_CARD = ROOT / "sample" / "tariffs" / "orrinvale-main-electric.ratecard.toml"
PYTHON = sys.executable
TARGETS = {
    "budget, no stored models, in the window": 20.0,
    "budget again, typical weather, in the window": 3.0,
    "fiscal-year budget, in the window": 5.0,
    "fit one 15-minute meter": 5.0,
    "one-shot, 3 meters x 4 years": 15.0,
    "quick start end to end": 60.0,
}
#: Steps whose target is for the window, which has started and imported once: they are held
#: to it after the command line's own start-up and imports (see :func:`start_up`) are taken off.
WINDOW_STEPS = ("fit one 15-minute meter",)
START_UP = "  start-up and a fit's imports"


def start_up(engine: Path, folder: Path) -> tuple[float, float, str]:
    """The command line's start-up with the code a fit imports: ``fit`` of a missing file."""
    return (*run(engine, "fit", folder / "no-such.loadledger", expect=2)[:2], "")


def run(engine: Path, *args: object, expect: int = 0) -> tuple[float, float, str]:
    """Seconds, peak MB and stdout of one command-line run of the engine in ``engine``, which
    must end with exit status ``expect``."""
    command = [PYTHON, "-m", "engine.cli.main", *map(str, args)]
    with tempfile.TemporaryFile("w+") as out, tempfile.TemporaryFile("w+") as err:
        started = time.perf_counter()
        process = subprocess.Popen(command, cwd=engine, stdout=out, stderr=err, text=True)
        _, status, usage = os.wait4(process.pid, 0)
        seconds = time.perf_counter() - started
        process.returncode = os.waitstatus_to_exitcode(status)
        out.seek(0)
        err.seek(0)
        if process.returncode != expect:
            raise SystemExit(f"{' '.join(command)} failed:\n{err.read()}")
        return seconds, usage.ru_maxrss / 1024, out.read()


#: A budget as the window runs it: in a process that has imported the engine already.
WINDOW_BUDGET = """
import importlib, sys, time
from pathlib import Path
import engine
from engine.project import Project
# revisions before the steps package (for --against) keep the budget step at the top
STEPS = (Path(engine.__file__).parent / "steps").is_dir()
step = importlib.import_module("engine.steps.budgeting" if STEPS else "engine.budgeting")
budget_project, budget_request = step.budget_project, step.budget_request
import engine.parallel as parallel
if hasattr(parallel, "start_workers_early"):  # the window starts its workers' server on opening
    from concurrent.futures import ProcessPoolExecutor
    from multiprocessing import get_context
    opened = time.perf_counter()
    parallel.start_workers_early()
    with ProcessPoolExecutor(1, mp_context=get_context("forkserver")) as pool:
        pool.submit(time.time).result()  # served once the server has imported the modelling
    print("workers ready", time.perf_counter() - opened, file=sys.stderr)
with Project.open(sys.argv[1]) as project:
    months = sys.argv[2].split(",")
    weather = {"weather": sys.argv[3]} if len(sys.argv) > 3 else {}
    request = budget_request(project, months, **weather)
    started = time.perf_counter()
    budget_project(project, request)
    print(time.perf_counter() - started)
"""


def window_budget(
    engine: Path, project: Path, months: str = "2026-11", *weather: str
) -> tuple[float, float, str]:
    """Seconds of a budget of ``months`` (comma-separated) inside one process, as the window's
    worker thread runs it (the engine imported already); ``weather`` names the assumption
    (default: the tool's)."""
    done = subprocess.run(
        [PYTHON, "-c", WINDOW_BUDGET, str(project), months, *weather],
        cwd=engine,
        capture_output=True,
        text=True,
        check=True,
    )
    ready = [line.split()[-1] for line in done.stderr.splitlines() if "workers ready" in line]
    note = f"workers' server ready {float(ready[0]):.1f} s after opening" if ready else ""
    return float(done.stdout.split()[-1]), float("nan"), note


def new_sample(engine: Path, project: Path) -> float:
    seconds, _, _ = run(
        engine, "new", project, "--overwrite", "--timezone", "America/Chicago",
        "--meters", DATA / "electricity-15min.xlsx",
        "--meters", DATA / "gas-boilerhouse-daily.csv",
        "--meters", DATA / "chilled-water-plant.csv",
        "--bills", DATA / "electric-bills.csv", "--weather", DATA / "weather-station.csv",
        "--calendar", DATA / "campus-calendar.csv", "--holidays", "US-IL",
    )  # fmt: skip
    return seconds


def three_meter_campus(folder: Path) -> tuple[Path, Path]:
    """An invented campus (Quarry Hill Institute, a cool climate on a clock without daylight
    saving): a lecture hall, a residence and a boiler house, hourly from 2021 to 2024, with
    its weather station."""
    rng = np.random.default_rng(2024)
    hours = pd.date_range("2021-01-01", "2024-12-31 23:00", freq="h")
    day = hours.day_of_year.to_numpy()
    temps = 9 - 11 * np.cos(2 * np.pi * (day - 22) / 365.25) + rng.normal(0, 2.5, len(hours))
    busy = ((hours.day_of_week < 5) & (hours.hour >= 8) & (hours.hour < 19)).astype(float)
    noise = rng.normal(0, 0.05, (3, len(hours)))
    hall = (40 + 90 * busy + 2.5 * np.maximum(13 - temps, 0)) * (1 + noise[0])
    residence = 60 + 25 * np.sin(np.pi * hours.hour / 24) ** 2 + 1.5 * np.maximum(temps - 20, 0)
    residence = residence * (1 + noise[1])
    boiler = (8 + 11 * np.maximum(15 - temps, 0)) * (1 + noise[2])
    meters = folder / "quarry-hill-meters.csv"
    pd.DataFrame(
        {"Lecture hall (kWh)": hall, "Residence (kWh)": residence, "Boiler gas (kWh)": boiler},
        index=pd.Index(hours.strftime("%Y-%m-%d %H:%M"), name="Timestamp"),
    ).round(3).to_csv(meters)
    weather = folder / "quarry-hill-weather.csv"
    pd.DataFrame(
        {"Dry bulb (°C)": temps}, index=pd.Index(hours.strftime("%Y-%m-%d %H:%M"), name="Time")
    ).round(2).to_csv(weather)
    return meters, weather


def campus_total(out: str) -> str:
    total = json.loads(out)["campus"]["total"]["quantiles"]
    return "P10/P50/P90 " + " / ".join(f"{total[k]:,.0f}" for k in sorted(total, key=int))


def measure(engine: Path, folder: Path) -> dict[str, tuple[float, float, str]]:
    """Every step with the engine in ``engine``, in ``folder``."""
    folder.mkdir(parents=True, exist_ok=True)
    figures: dict[str, tuple[float, float, str]] = {}
    figures[START_UP] = start_up(engine, folder)
    project = folder / "campus.loadledger"
    made = new_sample(engine, project)
    cleaned = run(engine, "clean", project, "--apply-recommended")[0]
    figures["new + clean (sample)"] = (made + cleaned, float("nan"), "")
    clean_copy = folder / "cleaned.loadledger"
    shutil.copyfile(project, clean_copy)

    def budget(*extra: object) -> tuple[float, float, str]:
        seconds, peak, out = run(engine, "budget", project, *extra, "--json")
        return seconds, peak, campus_total(out)

    window_copy = folder / "window.loadledger"
    shutil.copyfile(clean_copy, window_copy)
    figures["budget, no stored models, in the window"] = window_budget(engine, window_copy)
    figures["budget, no stored models"] = budget("--start", "2026-11", "--months", "1")
    figures["budget again, typical weather"] = budget(
        "--start", "2026-11", "--months", "1", "--weather", "typical"
    )
    figures["budget again, typical weather, in the window"] = window_budget(
        engine, project, "2026-11", "typical"
    )
    figures["fiscal-year budget"] = budget("--start", "2026-07", "--fiscal-year", "2027")
    fiscal_year = ",".join(str(month) for month in pd.period_range("2026-07", "2027-06", freq="M"))
    figures["fiscal-year budget, in the window"] = window_budget(engine, project, fiscal_year)
    shutil.copyfile(clean_copy, project)
    seconds, peak, _ = run(engine, "fit", project, "--meter", "Library", "--json")
    figures["fit one 15-minute meter"] = (seconds, peak, "")

    meters, weather = three_meter_campus(folder)
    started = time.perf_counter()
    pd.read_csv(meters)
    read = time.perf_counter() - started
    seconds, peak, out = run(
        engine, "budget", "--meters", meters, "--weather-file", weather,
        "--timezone", "Atlantic/Reykjavik", "--start", "2025-01", "--months", "1", "--json",
    )  # fmt: skip
    figures["one-shot, 3 meters x 4 years"] = (seconds, peak, campus_total(out))
    figures["  plain pandas read of its meter file"] = (read, float("nan"), "")

    quick = folder / "quick.loadledger"
    started = time.perf_counter()
    new_sample(engine, quick)
    run(engine, "clean", quick, "--apply-recommended")
    run(engine, "fit", quick)
    _, peak, out = run(
        engine, "budget", quick, "--start", "2026-07", "--fiscal-year", "2027",
        "--tariff", RATE_CARD, "--xlsx", folder / "budget.xlsx", "--json",
    )  # fmt: skip
    figures["quick start end to end"] = (time.perf_counter() - started, peak, campus_total(out))
    return figures


def export_revision(revision: str, folder: Path) -> Path:
    """The engine of ``revision``, unpacked into ``folder/REV``."""
    target = folder / revision
    target.mkdir()
    archive = subprocess.run(
        ["git", "-C", str(ROOT), "archive", revision, "engine"], capture_output=True, check=True
    ).stdout
    subprocess.run(["tar", "-x", "-C", str(target)], input=archive, check=True)
    return target


def report(now: dict, then: dict | None, revision: str | None) -> int:
    head = f"{'step':40} {'now s':>8} {'peak MB':>8}"
    if then is not None:
        head += f" {revision + ' s':>12} {'peak MB':>8}"
    print(head + f" {'target s':>9} {'held':>5}")
    missed = 0
    start_up = now[START_UP][0]
    for step, (seconds, peak, _) in now.items():
        line = f"{step:40} {seconds:8.2f} {peak:8.0f}"
        if then is not None:
            old_seconds, old_peak, _ = then[step]
            line += f" {old_seconds:12.2f} {old_peak:8.0f}"
        target = TARGETS.get(step)
        if target is not None:
            waited = seconds - start_up if step in WINDOW_STEPS else seconds
            held = waited <= target and not peak > 1536
            missed += not held
            line += f" {target:9.0f} {'yes' if held else 'NO':>5}"
        print(line)
    print(
        f"(window steps — {', '.join(WINDOW_STEPS)} — are held to their target after the "
        f"{start_up:.1f} s of start-up and imports the window pays once)"
    )
    for step, (_, _, answer) in now.items():
        if answer:
            print(f"{step}: now {answer}")
            if then is not None:
                print(f"{' ' * len(step)}  {revision} {then[step][2]}")
    print(f"targets missed: {missed}")
    return 1 if missed else 0


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--against", metavar="REV", help="also measure this git revision")
    args = parser.parse_args()
    with tempfile.TemporaryDirectory(prefix="bench-speed-") as temp:
        folder = Path(temp)
        now = measure(ROOT, folder / "now")
        then = None
        if args.against:
            then = measure(export_revision(args.against, folder), folder / "then")
        return report(now, then, args.against)


if __name__ == "__main__":
    sys.exit(main())
