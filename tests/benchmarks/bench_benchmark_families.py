"""Fit and predict seconds of the benchmark families in the fit wizard's backtest, before/after.

Run with ``.venv/bin/python tests/benchmarks/bench_benchmark_families.py [--against REV]``
(not collected by pytest). It imports one meter of the bundled sample campus (sample/data:
the Library's 15-minute readings with the weather station and the campus calendar) into a
temporary project, applies the recommended cleaning, sums the readings to hours as the wizard
does, then does what the backtest (``engine.backtest.run_backtest``) does with each benchmark
family: at each of the 12 monthly origins it fits a fresh model on the readings before the
origin and predicts the next three months twice (the actual- and typical-weather conditions;
these families ignore temperature).

Printed per family: fit and predict seconds summed over the origins (the least of three runs),
the month-total MAPE of the forecasts (months one to three ahead, months with every reading
known) and, with ``--against REV``, the same for the engine of git revision REV (exported with
``git archive`` and run in its own process) plus the largest relative difference between the
two engines' forecasts. Each engine runs in a child process with one BLAS/OpenMP thread.

Measured on the shared 2-core development machine, ``--against a8ce4d0`` (before the smoother
runs were kept from the fit): fit + predict seconds over the 12 origins went from 0.68 + 0.80
to 0.27 + 0.07 for daily ETS, 0.55 + 0.32 to 0.51 + 0.12 for monthly SARIMA and 1.90 + 1.13
to 0.94 + 0.02 for MSTL-ETS (5.5 s to 2.0 s for the four families), with the same month-total
MAPE; forecasts equal to 1e-15 relative except MSTL-ETS (5e-4, from its cheaper low-pass
smoothing).
"""

from __future__ import annotations

import argparse
import dataclasses
import json
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np
import pandas as pd

ROOT = Path(__file__).resolve().parents[2]
SAMPLE = ROOT / "sample" / "data"
ZONE = "America/Chicago"  # sample/README.md: the site's clock
METER = "Library"
#: The wizard's defaults for these families (engine.steps.fitting.DEFAULT_FAMILIES).
FAMILIES = ("seasonal_naive", "daily_ets", "monthly_sarima", "mstl_ets")
ORIGINS = 12
MONTHS_AHEAD = 3
CONDITIONS = 2  # actual and typical weather: each fitted model predicts twice
#: Each family's backtest runs this often; the least seconds count (the machine is shared).
REPEATS = 3


def build_project(folder: Path) -> Path:
    """A project of the sample's Library meter, its recommended cleaning applied, with the
    weather and the campus calendar."""
    sys.path.insert(0, str(ROOT))
    from engine.project import Project
    from engine.reading import ReadOptions, read_calendar, read_file
    from engine.steps.cleaning import apply_recommended, review_meter
    from engine.steps.importing import ImportedFiles, store_files

    options = ReadOptions(timezone=ZONE, holidays="US")
    found = read_file(SAMPLE / "electricity-15min.xlsx", options)
    library = [read for read in found.meters if read.meter.name == METER]
    weather = read_file(SAMPLE / "weather-station.csv", options)
    calendar = read_calendar(SAMPLE / "campus-calendar.csv", options)
    files = ImportedFiles([dataclasses.replace(found, meters=library)], [], [weather], options)
    path = folder / f"campus{Project.EXTENSION}"
    with Project.create(path, timezone=ZONE) as project:
        store_files(project, dataclasses.replace(files, calendar=calendar))
        apply_recommended(project, review_meter(project, METER))
    return path


def measure(project_path: Path, forecasts_path: Path) -> dict[str, dict[str, float]]:
    """Seconds, month-total MAPE and forecasts of each family with the engine on sys.path."""
    from threadpoolctl import threadpool_limits

    from engine.backtest import backtest_origins
    from engine.project import Project
    from engine.steps.fitting import meter_inputs

    with Project.open(project_path) as project:
        inputs = meter_inputs(project, METER)
    origins = backtest_origins(inputs.index, inputs.timezone, ORIGINS, inputs.interval)
    figures, forecasts = {}, {}
    with threadpool_limits(limits=1):
        for family in FAMILIES:
            runs = [backtest_family(family, inputs, origins) for _ in range(REPEATS)]
            figures[family], forecasts[family] = runs[0]
            for part in ("fit", "predict"):
                figures[family][part] = min(run[part] for run, _ in runs)
    np.savez(forecasts_path, **forecasts)
    return figures


def backtest_family(family: str, inputs, origins: pd.DatetimeIndex) -> tuple[dict, np.ndarray]:
    """Fit ``family`` at each origin and predict the months after it, as the backtest does."""
    from engine.models import MODEL_FAMILIES

    figures = {"fit": 0.0, "predict": 0.0, "fitted": 0}
    errors, paths = [], []
    for origin in origins:
        model = MODEL_FAMILIES[family]()
        started = time.perf_counter()
        try:
            model.fit(inputs.window(end=origin))
        except Exception:  # the backtest records a failed fit and goes on
            continue
        finally:
            figures["fit"] += time.perf_counter() - started
        first = origin.tz_convert(ZONE).tz_localize(None).to_period("M")
        end = (first + MONTHS_AHEAD).start_time.tz_localize(ZONE).tz_convert("UTC")
        ahead = inputs.window(start=origin, end=end)
        started = time.perf_counter()
        for _ in range(CONDITIONS):
            predicted = model.predict(ahead.without_energy()).to_numpy()
        figures["predict"] += time.perf_counter() - started
        figures["fitted"] += 1
        months = ahead.index.tz_convert(ZONE).tz_localize(None).to_period("M")
        errors += month_errors(ahead.energy.to_numpy(), predicted, months)
        paths.append(predicted)
    figures["mape"] = float(np.mean(errors)) if errors else float("nan")
    return figures, np.concatenate(paths) if paths else np.array([])


def month_errors(actual: np.ndarray, predicted: np.ndarray, months: pd.PeriodIndex) -> list[float]:
    """Absolute percentage errors of the month totals whose readings are all known."""
    errors = []
    for month in months.unique():
        inside = np.asarray(months == month)
        if np.isfinite(actual[inside]).all():
            total = actual[inside].sum()
            errors.append(100 * abs(predicted[inside].sum() - total) / total)
    return errors


def run_child(engine_root: Path, project_path: Path, folder: Path, tag: str) -> dict:
    """Measure in a fresh process whose ``engine`` package is the one under ``engine_root``."""
    forecasts = folder / f"{tag}.npz"
    done = subprocess.run(
        [sys.executable, __file__, "--child", str(engine_root), str(project_path), str(forecasts)],
        capture_output=True, text=True, cwd=engine_root, check=False,
    )  # fmt: skip
    if done.returncode != 0:
        raise SystemExit(f"measuring {tag} failed:\n{done.stderr[-2000:]}")
    return {"figures": json.loads(done.stdout), "forecasts": dict(np.load(forecasts))}


def export_revision(revision: str, folder: Path) -> Path:
    """The ``engine`` and ``sample`` packages of ``revision``, written under ``folder``."""
    target = folder / "revision"
    target.mkdir()
    archive = subprocess.run(
        ["git", "-C", str(ROOT), "archive", "--format=tar", revision, "engine", "sample"],
        capture_output=True, check=True,
    )  # fmt: skip
    subprocess.run(["tar", "-x", "-C", str(target)], input=archive.stdout, check=True)
    return target


def largest_difference(before: np.ndarray, after: np.ndarray) -> float:
    if before.shape != after.shape:
        return float("nan")
    scale = np.maximum(np.abs(before), 1e-9)
    return float(np.nanmax(np.abs(after - before) / scale)) if before.size else 0.0


def report(now: dict, then: dict | None, revision: str | None) -> None:
    print(f"Sample campus, meter {METER!r} (hourly), {ORIGINS} origins, {MONTHS_AHEAD} months ")
    print(f"ahead, {CONDITIONS} predictions per fitted model; seconds summed over the origins.")
    head = f"{'family':16s} {'fits':>4s} {'fit s':>6s} {'predict s':>9s} {'month MAPE %':>12s}"
    if then is not None:
        head += f" | at {revision}: fit s, predict s, MAPE %; largest relative difference"
    print(head)
    for family in FAMILIES:
        new = now["figures"][family]
        line = f"{family:16s} {new['fitted']:4d} {new['fit']:6.2f} {new['predict']:9.2f}"
        line += f" {new['mape']:12.2f}"
        if then is not None:
            old = then["figures"][family]
            diff = largest_difference(then["forecasts"][family], now["forecasts"][family])
            line += f" | {old['fit']:6.2f} {old['predict']:6.2f} {old['mape']:6.2f}  {diff:.1e}"
        print(line)
    total_now = sum(f["fit"] + f["predict"] for f in now["figures"].values())
    print(f"total {total_now:.2f} s", end="")
    if then is not None:
        total_then = sum(f["fit"] + f["predict"] for f in then["figures"].values())
        print(f" (at {revision}: {total_then:.2f} s)", end="")
    print()


def main() -> int:
    if len(sys.argv) > 1 and sys.argv[1] == "--child":
        engine_root, project_path, forecasts = (Path(arg) for arg in sys.argv[2:5])
        sys.path.insert(0, str(engine_root))
        print(json.dumps(measure(project_path, forecasts)))
        return 0
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--against", metavar="REV", help="also measure this git revision")
    args = parser.parse_args()
    with tempfile.TemporaryDirectory() as name:
        folder = Path(name)
        project_path = build_project(folder)
        then = None
        if args.against:
            then = run_child(export_revision(args.against, folder), project_path, folder, "then")
        now = run_child(ROOT, project_path, folder, "now")
        report(now, then, args.against)
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
