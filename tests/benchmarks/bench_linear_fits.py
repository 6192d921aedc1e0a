"""Fit and scenario-prediction speed of the explainable linear families on a sample-campus meter.

Run with ``.venv/bin/python tests/benchmarks/bench_linear_fits.py [--baseline REV]`` (not
collected by pytest). The meter is the first one of the sample's ``electricity-15min.xlsx``
(summed to hours, with the weather station and campus calendar, as the fit command does),
imported into a throw-away project. Printed, per family (calendar regression, time-of-week
and temperature, daily change point): the best of seven fit times on one BLAS thread; then
the time to predict a fiscal year under 50 weather scenarios by one ``predict`` per scenario
("before") and by one batched ``predict_scenarios`` call ("after").

``--baseline REV`` also times the fits with the ``engine`` of git revision ``REV`` (exported
to a temporary folder and run in a subprocess), so the fit times print before and after.
"""

from __future__ import annotations

import dataclasses
import os
import subprocess
import sys
import tarfile
import tempfile
import time
from io import BytesIO
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]
# A baseline run imports the engine of another revision from the folder this variable names.
sys.path.insert(0, os.environ.get("BENCH_ENGINE_ROOT", str(ROOT)))

import numpy as np  # noqa: E402
import pandas as pd  # noqa: E402
from threadpoolctl import threadpool_limits  # noqa: E402

from engine.calendar import label_intervals  # noqa: E402
from engine.models import (  # noqa: E402
    CalendarRegressionModel,
    DailyChangePointModel,
    TimeOfWeekTemperatureModel,
)
from engine.models.base import ModelInputs  # noqa: E402
from engine.project import Project  # noqa: E402
from engine.reading import ReadOptions, read_calendar, read_file  # noqa: E402
from engine.steps.fitting import meter_inputs  # noqa: E402
from engine.steps.importing import ImportedFiles, store_files  # noqa: E402
from engine.steps.site_calendar import stored_calendar  # noqa: E402

SAMPLE = ROOT / "sample" / "data"
ZONE = "America/Chicago"
FAMILIES = (CalendarRegressionModel, TimeOfWeekTemperatureModel, DailyChangePointModel)
SCENARIOS = 50
REPEATS = 7


def sample_meter() -> tuple[ModelInputs, ModelInputs]:
    """The first sample meter's fit inputs, and unlabelled-energy inputs for the next year."""
    options = ReadOptions(timezone=ZONE, holidays="US")
    found = read_file(SAMPLE / "electricity-15min.xlsx", options)
    weather = read_file(SAMPLE / "weather-station.csv", options)
    calendar = read_calendar(SAMPLE / "campus-calendar.csv", options)
    first_meter = dataclasses.replace(found, meters=found.meters[:1])
    files = ImportedFiles([first_meter], [], [weather], options)
    with tempfile.TemporaryDirectory() as folder:
        path = Path(folder) / "bench.loadledger"
        with Project.create(path, timezone=ZONE) as project:
            store_files(project, dataclasses.replace(files, calendar=calendar))
        with Project.open(path) as project:
            inputs = meter_inputs(project, found.meters[0].meter.name)
            campus_calendar = stored_calendar(project)
    start = inputs.index[-1] + pd.Timedelta(hours=1)
    index = pd.date_range(start, periods=365 * 24, freq="h")
    future = ModelInputs(index, ZONE, labels=label_intervals(index, ZONE, campus_calendar))
    return inputs, future


def best_time(work, repeats: int = REPEATS) -> float:
    """Fewest seconds of ``repeats`` runs of ``work()``."""
    times = []
    for _ in range(repeats):
        began = time.perf_counter()
        work()
        times.append(time.perf_counter() - began)
    return min(times)


def fit_times(inputs: ModelInputs) -> dict[str, float]:
    with threadpool_limits(limits=1):
        return {family.label: best_time(lambda f=family: f().fit(inputs)) for family in FAMILIES}


def scenario_temperatures(inputs: ModelInputs, future: ModelInputs) -> np.ndarray:
    """50 scenarios: last year's hourly temperatures shifted by -5 … +5 °C and jittered."""
    last_year = inputs.temperature.to_numpy()[-len(future.index) :]
    rng = np.random.default_rng(1)
    shifts = np.linspace(-5.0, 5.0, SCENARIOS)[:, None]
    return last_year[None, :] + shifts + rng.normal(0.0, 1.0, (SCENARIOS, len(future.index)))


def scenario_times(inputs: ModelInputs, future: ModelInputs) -> None:
    from engine.models.base import predict_scenarios

    temperatures = scenario_temperatures(inputs, future)
    print(f"\n{SCENARIOS} weather scenarios × {len(future.index)} hours (one BLAS thread)")
    print(f"  {'family':42s} {'loop predict s':>15s} {'batched s':>10s} {'speed-up':>9s}")
    with threadpool_limits(limits=1):
        for family in FAMILIES:
            model = family().fit(inputs)

            def looped(model=model):
                return np.vstack(
                    [
                        model.predict(
                            dataclasses.replace(
                                future, temperature=pd.Series(row, index=future.index)
                            )
                        ).to_numpy()
                        for row in temperatures
                    ]
                )

            loop_s = best_time(looped, 3)
            batch_s = best_time(lambda model=model: predict_scenarios(model, future, temperatures))
            print(f"  {family.label:42s} {loop_s:15.3f} {batch_s:10.3f} {loop_s / batch_s:8.1f}×")


def baseline_fit_times(revision: str) -> dict[str, float]:
    """Fit times with the engine of ``revision``, in a subprocess."""
    archive = subprocess.run(
        ["git", "-C", str(ROOT), "archive", revision, "engine"],
        check=True,
        capture_output=True,
    ).stdout
    with tempfile.TemporaryDirectory() as folder:
        with tarfile.open(fileobj=BytesIO(archive)) as tar:
            tar.extractall(folder, filter="data")
        done = subprocess.run(
            [sys.executable, __file__, "--fits-only"],
            check=True,
            capture_output=True,
            text=True,
            env={**os.environ, "BENCH_ENGINE_ROOT": folder},
        )
    times = {}
    for line in done.stdout.splitlines():
        label, _, seconds = line.rpartition("\t")
        times[label] = float(seconds)
    return times


def main() -> None:
    inputs, future = sample_meter()
    if sys.argv[1:] == ["--fits-only"]:
        for label, seconds in fit_times(inputs).items():
            print(f"{label}\t{seconds}")
        return
    baseline = {}
    if sys.argv[1:2] == ["--baseline"]:
        baseline = baseline_fit_times(sys.argv[2])
    print(
        f"sample meter: {len(inputs.index)} hours "
        f"({inputs.index[0]:%Y-%m-%d} – {inputs.index[-1]:%Y-%m-%d}), best of {REPEATS} fits"
    )
    print(f"  {'family':42s} {'before s':>9s} {'after s':>9s}")
    for label, seconds in fit_times(inputs).items():
        before = f"{baseline[label]:9.3f}" if label in baseline else f"{'-':>9s}"
        print(f"  {label:42s} {before} {seconds:9.3f}")
    scenario_times(inputs, future)


if __name__ == "__main__":
    main()
