"""One-shot month-ahead budgets of a campus the tool was not tuned on, in either hemisphere.

Run with ``.venv/bin/python tests/benchmarks/bench_mild_campus.py [--origins N]
[--hemisphere north|south|both] [--happened]`` (not collected by pytest; about 11 s per
budget on a 2-core machine, so four and a half minutes per site and weather for 24 origins).

Why: every other budget benchmark scores the bundled sample campus, whose climate, meters and
faults the tool's settings were checked on. This one writes a second invented campus with the
sample's generator (``sample/weather.py``, ``sample/loads.py``, ``sample/campus_calendar.py``)
but a different climate and mix, shaped like the hard cases budgets meet:

* a mild coastal climate (15 °C mean, ±5.5 °C over the year) with a record-warm last winter
  (2.5 °C above the climate from November to March, May to September in the south);
* Kestrel Hall, a lecture hall heated electrically whose load drifts down 2 % a year;
  Marram House, a residence with evening peaks, heating and cooling; Quillon Labs, a
  laboratory with a large base load and cooling;
* four years of hourly readings (2012–2015) and the site's hourly temperatures, and no campus
  calendar or public holidays: the one-shot budget proposes them from the readings.

For each of the last ``--origins`` months it runs the command line as a script would::

    loadledger budget --meters METERS.csv --weather-file WEATHER.csv --timezone ZONE
                      --start MONTH --as-of DAY-BEFORE-MONTH --json
                      [--weather WEATHER.csv]        # with --happened

and prints per meter the P50's mean absolute month-total error beside that of the same month
last year (from the same file), the skill (1 − P50 error / last year's) and the share of
months inside P10–P90. Targets (the ones the sample campus is held to): skill ≥ 15 % over the
site with default weather, and P10–P90 held 80 ± 5 % overall with no meter below 65 % or above
95 %. Exit status 1 when a target is missed.

The ground truth is the generator's (invented data for a synthetic check, DEVELOPERS.md); no
name here is a real place.
"""

from __future__ import annotations

import argparse
import json
import subprocess
import sys
import tempfile
import time
from dataclasses import dataclass
from datetime import date, timedelta
from pathlib import Path

import holidays
import numpy as np
import pandas as pd

ROOT = Path(__file__).resolve().parents[2]
sys.path.insert(0, str(ROOT))

from sample.campus_calendar import campus_periods, day_types  # noqa: E402
from sample.loads import LoadModel, interval_drivers, simulate_load  # noqa: E402
from sample.weather import Climate, simulate_weather  # noqa: E402

LOADLEDGER = [sys.executable, "-c", "from desktop.launcher import main; main()"]
FIRST_DAY, LAST_DAY = date(2012, 1, 1), date(2015, 12, 31)
WARM_SPELL_C = 2.5
SKILL_TARGET, COVERAGE, METER_COVERAGE = 0.15, (0.75, 0.85), (0.65, 0.95)


@dataclass(frozen=True)
class Site:
    """Where the invented campus lies: its clock, its coldest day and its public holidays."""

    timezone: str
    standard_offset_hours: float
    coldest_day: int
    country: str
    warm_spell: tuple[str, str]  # local days, the last winter


SITES = {
    "north": Site("America/Los_Angeles", -8.0, 12, "US", ("2014-11-01", "2015-04-01")),
    "south": Site("Australia/Melbourne", 10.0, 196, "AU", ("2015-05-01", "2015-10-01")),
}


DAY_KINDS = ("weekday", "weekend", "holiday", "break", "closure", "summer")


def _factors(*values: float) -> dict[str, float]:
    """The occupied load's multiplier on each kind of day, in the order of ``DAY_KINDS``."""
    return dict(zip(DAY_KINDS, values, strict=True))


METERS = (
    LoadModel("Kestrel Hall", "kWh", 80, 140, 8, 21, 0.6, _factors(1, .35, .1, .3, .05, .4),
              14.0, 5.0, 21.0, 1.0, -0.02, 0.05, 0.75),
    LoadModel("Marram House", "kWh", 120, 60, 17, 23.5, 1.0, _factors(1, 1.05, .9, .3, .1, .5),
              15.0, 2.5, 21.0, 1.5, 0.0, 0.07, 0.7),
    LoadModel("Quillon Labs", "kWh", 200, 100, 8, 18, 0.7, _factors(1, .3, .15, .5, .1, .6),
              10.0, 1.0, 18.0, 3.0, 0.01, 0.04, 0.8),
)  # fmt: skip


def write_site(site: Site, folder: Path, seed: int = 7) -> pd.DataFrame:
    """Write the meters' and the weather's CSV files; the readings' local month totals."""
    rng = np.random.default_rng(seed)
    climate = Climate(
        mean_c=15.0, annual_amplitude_c=5.5, coldest_day=site.coldest_day,
        diurnal_amplitude_c=5.0, warmest_hour=15.0,
        standard_offset_hours=site.standard_offset_hours, anomaly_sd_winter_c=2.5,
        anomaly_sd_summer_c=2.0, anomaly_phi=0.985,
    )  # fmt: skip
    start = pd.Timestamp(FIRST_DAY).tz_localize(site.timezone).tz_convert("UTC")
    stop = pd.Timestamp(LAST_DAY + timedelta(days=1)).tz_localize(site.timezone)
    hours = pd.date_range(start, stop.tz_convert("UTC"), freq="h", inclusive="left")
    local = hours.tz_convert(site.timezone).tz_localize(None)
    warm = (local >= site.warm_spell[0]) & (local < site.warm_spell[1])
    weather = simulate_weather(hours, climate, rng) + np.where(warm, WARM_SPELL_C, 0.0)
    periods = campus_periods(FIRST_DAY, date(LAST_DAY.year + 1, 8, 31))
    days = pd.date_range(FIRST_DAY, LAST_DAY, freq="D")
    public = holidays.country_holidays(site.country, years=range(FIRST_DAY.year, 2017))
    kinds = pd.Series(day_types(days, periods, sorted(public)), index=days)
    drivers = interval_drivers(hours, pd.Timedelta(hours=1), weather, kinds, site.timezone, start)
    stamps = local.strftime("%Y-%m-%d %H:%M")
    readings = pd.DataFrame({"Reading start": stamps})
    for meter in METERS:
        readings[meter.column] = np.round(np.asarray(simulate_load(meter, drivers, rng)), 3)
    readings.to_csv(folder / "meters.csv", index=False)
    fahrenheit = np.round(weather.to_numpy() * 9 / 5 + 32, 1)
    pd.DataFrame({"Observation Time (local)": stamps, "Dry Bulb (°F)": fahrenheit}).to_csv(
        folder / "weather.csv", index=False
    )
    energy = readings.drop(columns="Reading start").set_axis(local)
    return energy.groupby(local.to_period("M")).sum()


def budget(site: Site, folder: Path, month: pd.Period, happened: bool) -> dict:
    """The one-shot command line's JSON for ``month`` as of the day before it."""
    as_of = (month.start_time - pd.Timedelta(days=1)).date().isoformat()
    command = [
        *LOADLEDGER, "budget", "--meters", str(folder / "meters.csv"),
        "--weather-file", str(folder / "weather.csv"), "--timezone", site.timezone,
        "--start", str(month), "--as-of", as_of, "--json",
    ]  # fmt: skip
    if happened:
        command += ["--weather", str(folder / "weather.csv")]
    done = subprocess.run(command, capture_output=True, text=True, cwd=ROOT, check=False)
    if done.returncode != 0:
        raise SystemExit(f"budget for {month} failed: {done.stderr.strip()[-2000:]}")
    return json.loads(done.stdout)


def score(name: str, site: Site, origins: int, happened: bool) -> list[str]:
    """Budget the site from each origin, print the table, return the targets missed."""
    with tempfile.TemporaryDirectory() as folder:
        totals = write_site(site, Path(folder))
        months = pd.period_range(end=pd.Period(LAST_DAY, freq="M"), periods=origins, freq="M")
        rows, started = [], time.perf_counter()
        for month in months:
            for meter in budget(site, Path(folder), month, happened)["meters"]:
                q = meter["months"][0]["quantiles"]
                column = f"{meter['name']} (kWh)"
                actual, last_year = totals.loc[month, column], totals.loc[month - 12, column]
                rows.append((meter["name"], q["10"], q["50"], q["90"], actual, last_year))
    frame = pd.DataFrame(rows, columns=["meter", "P10", "P50", "P90", "actual", "last year"])
    frame["error"] = (frame["P50"] / frame["actual"] - 1).abs()
    frame["naive"] = (frame["last year"] / frame["actual"] - 1).abs()
    frame["held"] = frame["actual"].between(frame["P10"], frame["P90"])
    per_meter = frame.groupby("meter", sort=False)[["error", "naive", "held"]].mean()
    per_meter.loc["all meters"] = frame[["error", "naive", "held"]].mean()
    weather = "the weather that happened" if happened else "default (past-years) weather"
    seconds = (time.perf_counter() - started) / len(months)
    print(f"\n{name} ({site.timezone}), {weather}: {len(months)} one-shot month-ahead budgets "
          f"from {months[0]} ({seconds:.0f} s each)")  # fmt: skip
    print(f"  {'meter':<16}{'P50 MAPE':>10}{'last year':>11}{'skill':>8}{'P10–P90 held':>14}")
    for meter, row in per_meter.iterrows():
        skill = 1 - row["error"] / row["naive"]
        print(f"  {meter:<16}{row['error']:>9.2%}{row['naive']:>10.2%}{skill:>+8.0%}"
              f"{row['held']:>13.0%}")  # fmt: skip
    overall, missed = per_meter.loc["all meters"], []
    if not happened and 1 - overall["error"] / overall["naive"] < SKILL_TARGET:
        missed.append(f"{name}: skill against last year under {SKILL_TARGET:.0%}")
    if not COVERAGE[0] <= overall["held"] <= COVERAGE[1]:
        missed.append(f"{name}, {weather}: P10–P90 held {overall['held']:.0%} overall")
    for meter, row in per_meter.drop("all meters").iterrows():
        if not METER_COVERAGE[0] <= row["held"] <= METER_COVERAGE[1]:
            missed.append(f"{name}, {weather}: {meter} held {row['held']:.0%}")
    return missed


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--origins", type=int, default=24, help="months budgeted, the last ones")
    parser.add_argument("--hemisphere", choices=[*SITES, "both"], default="both")
    parser.add_argument("--happened", action="store_true", help="also budget on the weather "
                        "that happened (a scenario run)")  # fmt: skip
    options = parser.parse_args()
    names = list(SITES) if options.hemisphere == "both" else [options.hemisphere]
    missed = []
    for name in names:
        for happened in [False, True] if options.happened else [False]:
            missed += score(name, SITES[name], options.origins, happened)
    print("missed: " + "; ".join(missed) if missed else "\nevery target held")
    return 1 if missed else 0


if __name__ == "__main__":
    sys.exit(main())
