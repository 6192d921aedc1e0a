"""Weather-driven meters judged against the weather: synthetic meters with known ground truth.

The meter is invented (Kestrel Hall, a chilled-water and heating load on the America/Chicago
clock, hourly): 40 kWh base, 70 kWh more in occupied hours (weekdays 08–19, a quarter of that
at weekends), 6 kWh per °C above 16 °C and 2 kWh per °C below 8 °C of the temperature mid-hour,
times lognormal noise with a 4 % CV. Its weather is a seasonal and daily cycle with an AR(1)
anomaly and five six-day hot spells 7 °C above it. The thresholds are the defaults.

Measured on these series (without temperatures, i.e. as the detectors judged every meter
before, against with them; :mod:`engine.cleaning.weather_response`):

* no faults: 19 spikes, 1 dip and 35 high or low days against nothing;
* the same with an autumn 5 °C warmer for 100 days: a level shift (×0.63: the previous
  autumn's drop, which the warm autumn did not repeat a year later) against none;
* 24 injected spikes (×3, 8 of them on hot afternoons) and a step in base load from 40 to
  100 kWh: spike recall 20/24 and precision 20/27 against recall 24/24 and precision 24/24;
  the step is found on its day both ways (×1.59 on daily energy, ×1.64 normalised to the
  average weather).
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from engine.changepoint import ChangePointFit
from engine.cleaning import find_all
from engine.cleaning.prepared import PreparedMeter
from engine.cleaning.settings import CleaningSettings
from engine.cleaning.weather_response import interval_temperatures
from engine.meters import MeterSeries
from engine.project import Project
from engine.reading import ReadOptions
from engine.steps.cleaning import review_meter
from engine.steps.importing import create_project, read_project_files

ZONE = "America/Chicago"
HOUR = pd.Timedelta(hours=1)
START = pd.Timestamp("2022-01-03", tz=ZONE).tz_convert("UTC")  # a Monday
INDEX = pd.date_range(START, periods=3 * 364 * 24, freq="h")
HOT_SPELLS = ("2022-07-11", "2022-08-15", "2023-07-17", "2023-08-21", "2024-07-08")
COOLING = (16.0, 6.0)  # balance point °C, kWh per hour per °C above it
HEATING = (8.0, 2.0)  # balance point °C, kWh per hour per °C below it
BASE_STEP = pd.Timestamp("2024-03-04", tz=ZONE)  # base load 40 → 100 kWh from this local day
SPIKE_FACTOR = 3.0


def kestrel_weather(warm_autumn: bool = False) -> pd.Series:
    """Hourly °C: seasons, a daily cycle, an AR(1) anomaly and the hot spells."""
    generator = np.random.default_rng(7)
    local = INDEX.tz_convert(ZONE)
    day, hour = local.day_of_year.to_numpy(), local.hour.to_numpy()
    phi = 0.97
    shocks = np.sqrt(1 - phi**2) * generator.standard_normal(INDEX.size)
    anomaly = np.empty(INDEX.size)
    anomaly[0] = 0.0
    for i in range(1, INDEX.size):
        anomaly[i] = phi * anomaly[i - 1] + shocks[i]
    temps = (
        11
        - 13 * np.cos(2 * np.pi * (day - 20) / 365.25)
        + 4.5 * np.cos(2 * np.pi * (hour - 15) / 24)
        + 3.5 * anomaly
    )
    spans = [(first, 6, 7.0) for first in HOT_SPELLS]
    if warm_autumn:
        spans.append(("2023-09-01", 100, 5.0))
    for first, days, warmer in spans:
        begin = pd.Timestamp(first, tz=ZONE)
        temps[(local >= begin) & (local < begin + pd.Timedelta(days=days))] += warmer
    return pd.Series(temps, index=INDEX)


def kestrel_load(temps: pd.Series, base_step: bool = False) -> np.ndarray:
    """Hourly kWh of the hall under ``temps``: base, occupancy, cooling, heating and noise."""
    generator = np.random.default_rng(8)
    local = INDEX.tz_convert(ZONE)
    hour, weekday = local.hour.to_numpy(), local.day_of_week.to_numpy() < 5
    occupied = ((hour >= 8) & (hour < 19)) * np.where(weekday, 1.0, 0.25)
    base = np.where(base_step & (local >= BASE_STEP), 100.0, 40.0)
    t = midpoint_temperatures(temps)
    mean = (
        base
        + 70 * occupied
        + COOLING[1] * np.maximum(t - COOLING[0], 0)
        + HEATING[1] * np.maximum(HEATING[0] - t, 0)
    )
    sigma = np.sqrt(np.log(1 + 0.04**2))
    return mean * generator.lognormal(-(sigma**2) / 2, sigma, INDEX.size)


def midpoint_temperatures(temps: pd.Series) -> np.ndarray:
    """Each hour's temperature at its middle: the mean of its start and the next hour's."""
    t = temps.to_numpy()
    return np.append((t[:-1] + t[1:]) / 2, np.nan)


def meter_of(values: np.ndarray) -> MeterSeries:
    readings = pd.Series(values, index=INDEX)
    return MeterSeries("Kestrel Hall", "chilled_water", readings, HOUR, ZONE)


def injected_spikes(temps: pd.Series) -> np.ndarray:
    """24 hours to spike: 8 hot afternoons (above 28 °C, 13–18 h) and 16 anywhere."""
    generator = np.random.default_rng(11)
    hour = INDEX.tz_convert(ZONE).hour
    hot = np.flatnonzero((temps.to_numpy() > 28) & (hour >= 13) & (hour < 18))
    chosen = [generator.choice(hot, 8, replace=False), generator.choice(INDEX.size, 16, False)]
    return np.unique(np.concatenate(chosen))


def kinds(findings) -> list[str]:
    return sorted(f.kind for f in findings)


def covers(finding, position: int) -> bool:
    return finding.start <= INDEX[position] < finding.end


@pytest.fixture(scope="module")
def weather() -> pd.Series:
    return kestrel_weather()


def test_hot_spells_raise_nothing_when_judged_against_the_weather(weather):
    meter = meter_of(kestrel_load(weather))
    judged = find_all(meter, temperatures=weather)
    assert judged == []
    # Without temperatures the same hot afternoons are spikes: the test can fail.
    assert kinds(find_all(meter)).count("spike") >= 10


def test_the_learned_response_matches_the_simulated_one(weather):
    meter = meter_of(kestrel_load(weather))
    prepared = PreparedMeter.build(
        meter.name, meter.values, HOUR, ZONE, CleaningSettings(), temperatures=weather
    )
    response = prepared.weather
    assert response is not None and response.share > 0.9
    assert response.model.kind == "5P"
    # Change points come from daily means, which average the hours above and below the
    # hourly balance points: within 1.5 °C of them.
    heating_point, cooling_point = response.model.change_points_
    assert heating_point == pytest.approx(HEATING[0], abs=1.5)
    assert cooling_point == pytest.approx(COOLING[0], abs=1.5)
    heating, cooling = response.slopes.T  # per local hour, kWh per hour per °C
    assert np.median(heating) == pytest.approx(HEATING[1], rel=0.1)
    assert np.median(cooling) == pytest.approx(COOLING[1], rel=0.1)


def test_a_warm_autumn_is_not_a_level_shift():
    warm = kestrel_weather(warm_autumn=True)
    meter = meter_of(kestrel_load(warm))
    assert [f for f in find_all(meter, temperatures=warm) if f.kind == "level_shift"] == []
    assert "level_shift" in kinds(find_all(meter))  # the weather-blind detector reports one


def test_injected_spikes_and_a_base_load_step_are_found(weather):
    values = kestrel_load(weather, base_step=True)
    spiked = injected_spikes(weather)
    values[spiked] *= SPIKE_FACTOR
    findings = find_all(meter_of(values), temperatures=weather)
    spikes = [f for f in findings if f.kind == "spike"]
    recall = np.mean([any(covers(f, at) for f in spikes) for at in spiked])
    precision = np.mean([any(covers(f, at) for at in spiked) for f in spikes])
    assert recall >= 0.95 and precision >= 0.95, (recall, precision)  # blind: 0.83 and 0.74
    (shift,) = [f for f in findings if f.kind == "level_shift"]
    assert shift.start == BASE_STEP.tz_convert("UTC")
    assert shift.measures["weather_normalised"] == 1.0 and shift.measures["ratio"] > 1.4
    assert set(kinds(findings)) == {"spike", "level_shift"}


def test_weather_for_part_of_the_record_leaves_level_shifts_to_daily_energy(weather):
    # Normalised daily energy would be unknown before the weather starts, hiding shifts there.
    partial = weather[weather.index >= pd.Timestamp("2024-06-01", tz="UTC")]  # after the step
    findings = find_all(meter_of(kestrel_load(weather, base_step=True)), temperatures=partial)
    (shift,) = [f for f in findings if f.kind == "level_shift"]
    assert shift.start == BASE_STEP.tz_convert("UTC")
    assert shift.measures["weather_normalised"] == 0.0
    assert shift.explanation.startswith("Daily energy changed")


def test_a_hot_afternoon_spike_says_what_it_was_judged_against(weather):
    values = kestrel_load(weather)
    middle = midpoint_temperatures(weather)
    hottest = int(np.nanargmax(middle))
    values[hottest] *= SPIKE_FACTOR
    (spike,) = find_all(meter_of(values), temperatures=weather)
    assert spike.measures["temperature_c"] == pytest.approx(middle[hottest])
    expected_weather = COOLING[1] * (middle[hottest] - COOLING[0])
    assert spike.measures["weather_kwh"] == pytest.approx(expected_weather, rel=0.15)
    assert f"judged against the weather, about {spike.expected_kwh:,.0f} kWh is expected" in (
        spike.explanation
    )
    assert f"at {middle[hottest]:.0f} °C" in spike.explanation


def test_a_meter_the_weather_does_not_drive_is_judged_as_before(weather):
    generator = np.random.default_rng(9)
    hour = INDEX.tz_convert(ZONE).hour.to_numpy()
    values = (30 + 50 * ((hour >= 7) & (hour < 20))) * generator.lognormal(0, 0.05, INDEX.size)
    values[5000] *= 4  # one spike, so there is something to find
    meter = meter_of(values)
    prepared = PreparedMeter.build(
        meter.name, meter.values, HOUR, ZONE, CleaningSettings(), temperatures=weather
    )
    assert prepared.weather is None
    assert find_all(meter, temperatures=weather) == find_all(meter)


def test_a_project_review_uses_its_weather_station(tmp_path, weather):
    # The hall and its weather written as files and imported as a person would; a second,
    # warmer station with half the hours only fills hours the main one lacks (it has none),
    # so the meter is judged against the same weather: without it, spikes would be found.
    meter_csv, weather_csv = tmp_path / "kestrel.csv", tmp_path / "station.csv"
    stamps = INDEX.strftime("%Y-%m-%dT%H:%M:%S+00:00")
    values = np.round(kestrel_load(weather), 3)
    pd.DataFrame({"Timestamp": stamps, "Kestrel Hall (kWh)": values}).to_csv(meter_csv, index=False)
    temps = np.round(weather.to_numpy(), 2)
    pd.DataFrame({"Time": stamps, "Dry bulb (°C)": temps}).to_csv(weather_csv, index=False)
    options = ReadOptions(timezone=ZONE, stamps="start")
    files = read_project_files([meter_csv], weather=[weather_csv], options=options)
    path = tmp_path / f"kestrel{Project.EXTENSION}"
    with create_project(path, files, timezone=ZONE) as project:
        (name,) = project.meter_names()
        assert review_meter(project, name).findings == []
        stored = project.load_weather()
        source = project.add_source("weather", weather_csv, {}, [])
        backup = stored.iloc[::2] + 5.0
        project.add_weather("Second station", backup, backup, source_id=source)
        review = review_meter(project, name)
    assert review.findings == []
    assert "spike" in kinds(find_all(review.meter))


def test_interval_temperatures_match_pandas_interpolation_and_daily_means(weather):
    hourly = weather.iloc[: 24 * 120]
    # Quarter hours take the temperature at their midpoint, linear in time (pandas as the
    # reference).
    quarters = pd.date_range(hourly.index[0], hourly.index[-1], freq="15min", inclusive="left")
    middles = quarters + pd.Timedelta(minutes=7.5)
    reference = (
        hourly.reindex(hourly.index.union(middles)).interpolate(method="time").reindex(middles)
    )
    computed = interval_temperatures(hourly, quarters, pd.Timedelta(minutes=15))
    np.testing.assert_allclose(computed, reference.to_numpy())
    # Local days (23 h on 2022-03-13) take the mean of their hours.
    local = hourly.tz_convert(ZONE)
    by_day = local.groupby(local.index.normalize()).agg(["mean", "size"])
    whole = by_day[by_day["size"] >= 23]
    days = whole.index.tz_convert("UTC")
    computed = interval_temperatures(hourly, days, pd.Timedelta(days=1))
    np.testing.assert_allclose(computed, whole["mean"].to_numpy())
    assert len(whole) == 120 and (whole["size"] == 23).sum() == 1


@pytest.mark.parametrize("kind", ["2P", "3PH", "3PC", "4P", "5P"])
def test_weather_terms_rebuild_the_change_point_prediction(kind):
    generator = np.random.default_rng(3)
    temps = generator.uniform(-10, 32, 400)
    energy = 500 + 30 * np.maximum(10 - temps, 0) + 45 * np.maximum(temps - 18, 0)
    if kind == "2P":
        energy = 900 - 12 * temps  # falling: the term is −T
    model = ChangePointFit(kind).fit(temps, energy + generator.normal(0, 5, temps.size))
    slopes = {
        "2P": [max(model.heating_slope_, model.cooling_slope_)],
        "3PH": [model.heating_slope_],
        "3PC": [model.cooling_slope_],
        "4P": [model.heating_slope_, model.cooling_slope_],
        "5P": [model.heating_slope_, model.cooling_slope_],
    }[kind]
    terms = model.weather_terms(temps)
    np.testing.assert_allclose(model.intercept_ + terms @ slopes, model.predict(temps))
