"""Calibration of budget ranges: the coverage check, the split-conformal scale, and the backtest.

The rolling month-ahead backtest runs on the synthetic campus of ``test_budget_campus``
(documented there, known noise), at daily resolution to stay fast.
"""

from __future__ import annotations

import re
from dataclasses import replace
from datetime import date

import numpy as np
import pandas as pd
import pytest
from scipy.stats import norm

from engine.budget import (
    BudgetBacktest,
    Calibration,
    MeterBudget,
    MeterPlan,
    WeatherAssumption,
    backtest_budget,
    budget_months,
    calibrate,
    conformal_scale,
    plans_from_refits,
    rolling_calibration,
    rolling_refits,
    simulate_budget,
    simulate_paths,
    summarise,
    widen,
)
from engine.budget.calibration import (
    MAX_SCALE,
    SHORTEST_WINDOW,
    agreed_pooling,
    log_scale_variance,
    pair_scores,
    site_calibrations,
)
from engine.budget.past_budgets import settled
from engine.budget.skill import LAST_YEAR, skill
from engine.errors import InputError
from engine.progress import Progress
from tests.engine.test_budget_campus import (
    METERS,
    Campus,
    WeekSlotDegreeModel,
    campus_plans,
    make_campus,
)


def _pairs(actual: np.ndarray, p10: np.ndarray, mean: np.ndarray, p90: np.ndarray) -> pd.DataFrame:
    """Past budgets whose paths' mean (the widening centre) is also their P50."""
    return pd.DataFrame(
        {"actual kWh": actual, "P10": p10, "mean kWh": mean, "P50": mean, "P90": p90}
    )


def test_the_scale_is_the_quantile_the_method_names() -> None:
    # Twelve months, P10–P90 = 90–110 around a mean of 100; misses of these sizes give the
    # scores |miss| / 10. Their 80 % quantile at the rank 0.8 · (12 + 1) = 10.4 of the sorted
    # scores (Hyndman & Fan 1996, definition 6; numpy's "weibull" method computes the same),
    # i.e. 2.0 + 0.4 · (2.5 − 2.0) = 2.2.
    misses = np.array([-3, 5, 12, -15, 8, 20, -1, 30, 4, -19, 25, 2], dtype=float)
    actual = 100 + misses
    flat = np.full(12, 1.0)
    scores = np.abs(misses) / 10
    scale = conformal_scale(actual, 100 * flat, 90 * flat, 110 * flat, 0.8)
    assert scale == pytest.approx(np.quantile(scores, 0.8, method="weibull")) == pytest.approx(2.2)
    result = calibrate(_pairs(actual, 90 * flat, 100 * flat, 110 * flat))
    assert (result.held, result.tried) == (6, 12)
    assert result.scale == pytest.approx(2.2)
    assert "widened by a factor 2.20" in result.sentence()
    assert "conformal scaling" in result.method


def test_a_single_meter_calibrates_on_a_year_and_a_site_on_six_months() -> None:
    # The shortest recent window (6 to 12 months) that gives every meter 12 months of
    # evidence: a lone meter needs its own twelve; two meters need six each (6 + 6).
    months = [f"2024-{month:02d}" for month in range(1, 13)] + ["2025-01", "2025-02"]
    rng = np.random.default_rng(9)
    frames = []
    for name in ("A", "B"):
        actual = 100 + 10 * rng.standard_normal(len(months))
        frame = _pairs(actual, np.full(14, 95.0), np.full(14, 100.0), np.full(14, 105.0))
        frames.append(frame.assign(month=months, name=name))
    alone = site_calibrations(frames[0])
    assert alone["A"].tried == 12 and "other meters" not in alone["A"].method
    both = site_calibrations(pd.concat(frames, ignore_index=True))
    assert both["A"].tried == both["B"].tried == 6
    assert both["A"].scale == pytest.approx(
        np.quantile(
            np.abs(pd.concat(frames)["actual kWh"].to_numpy().reshape(2, 14)[:, -6:] - 100) / 5,
            0.8,
            method="weibull",
        )
    )


def _site(spreads: dict[str, float], months: int = 12, seed: int = 11) -> pd.DataFrame:
    """Past budgets of a site: each meter's actual totals scatter around 100 with its own
    spread (normal), against ranges P10–P90 of 90–110 (honest for a spread of 7.8)."""
    rng = np.random.default_rng(seed)
    labels = [f"2025-{month:02d}" for month in range(1, months + 1)]
    flat = np.ones(months)
    frames = [
        _pairs(
            100 + spread * rng.standard_normal(months), 90 * flat, 100 * flat, 110 * flat
        ).assign(month=labels, name=name)
        for name, spread in spreads.items()
    ]
    return pd.concat(frames, ignore_index=True)


def test_a_meter_unlike_its_site_leans_on_it_less() -> None:
    # Five meters whose ranges are three times too narrow (spread 23) and one whose ranges are
    # honest (7.8, the normal 10 / 1.2816: its true scale is 1). Pooled fully, the honest
    # meter's ranges were widened as far as the others' (2.2 to 3.6 here); now, judged on the
    # last six months, its site counts for about a month, its window grows to a year of its
    # own, and its scale stays near 1 while the others' (true scale 23 / 7.8 = 2.9) stay far
    # above.
    site = _site({**{f"W{k}": 23.0 for k in range(5)}, "Steady": 7.8})
    judged = site[site["month"].isin(sorted(site["month"].unique())[-SHORTEST_WINDOW:])]
    scores = {name: pair_scores(rows) for name, rows in judged.groupby("name")}
    limits = agreed_pooling(scores, 0.8)
    assert limits["Steady"] < 3 and all(limits[f"W{k}"] < 24 for k in range(5))
    made = site_calibrations(site)
    assert f"(counting as {round(limits['Steady'], 1):g} months)" in made["Steady"].method
    assert made["Steady"].tried > 6
    assert 0.6 < made["Steady"].scale < 1.3
    assert min(made[f"W{k}"].scale for k in range(5)) > 1.8


def test_meters_that_agree_mostly_pool_fully() -> None:
    # Six meters drawn alike, judged on their last six months as site_calibrations judges
    # them: their scales differ by sampling noise only, so most meters' pools count for the
    # full two years of months (over 100 sites: 58 %, a third under twelve; judged on a year
    # of months 83 % and 9 %, the price of judging on the months the scales come from).
    full, short = [], []
    for seed in range(100):
        site = _site({f"M{k}": 10.0 for k in range(6)}, months=SHORTEST_WINDOW, seed=seed)
        scores = {name: pair_scores(rows) for name, rows in site.groupby("name")}
        limits = np.array(list(agreed_pooling(scores, 0.8).values()))
        full.append(np.mean(limits >= 24 - 1e-9))
        short.append(np.mean(limits < 12))
    assert np.mean(full) > 0.5 and np.mean(short) < 0.4
    # A site that agrees is calibrated on six months, each meter beside the others' 30.
    made = site_calibrations(_site({f"M{k}": 10.0 for k in range(6)}, seed=4))
    assert sum(calibration.tried == 6 for calibration in made.values()) >= 3
    # Fewer than three meters: nothing to judge a spread on, the other meter counts fully.
    two = {name: scores[name] for name in ("M0", "M3")}
    assert agreed_pooling(two, 0.8) == {"M0": 24.0, "M3": 24.0}


def test_a_site_corrects_nothing_on_fewer_than_six_months_however_many_meters() -> None:
    # Eight meters whose ranges are three times too narrow: four past months of them are 32
    # meter-months, but four draws of the site's weather, too few to correct by. From six on
    # the pool counts (as far as the meters agree, so a meter may need more of its own).
    site = _site({f"M{k}": 23.0 for k in range(8)}, months=4, seed=3)
    made = site_calibrations(site)
    assert all(calibration.scale == 1.0 for calibration in made.values())
    assert all("fewer than the 12 needed" in calibration.method for calibration in made.values())
    made = site_calibrations(_site({f"M{k}": 23.0 for k in range(8)}, months=6, seed=3))
    assert sum(calibration.scale > 1.8 for calibration in made.values()) >= 4


def _early_and_settled(early_spread: float, settled_months: int) -> pd.DataFrame:
    """Twelve past months of three meters: the first ones budgeted from short-history refits
    (``settled`` False) missing with ``early_spread``, the last ``settled_months`` honest."""
    site = _site({"A": 7.8, "B": 7.8, "C": 7.8}, seed=5)
    month_number = site["month"].str[5:].astype(int)
    early = month_number <= 12 - settled_months
    site.loc[early, "actual kWh"] = 100 + early_spread / 7.8 * (site.loc[early, "actual kWh"] - 100)
    return site.assign(settled=~early)


def test_early_past_budgets_from_short_history_refits_do_not_narrow_a_range() -> None:
    # Eight early months that held by far (a spread of 2 against ranges honest for 7.8, as
    # the first past budgets of a short history do: their errors came from refits on a few
    # months) and four settled ones: the six recent months would narrow the ranges, but
    # only four of them are settled, too few to narrow by, so the ranges stay as simulated.
    site = _early_and_settled(early_spread=2.0, settled_months=4)
    unmarked = site_calibrations(site.drop(columns="settled"))
    assert all(made.scale < 0.95 for made in unmarked.values())
    kept = site_calibrations(site)
    assert all(made.scale == 1.0 for made in kept.values())
    assert all("less than a year of readings" in made.method for made in kept.values())
    assert all("those before 2025-09" in made.method for made in kept.values())
    # A meter whose readings began later has no settled month yet: the words say so.
    later = site.assign(settled=site["settled"] & (site["name"] != "C"))
    assert "but all the past months drew" in site_calibrations(later)["C"].method
    # With seven settled months the settled ones alone calibrate (the early ones are left out).
    site = _early_and_settled(early_spread=2.0, settled_months=7)
    alone = site_calibrations(site[site["settled"]].drop(columns="settled"))
    made = site_calibrations(site)
    assert made == alone


def test_early_past_budgets_that_missed_still_widen_a_range() -> None:
    # Early months that missed by far (spread 25 against ranges honest for 7.8) widen the
    # range as they did: only narrowing needs settled evidence.
    site = _early_and_settled(early_spread=25.0, settled_months=4)
    made = site_calibrations(site)
    assert made == site_calibrations(site.drop(columns="settled"))
    assert all(calibration.scale > 1.2 for calibration in made.values())


def test_a_past_budget_is_settled_once_every_error_it_draws_follows_a_year_of_readings(
    campus: Campus,
) -> None:
    # The errors a budget as of a day draws are those of the 366 days before its cut; they
    # are like a later model's once the model that made the first of them had a year of
    # readings (the campus's readings start on 2019-01-01).
    name = METERS[0].name
    inputs = campus.inputs[name]
    model = WeekSlotDegreeModel()  # not used: only the errors' dates count
    refitted = inputs.index[inputs.index >= pd.Timestamp("2019-02-01", tz="UTC")]
    errors = pd.Series(0.0, index=refitted)
    plan = MeterPlan(name, METERS[0].utility, model, inputs, residuals=errors)
    assert not settled(plan, date(2020, 6, 30), 366)  # errors from 2019-07, six months in
    assert not settled(plan, date(2020, 12, 30), 366)  # from 2019-12-31, a day short
    assert settled(plan, date(2020, 12, 31), 366)  # from 2020-01-01 (2020 has 366 days)
    # Without errors of its own the budget draws the fit's residuals over the same window.
    assert settled(replace(plan, residuals=None), date(2020, 12, 31), 366)
    assert not settled(replace(plan, residuals=None), date(2020, 6, 30), 366)


def test_the_bootstrap_variance_of_a_log_scale_shrinks_with_more_months() -> None:
    # The sampling variance of a quantile falls as 1 / n (Hyndman & Fan's estimators are
    # consistent; common practice): four times the months, about a quarter of the variance.
    rng = np.random.default_rng(6)
    few = np.abs(rng.standard_normal(12)) + 0.01
    many = np.abs(rng.standard_normal(48)) + 0.01
    log_few, var_few = log_scale_variance(few, 0.8)
    _, var_many = log_scale_variance(many, 0.8)
    assert log_few == pytest.approx(np.log(np.quantile(few, 0.8, method="weibull")))
    assert 0.1 < var_many / var_few < 0.6
    assert log_scale_variance(few, 0.8) == (log_few, var_few)  # the same scores, the same


def test_the_scale_holds_four_new_months_in_five_on_average() -> None:
    # The rank c · (n + 1) makes a new exchangeable month fall inside the scaled range with
    # probability c (the k-th of n scores is exceeded with probability 1 − k / (n + 1)); the
    # usual interpolation, rank 1 + c · (n − 1), would hold about 0.75 with twelve months.
    # Checked by drawing: 20,000 sets of twelve own months and 48 of other meters (weighted
    # to count as 24), each scale tried on a fresh month.
    rng = np.random.default_rng(5)
    zeros, ones = np.zeros(12), np.ones(12)
    held = []
    for _ in range(20_000):
        own = np.abs(rng.standard_normal(12))
        others = np.abs(rng.standard_normal(48))
        scale = conformal_scale(own, zeros, -ones, ones, 0.8, pooled=others)
        held.append(abs(rng.standard_normal()) <= scale)
    assert np.mean(held) == pytest.approx(0.8, abs=0.01)


def test_pooled_scores_count_once_each_up_to_two_years_of_months() -> None:
    # Three own months and ten of other meters: every score counts once, so the scale is
    # the plain rank quantile of all thirteen (numpy "weibull", Hyndman & Fan definition 6),
    # and three months are enough evidence with the pooled ten (13 ≥ 12).
    rng = np.random.default_rng(2)
    own = 100 + 10 * rng.standard_normal(3)
    others = np.abs(rng.standard_normal(10))
    flat = np.ones(3)
    scale = conformal_scale(own, 100 * flat, 90 * flat, 110 * flat, 0.8, pooled=others)
    together = np.r_[np.abs(own - 100) / 10, others]
    assert scale == pytest.approx(np.quantile(together, 0.8, method="weibull"))
    pooled = calibrate(_pairs(own, 90 * flat, 100 * flat, 110 * flat), pooled=others)
    assert pooled.scale == pytest.approx(scale)
    assert "other meters' 10 (counting as 10 months)" in pooled.method
    alone = calibrate(_pairs(own, 90 * flat, 100 * flat, 110 * flat))
    assert alone.scale == 1.0 and "fewer than the 12" in alone.method
    # Far more pooled scores than two years: together they weigh 24 months, so a meter's
    # own twelve still move its scale (here all own misses are large).
    ones = np.ones(12)
    wide = calibrate(_pairs(100 + 30 * ones, 90 * ones, 100 * ones, 110 * ones),
                     pooled=np.full(240, 0.5))  # fmt: skip
    assert "counting as 24 months" in wide.method
    # own 3.0 at ranks up to 12 of 36 (weight 1 each), others 0.5 at 0.1 each after: the
    # rank 0.8 · 37 = 29.6 lies among the own scores, sorted above the pooled ones
    assert wide.scale == pytest.approx(3.0)


def test_misses_are_scored_on_their_own_side_of_the_p50() -> None:
    # A range 95–120 around a mean of 100: a miss below is measured against 5, above 20.
    actual = np.array([90.0, 140.0])
    ones = np.ones(2)
    assert conformal_scale(actual, 100 * ones, 95 * ones, 120 * ones, 0.5) == pytest.approx(2.0)


def test_ranges_half_as_wide_as_they_should_be_are_doubled() -> None:
    # Normal errors with ranges at half the true P10–P90 (z = 1.2816, the standard normal 90th
    # percentile from scipy.stats.norm): the conformal scale comes back near 2 and the widened
    # ranges hold 80 % of fresh months.
    rng = np.random.default_rng(8)
    z90 = norm.ppf(0.9)
    actual = rng.standard_normal(50_000)
    zeros = np.zeros_like(actual)
    result = calibrate(_pairs(actual, zeros - z90 / 2, zeros, zeros + z90 / 2))
    assert result.coverage == pytest.approx(2 * norm.cdf(z90 / 2) - 1, abs=0.01)
    assert result.scale == pytest.approx(2.0, rel=0.02)
    fresh = rng.standard_normal(50_000)
    assert np.mean(np.abs(fresh) <= result.scale * z90 / 2) == pytest.approx(0.8, abs=0.01)


def test_a_range_is_corrected_whenever_there_is_enough_evidence() -> None:
    # No band of "an honest range's luck": 8 of 12 held (67 %) is corrected too; fewer than
    # twelve months (without other meters) are reported but not corrected; a tolerance, when
    # given, still leaves a range near its nominal coverage alone.
    ones = np.ones(12)
    actual = np.r_[np.linspace(-0.9, 0.9, 8), np.full(4, 5.0)]
    result = calibrate(_pairs(actual, -ones, 0 * ones, ones))
    assert result.held == 8 and result.scale > 1.0
    assert calibrate(_pairs(actual, -ones, 0 * ones, ones), tolerance=0.15).scale == 1.0
    few = calibrate(_pairs(np.full(8, 5.0), -np.ones(8), np.zeros(8), np.ones(8)))
    assert few.scale == 1.0 and "fewer than the 12" in few.method
    with pytest.raises(InputError, match="P10"):
        calibrate(pd.DataFrame({"actual kWh": [1.0]}))


@pytest.fixture(scope="module")
def campus() -> Campus:
    return make_campus(seed=11)


def _refitted_plans(campus: Campus, months: int):
    """Plans as of any date from the campus meters refitted before each of their last
    ``months`` months (:func:`plans_from_refits`)."""
    refits = {name: rolling_refits(WeekSlotDegreeModel(), inputs, months)
              for name, inputs in campus.inputs.items()}  # fmt: skip
    utility = {meter.name: meter.utility for meter in METERS}
    latest = [
        MeterPlan(name, utility[name], refits[name].models[max(refits[name].models)], inputs)
        for name, inputs in campus.inputs.items()
    ]
    return plans_from_refits(latest, refits)


@pytest.fixture(scope="module")
def past(campus: Campus) -> BudgetBacktest:
    """Month-ahead budgets for the 48 months 2021–2024, weather from the 5 years before each.

    Made as the tool makes them: each month from the model refitted before it with the
    out-of-sample errors of the year before it. Ten weather draws per budget (not the default
    fifty) keep the 48 budgets quick.
    """
    return backtest_budget(
        _refitted_plans(campus, 60),
        campus.inputs,
        48,
        weather=WeatherAssumption.past_years(campus.weather, years=5, draws=10),
        paths=300,
        error_days=366,
        rng=36,
    )


def test_corrected_month_ahead_ranges_hold_about_four_months_in_five(
    past: BudgetBacktest,
) -> None:
    """36 rolling month-ahead budgets per meter, each corrected by the months before it only.

    Raw, the ranges are a little narrow (about two months in three held here: a few years of
    weather and a daily model with little history); the rolling correction, each meter's
    scale from its own past year pooled with the other two meters', brings the held-out
    coverage into 70–90 %, for every meter.
    """
    pairs = past.pairs
    assert past.skipped.empty
    assert pairs["settled"].all()  # refitted from 2020 on, a year after the first reading
    assert pairs["month"].nunique() == 48
    assert (pairs["month"].iloc[0], pairs["month"].iloc[-1]) == ("2021-01", "2024-12")
    meters = pairs[pairs["kind"] == "meter"]
    replayed = rolling_calibration(meters.reset_index(drop=True))
    assert len(replayed) == 3 * 36
    assert 0.70 <= replayed["held corrected"].mean() <= 0.90
    assert replayed["held corrected"].mean() >= replayed["held"].mean()
    by_meter = replayed.groupby("name")["held corrected"].mean()
    assert by_meter.between(0.65, 0.95).all()
    # Six recent months suffice on three meters: each meter's six beside the other two
    # meters' twelve, counting for six to twelve months as far as the three agree, are at
    # least the 12 months of evidence needed.
    for name, calibration in past.calibrations().items():
        rows = meters[meters["name"] == name].sort_values("month").tail(6)
        assert calibration.tried == 6
        counted = re.search(r"meters' 12 \(counting as ([0-9.]+) months\)", calibration.method)
        assert counted is not None and 6 <= float(counted.group(1)) <= 12
        assert calibration.held == int(
            ((rows["actual kWh"] >= rows["P10"]) & (rows["actual kWh"] <= rows["P90"])).sum()
        )


def test_past_budget_progress_names_the_past_month(campus: Campus) -> None:
    """What the window's task bar shows while past budgets run says which past month it is,
    not "forecasting Quarry Library" again and again as if it were the budget itself."""
    said: list[str] = []
    backtest_budget(
        _refitted_plans(campus, 3),
        campus.inputs,
        2,
        weather=WeatherAssumption.past_years(campus.weather, years=3, draws=5),
        paths=50,
        error_days=366,
        rng=1,
        progress=Progress(lambda fraction, message: said.append(message)),
    )
    inner = [message for message in said if ": " in message]
    assert inner and all(message.startswith("Past budget for 2024-") for message in inner)
    assert any(message.endswith("(2 of 2): forecasting Quarry Library") for message in inner)
    assert not any("Budget:" in message for message in said)


def test_a_calibration_scales_a_meters_ranges_and_is_reported(campus: Campus) -> None:
    plans = campus_plans(campus, date(2024, 6, 30))
    weather = WeatherAssumption.past_years(campus.weather, years=3, draws=20)
    widened = Calibration(10, 90, 20, 36, 1.5, "split-conformal scaling (test)")
    months = ["2024-07", "2024-08"]
    plain = simulate_budget(plans, months, "2024-06-30", weather, paths=300, rng=6)
    scaled = simulate_budget(
        plans,
        months,
        "2024-06-30",
        weather,
        paths=300,
        rng=6,
        calibration={"Quarry Library": widened},
    )
    for before, after in zip(plain.meters, scaled.meters, strict=True):
        factor = 1.5 if before.name == "Quarry Library" else 1.0
        # Around the paths' mean, which stays, every quantile's distance from the P50 (and
        # from the mean) grows by the factor: months, the period and the days alike.
        for one, two in zip(
            [*before.months, before.total], [*after.months, after.total], strict=True
        ):
            assert two.energy.mean == pytest.approx(one.energy.mean, rel=1e-12)
            middle = one.energy.quantiles["50"]
            for level in ("10", "90"):
                assert two.energy.quantiles[level] - two.energy.quantiles["50"] == pytest.approx(
                    factor * (one.energy.quantiles[level] - middle), rel=1e-9
                )
        spread = before.daily["P90"] - before.daily["P50"]
        pd.testing.assert_series_equal(
            after.daily["P90"] - after.daily["P50"], factor * spread, rtol=1e-9
        )
    assert scaled.calibration == {"Quarry Library": widened}
    assert "widened by a factor 1.50" in scaled.assumptions["calibration"]["Quarry Library"]
    assert any("Boiler House" in caution for caution in scaled.cautions)
    assert scaled.to_json()["calibration"]["Quarry Library"]["coverage"] == pytest.approx(20 / 36)


def test_widening_the_days_widens_months_and_period_alike() -> None:
    """Skewed paths (gamma days): widened days summed path by path are the widened sums.

    The mean is the one centre that adds up (the mean of a sum is the sum of the means), so
    days, months and period keep their per-path sums under any scale; a median centre
    would not (the median of a sum of skewed days is not the sum of their medians).
    """
    rng = np.random.default_rng(3)
    days = rng.gamma(2.0, 50.0, size=(2000, 60))
    for scale in (0.5, 3.0):
        widened = widen(days, scale)
        np.testing.assert_allclose(
            widened.sum(axis=1), widen(days.sum(axis=1)[:, np.newaxis], scale)[:, 0], rtol=1e-12
        )
        np.testing.assert_allclose(widened.mean(axis=0), days.mean(axis=0), rtol=1e-12)
        # Quantiles are affine-equivariant: q(a + s·x) = a + s·q(x) for s > 0.
        q = np.quantile(days, [0.1, 0.9], axis=0)
        np.testing.assert_allclose(
            np.quantile(widened, [0.1, 0.9], axis=0),
            days.mean(axis=0) + scale * (q - days.mean(axis=0)),
            rtol=1e-12,
        )
    floor = np.full(60, 20.0)
    assert widen(days, 3.0, floor).min() == 20.0  # a day never goes below what it can hold
    assert widen(days, 1.0, floor) is days


def test_a_scale_beyond_five_is_capped_and_cautioned(campus: Campus) -> None:
    # Twenty months missing a 90–110 range by 30 to 60 ask for a factor near 6: capped at 5.
    ones = np.ones(20)
    actual = 100 + np.r_[np.linspace(30, 60, 10), -np.linspace(30, 60, 10)]
    capped = calibrate(_pairs(actual, 90 * ones, 100 * ones, 110 * ones))
    asked = conformal_scale(actual, 100 * ones, 90 * ones, 110 * ones, 0.8)
    assert asked > MAX_SCALE == 5.0
    assert capped.scale == MAX_SCALE
    assert f"capped at 5 (the past months asked for {asked:.1f})" in capped.method
    plans = campus_plans(campus, date(2024, 6, 30))
    run = simulate_budget(
        plans,
        ["2024-07"],
        "2024-06-30",
        WeatherAssumption.typical(campus.weather),
        paths=200,
        rng=2,
        calibration={"Boiler House": capped, "Quarry Library": replace(capped, scale=4.9)},
    )
    unfit = [caution for caution in run.cautions if "stopped at 5 times" in caution]
    assert len(unfit) == 1 and "Boiler House" in unfit[0] and "Quarry" not in unfit[0]
    # Under typical weather the range holds the model's error alone: the weather is named
    # first, and past years' weather offered, before the model is judged unfit.
    assert "Under typical weather a range holds the model's error alone" in unfit[0]
    assert "budget with past years' weather" in unfit[0]
    drawn = simulate_budget(
        plans,
        ["2024-07"],
        "2024-06-30",
        WeatherAssumption.past_years(campus.weather, years=3, draws=5),
        paths=50,
        rng=2,
        calibration={"Boiler House": capped},
    )
    (verdict,) = [caution for caution in drawn.cautions if "stopped at 5 times" in caution]
    assert "the model is not fit for budgeting this meter" in verdict
    assert "typical weather" not in verdict
    # Summer gas days widened five times would go below zero, which a meter that never
    # read below zero cannot (the floor every simulated interval respects): they stop there.
    boiler = run.meters[2]
    assert campus.inputs["Boiler House"].energy.min() > 0
    assert boiler.daily["P10"].min() == 0.0
    assert boiler.months[0].energy.quantiles["10"] > 0


def test_the_period_p50_stays_near_the_sum_of_the_month_p50s_when_widened(campus: Campus) -> None:
    """A year of budget from three weather years, every meter widened two and five times.

    Each path's period is the sum of its widened months, so the gap between the period's P50
    and the sum of the months' P50s is the scale times the gap before widening (exactly,
    unless days widened below zero were stopped there); with a continuous weather spread
    that gap is small, and so it stays, next to the range and to the total.
    """

    def gap(budget: MeterBudget) -> float:
        summed = sum(month.energy.quantiles["50"] for month in budget.months)
        return budget.total.energy.quantiles["50"] - summed

    plans = campus_plans(campus, date(2023, 12, 31))
    months = budget_months("2024-01", months=12)
    weather = WeatherAssumption.past_years(campus.weather, years=3)
    totals = simulate_paths(plans, months, "2023-12-31", weather, paths=400, rng=8)
    plain = summarise(totals)
    for scale in (2.0, MAX_SCALE):
        wide = Calibration(10, 90, 10, 40, scale, "test")
        widened = summarise(totals, calibration={plan.name: wide for plan in plans})
        for before, after in zip(plain.meters, widened.meters, strict=True):
            if scale == 2.0 and before.utility == "electricity":  # far above zero: exact
                assert gap(after) == pytest.approx(scale * gap(before), rel=1e-6, abs=1e-6)
            total = after.total.energy.quantiles
            assert abs(gap(after)) < 0.1 * (total["90"] - total["10"])
            assert abs(gap(after)) < 0.02 * total["50"]


def test_skill_is_one_minus_the_ratio_of_mean_absolute_percentage_errors() -> None:
    # Worked by hand: P50 misses 2 %, 4 % and 6 % (mean 4 %); last year misses 5 %, 5 % and
    # 10 % (mean 6.67 %); relative skill 1 − 4 / 6.67 = 0.4. The fourth month has no last-year
    # total and is not scored.
    pairs = pd.DataFrame(
        {
            "actual kWh": [100.0, 200.0, 50.0, 80.0],
            "P50": [102.0, 192.0, 53.0, 80.0],
            "last year kWh": [95.0, 210.0, 45.0, np.nan],
        }
    )
    found = skill(pairs, "last year kWh", LAST_YEAR)
    assert found.months == 3
    assert found.p50_mape == pytest.approx(4.0)
    assert found.baseline_mape == pytest.approx(20 / 3)
    assert found.relative == pytest.approx(0.4)
    assert "40% better" in found.sentence()
    assert found.to_json()["relative"] == pytest.approx(0.4)
    assert skill(pairs.iloc[3:], "last year kWh", LAST_YEAR).to_json()["relative"] is None


def test_a_baseline_that_missed_by_nothing_gives_no_relative_skill() -> None:
    # A meter whose load repeats exactly: last year's total is the actual, so no share of the
    # baseline's error can be given (it was printed as "nan% worse").
    pairs = pd.DataFrame({"actual kWh": [100.0], "P50": [101.0], "last year kWh": [100.0]})
    found = skill(pairs, "last year kWh", LAST_YEAR)
    words = found.sentence()
    assert "nan" not in words and "over 1 past month," in words
    assert "missed by nothing" in words
    assert found.to_json()["relative"] is None


def test_past_budgets_carry_last_years_total_and_the_last_week_repeated(
    campus: Campus, past: BudgetBacktest
) -> None:
    # The naive budgets recomputed another way: pandas resampling of the readings by local
    # calendar month (the same month a year before), and the mean of the 7 local days before
    # the month times the month's days (seasonal naive with a weekly season, from memory).
    meters = past.pairs[past.pairs["kind"] == "meter"]
    for name, inputs in campus.inputs.items():
        energy = inputs.energy.tz_convert(inputs.timezone)
        by_month = energy.resample("MS").sum(min_count=1)
        by_day = energy.resample("D").sum(min_count=1)
        rows = meters[meters["name"] == name]
        for row in rows.to_dict("records"):
            month = pd.Timestamp(row["month"]).tz_localize(inputs.timezone)
            year_before = month - pd.DateOffset(years=1)
            expected = by_month.get(year_before, np.nan)
            np.testing.assert_allclose(row["last year kWh"], expected, rtol=1e-9)
            week = by_day[(by_day.index >= month - pd.Timedelta(days=7)) & (by_day.index < month)]
            naive = week.mean() * month.days_in_month
            np.testing.assert_allclose(row["last week kWh"], naive, rtol=1e-9)
    calibration = past.calibration(next(iter(campus.inputs)))
    assert calibration.vs_last_year.months == 12  # the recent year, whatever the range used
    assert calibration.to_json()["skill_vs_last_year"]["baseline"] == LAST_YEAR
    assert Calibration.from_json(calibration.to_json()) == calibration  # kept with budgets
