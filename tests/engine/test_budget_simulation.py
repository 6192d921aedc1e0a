"""Budget simulation: per-path sums, the as-of cut, actuals to date, roll-ups against the truth.

The synthetic campus and its test model come from ``test_budget_campus`` (documented there);
its noise and structure are known, so the roll-up's range is checked against the true
distribution of the campus total, found by simulating the true process many times.
"""

from __future__ import annotations

import json
from dataclasses import replace
from datetime import date

import numpy as np
import pandas as pd
import pytest

from engine.backtest import ACTUAL_WEATHER, run_backtest
from engine.budget import (
    MeterPlan,
    WeatherAssumption,
    budget_months,
    rolling_refits,
    simulate_budget,
    simulate_paths,
    summarise,
)
from engine.budget.periods import BudgetWindow, as_of_cut
from engine.errors import InputError
from engine.models.base import ModelInputs
from engine.progress import Cancelled, Progress
from tests.engine.test_budget_campus import (
    METERS,
    ZONE,
    Campus,
    WeekSlotDegreeModel,
    campus_plans,
    make_campus,
    true_campus_totals,
)

AS_OF = date(2024, 3, 15)


@pytest.fixture(scope="module")
def campus() -> Campus:
    return make_campus(seed=21)


@pytest.fixture(scope="module")
def plans(campus: Campus) -> list[MeterPlan]:
    return campus_plans(campus, AS_OF)


def test_days_add_up_to_months_and_months_to_the_period_on_every_path(
    campus: Campus, plans: list[MeterPlan]
) -> None:
    months = budget_months("2024-03", months=3)
    totals = simulate_paths(
        plans, months, AS_OF, WeatherAssumption.past_years(campus.weather), paths=300, rng=4
    )
    window = BudgetWindow.of(months, ZONE)
    month_of_day = window.month_of_day()
    for meter in totals.meters:
        by_month = np.stack([meter.days[:, month_of_day == m].sum(axis=1) for m in range(3)], 1)
        np.testing.assert_allclose(meter.months, by_month, rtol=1e-12)
    run = summarise(totals)
    for budget, meter in zip(run.meters, totals.meters, strict=True):
        assert budget.total.energy.mean == pytest.approx(
            sum(month.energy.mean for month in budget.months), rel=1e-12
        )
        assert budget.total.energy.quantiles["50"] == pytest.approx(
            np.median(meter.months.sum(axis=1)), rel=1e-12
        )
        assert list(budget.daily.columns) == ["mean", "P10", "P50", "P90"]
        assert len(budget.daily) == 92
    # The campus is the sum path by path: its quantiles are those of the per-path sums
    # (numpy's percentile of the summed paths), which differ from the sum of the quantiles.
    campus_paths = np.sum([meter.months.sum(axis=1) for meter in totals.meters], axis=0)
    p10, p90 = np.percentile(campus_paths, [10, 90])
    assert run.campus.total.energy.quantiles["10"] == pytest.approx(p10, rel=1e-12)
    assert run.campus.total.energy.quantiles["90"] == pytest.approx(p90, rel=1e-12)
    stored = json.loads(json.dumps(run.to_json()))  # plain JSON, as the command line prints it
    assert stored["campus"]["total"]["quantiles"]["90"] == pytest.approx(p90, rel=1e-12)
    summed_p90 = sum(budget.total.energy.quantiles["90"] for budget in run.meters)
    assert summed_p90 > p90
    assert [group.group for group in run.utilities] == ["electricity", "natural_gas"]
    electric = run.utilities[0]
    assert electric.total.energy.mean == pytest.approx(
        sum(b.total.energy.mean for b in run.meters if b.utility == "electricity"), rel=1e-12
    )


def _scrambled_after(inputs: ModelInputs, cut: pd.Timestamp) -> ModelInputs:
    """The same inputs with every reading and temperature from the cut on made up."""
    after = inputs.index >= cut
    energy = inputs.energy.where(~after, inputs.energy * 3 + 1000)
    temperature = inputs.temperature.where(~after, inputs.temperature + 12)
    return replace(inputs, energy=energy, temperature=temperature)


def test_data_after_the_as_of_date_changes_nothing(campus: Campus, plans: list[MeterPlan]) -> None:
    cut = as_of_cut(AS_OF, ZONE)
    truncated = [replace(plan, history=plan.history.window(end=cut)) for plan in plans]
    scrambled = [replace(plan, history=_scrambled_after(plan.history, cut)) for plan in plans]
    weather = campus.weather
    hotter = weather.where(weather.index < cut, weather + 12)
    months = ["2024-03", "2024-04"]
    first = simulate_budget(
        truncated,
        months,
        AS_OF,
        WeatherAssumption.past_years(weather[weather.index < cut]),
        paths=200,
        rng=9,
    )
    second = simulate_budget(
        scrambled, months, AS_OF, WeatherAssumption.past_years(hotter), paths=200, rng=9
    )
    assert first.to_json() == second.to_json()
    for one, two in zip(first.meters, second.meters, strict=True):
        pd.testing.assert_frame_equal(one.daily, two.daily)


def test_a_month_under_way_is_the_metered_energy_to_date_plus_a_forecast(
    campus: Campus, plans: list[MeterPlan]
) -> None:
    run = simulate_budget(
        plans,
        ["2024-02", "2024-03"],
        AS_OF,
        WeatherAssumption.past_years(campus.weather),
        paths=200,
        rng=5,
    )
    for budget in run.meters:
        energy = campus.inputs[budget.name].energy
        local_day = energy.index.tz_convert(ZONE).tz_localize(None)
        february, march = budget.months
        # The metered sums, found with pandas on the local calendar.
        in_february = (local_day >= "2024-02-01") & (local_day < "2024-03-01")
        march_to_date = (local_day >= "2024-03-01") & (local_day < "2024-03-16")
        assert march.actual_to_date == pytest.approx(energy[march_to_date].sum(), rel=1e-12)
        # February lies wholly before the as-of date: every path is its metered total.
        assert february.actual_to_date == pytest.approx(energy[in_february].sum(), rel=1e-12)
        assert list(february.energy.quantiles.values()) == pytest.approx(
            [february.actual_to_date] * 3, rel=1e-12
        )
        # The rest of March is 16 days of forecast on top of the 15 metered ones.
        rest = march.energy.quantiles["10"] - march.actual_to_date
        daily_mean = energy[march_to_date].mean()
        assert 10 * daily_mean < rest < 22 * daily_mean
        assert budget.total.actual_to_date == pytest.approx(
            february.actual_to_date + march.actual_to_date
        )


def test_the_campus_range_is_the_true_range_of_the_sum(
    campus: Campus, plans: list[MeterPlan]
) -> None:
    """Against the known truth: the true process simulated 20,000 times under the same weather.

    Typical weather fixes the weather, so the spread is the noise's; the truth draws fresh
    noise with the documented AR(1) and cross-meter correlation. Adding the meters' ranges
    (perfect dependence) or combining them as independent would both miss it by > 15 %.
    The errors are resampled with the block length the budget chooses itself (Politis &
    White 2004, from the errors' autocorrelation): the stationary bootstrap keeps a lag-k
    correlation only with probability (1 − 1/m)^k, so too short a block would lose part of
    this AR(1)'s month-total spread (the calibration step corrects such shortfalls).
    """
    month = "2024-04"
    assumption = WeatherAssumption.typical(campus.weather)
    totals = simulate_paths(plans, [month], AS_OF, assumption, paths=4000, error_days=1800, rng=12)
    assert 1 < totals.block_days < 30
    run = summarise(totals)

    truth = true_campus_totals(campus, month, assumption, AS_OF, draws=20_000, seed=77)
    true_p10, true_p50, true_p90 = np.percentile(truth, [10, 50, 90])
    true_width = true_p90 - true_p10
    spread = run.campus.months[0].energy.quantiles
    width = spread["90"] - spread["10"]
    assert width == pytest.approx(true_width, rel=0.10)
    assert spread["50"] == pytest.approx(true_p50, abs=0.25 * true_width)
    widths = np.array(
        [
            b.months[0].energy.quantiles["90"] - b.months[0].energy.quantiles["10"]
            for b in run.meters
        ]
    )
    assert widths.sum() > 1.15 * true_width  # adding ranges overstates the campus range
    assert np.sqrt((widths**2).sum()) < 0.85 * true_width  # independence understates it


def test_sub_hourly_meters_are_budgeted_by_the_hour() -> None:
    """A 15-minute meter whose quarters are a quarter of an hourly meter's hours budgets the same.

    The test model gives each quarter a quarter of the hour's fit, so predictions and errors
    summed to the hour are the hourly meter's; with the same seed the two budgets agree.
    """
    hourly = make_campus(
        seed=31,
        hourly=True,
        first_day=date(2023, 6, 1),
        last_day=date(2024, 12, 31),
        meters=METERS[:1],
    )
    inputs = hourly.inputs[METERS[0].name]
    quarter_index = pd.date_range(
        inputs.index[0], inputs.index[-1] + pd.Timedelta(hours=1), freq="15min", inclusive="left"
    )
    quarters = ModelInputs(
        index=quarter_index,
        timezone=ZONE,
        energy=pd.Series(np.repeat(inputs.energy.to_numpy() / 4, 4), index=quarter_index),
        temperature=pd.Series(np.repeat(inputs.temperature.to_numpy(), 4), index=quarter_index),
    )
    as_of = date(2024, 10, 31)
    cut = as_of_cut(as_of, ZONE)
    weather = WeatherAssumption.typical(hourly.weather)
    runs = []
    for history in (inputs, quarters):
        plan = MeterPlan(
            name="Quarry Library",
            utility="electricity",
            model=WeekSlotDegreeModel().fit(history.window(end=cut)),
            history=history,
        )
        # November 2024 holds the autumn clock change: 721 hours.
        runs.append(simulate_budget([plan], ["2024-11"], as_of, weather, paths=300, rng=2))
    by_hour, by_quarter = (run.meters[0] for run in runs)
    assert len(by_hour.daily) == 30
    for level in ("10", "50", "90"):
        assert by_quarter.total.energy.quantiles[level] == pytest.approx(
            by_hour.total.energy.quantiles[level], rel=1e-9
        )
    pd.testing.assert_frame_equal(by_quarter.daily, by_hour.daily, rtol=1e-9)


def test_progress_is_reported_and_cancelling_stops_the_run(
    campus: Campus, plans: list[MeterPlan]
) -> None:
    seen: list[float] = []
    progress = Progress(lambda fraction, message: seen.append(fraction))
    simulate_paths(
        plans,
        ["2024-04"],
        AS_OF,
        WeatherAssumption.typical(campus.weather),
        paths=50,
        rng=1,
        progress=progress,
    )
    assert seen == sorted(seen) and seen[-1] == 1.0 and len(seen) >= 2 * len(plans)

    def cancel_when_simulating(fraction: float, message: str) -> None:
        if "paths" in message:
            stopping.cancel()

    stopping = Progress(cancel_when_simulating)
    with pytest.raises(Cancelled):
        simulate_paths(
            plans,
            ["2024-04"],
            AS_OF,
            WeatherAssumption.typical(campus.weather),
            paths=50,
            rng=1,
            progress=stopping,
        )


def test_budgets_that_cannot_be_made_say_why(campus: Campus, plans: list[MeterPlan]) -> None:
    typical = WeatherAssumption.typical(campus.weather)
    with pytest.raises(InputError, match="uses outdoor temperature"):
        simulate_paths(plans, ["2024-04"], AS_OF, WeatherAssumption.none(), paths=10)
    with pytest.raises(InputError, match="more than once"):
        simulate_paths([plans[0], plans[0]], ["2024-04"], AS_OF, typical, paths=10)
    elsewhere = replace(plans[1], history=replace(plans[1].history, timezone="Europe/Vienna"))
    with pytest.raises(InputError, match="different local clocks"):
        simulate_paths([plans[0], elsewhere], ["2024-04"], AS_OF, typical, paths=10)
    short = WeatherAssumption.given(campus.weather[campus.weather.index < "2024-04-10"])
    with pytest.raises(InputError, match=r"no value for \d+ budget hour"):
        simulate_paths(plans, ["2024-04"], AS_OF, short, paths=10)
    with pytest.raises(InputError, match="include 50"):
        simulate_budget(plans, ["2024-04"], AS_OF, typical, levels=(5, 95), paths=10)
    with pytest.raises(InputError, match="calendar labels"):
        MeterPlan(
            "Annex",
            "electricity",
            plans[0].model,
            replace(plans[0].history, labels=pd.DataFrame(index=plans[0].history.index)),
        )


def test_out_of_sample_errors_come_from_refits_before_each_month(campus: Campus) -> None:
    """The month-ahead errors of the model refitted before each month, as a backtest has them."""
    daily = campus.inputs["Quarry Library"]
    history = daily.window(end=as_of_cut(date(2023, 12, 31), ZONE))
    refits = rolling_refits(WeekSlotDegreeModel(), history, 6)
    errors = refits.errors
    local = errors.index.tz_convert(ZONE)
    assert (local[0].date(), local[-1].date()) == (date(2023, 7, 1), date(2023, 12, 31))
    assert sorted(refits.models) == [f"2023-{m:02d}" for m in range(7, 13)]
    # The models' own rolling-origin backtest makes the same one-month-ahead forecasts.
    result = run_backtest(
        {"week slots": WeekSlotDegreeModel()},
        history,
        origins=6,
        horizons=(1,),
        weather_history=campus.weather,
    )
    ahead = result.forecasts[(result.forecasts["weather"] == ACTUAL_WEATHER)]
    np.testing.assert_allclose(
        errors.to_numpy(), (ahead["actual kWh"] - ahead["predicted kWh"]).to_numpy(), rtol=1e-12
    )
    # October 2023 recomputed by hand: fit on the days before it, predict it under the
    # measured temperatures, subtract from the metered energy.
    start, end = as_of_cut(date(2023, 9, 30), ZONE), as_of_cut(date(2023, 10, 31), ZONE)
    model = WeekSlotDegreeModel().fit(daily.window(end=start))
    october = daily.window(start=start, end=end)
    expected = october.energy - model.predict(october.without_energy())
    pd.testing.assert_series_equal(
        errors[(errors.index >= start) & (errors.index < end)], expected, check_names=False
    )
    assert refits.errors_before(start).index.max() < start
    with pytest.raises(InputError, match="no model fitted before 2023-01"):
        refits.model_for("2023-01")
    plans = campus_plans(campus, date(2023, 12, 31))
    plans[0] = replace(plans[0], residuals=errors)
    run = simulate_budget(
        plans,
        ["2024-01"],
        "2023-12-31",
        WeatherAssumption.typical(campus.weather),
        paths=100,
        rng=1,
        error_days=180,
    )
    assert run.assumptions["model_errors"]["Quarry Library"].startswith("out-of-sample")
    assert run.assumptions["model_errors"]["Boiler House"].startswith("fit-period")


def test_a_given_series_and_recent_past_years_are_weather_assumptions(
    campus: Campus, plans: list[MeterPlan]
) -> None:
    given = simulate_budget(
        plans, ["2024-04"], AS_OF, WeatherAssumption.given(campus.weather), paths=100, rng=1
    )
    assert given.weather == "the given temperature series"
    recent = simulate_paths(
        plans,
        ["2024-04"],
        AS_OF,
        WeatherAssumption.past_years(campus.weather, years=5),
        paths=100,
        rng=1,
    )
    # Departures come only from whole local days of the five years before the budget
    # (from local midnight of 2019-03-31 on) and before the as-of cut.
    drawn = recent.weather.drawn_days
    assert drawn.shape == (50, 30)
    assert drawn.min() >= np.datetime64("2019-03-31") and drawn.max() <= np.datetime64(AS_OF)
    assert np.bincount(recent.scenario_of_path).tolist() == [2] * 50  # equal shares


def test_error_days_across_clock_changes_fill_the_skipped_hour_and_keep_the_first_repeat():
    from engine.budget.residuals import error_table

    # IANA zone America/Chicago: 2026-03-08 has 23 local hours (02:00 is skipped), 2026-11-01
    # has 25 (01:00 happens twice). Each error is its own UTC hour number, so the slots show
    # which reading landed where.
    hours = pd.date_range("2026-03-07 06:00", "2026-03-10 05:00", freq="h", tz="UTC").append(
        pd.date_range("2026-10-31 05:00", "2026-11-03 06:00", freq="h", tz="UTC", inclusive="left")
    )
    errors = pd.Series(np.arange(len(hours), dtype=float), index=hours)
    table = error_table(errors, "America/Chicago", pd.Timedelta(hours=1))
    days = pd.to_datetime(table.index.to_numpy().astype("datetime64[D]"))
    spring = table.iloc[list(days).index(pd.Timestamp("2026-03-08"))]
    assert spring[2] == spring[3]  # the skipped 02:00 takes 03:00's error
    fall = table.iloc[list(days).index(pd.Timestamp("2026-11-01"))]
    assert fall[2] == fall[1] + 2  # 01:00 kept its first reading: 02:00 came two hours later
    assert len(table) == 6 and not table.isna().any().any()
