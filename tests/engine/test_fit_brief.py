"""What the fit wizard says before and after fitting: the readings it learns from, the families
and why, the ranking in one sentence.

The site is invented (two hourly meters over 2024–2025, UTC, with a weather station): the
counts below follow from how it was built and from the cleaning steps added here, worked out
with pandas on the stored readings.
"""

from __future__ import annotations

import re
import shutil
from dataclasses import replace

import numpy as np
import pandas as pd
import pytest

from engine.backtest import TYPICAL_WEATHER
from engine.cleaning.steps import range_step
from engine.fit_brief import family_notes, ranking_sentence, readings_brief, recommended
from engine.models import MODEL_FAMILIES
from engine.project import Project
from engine.selection import EXPLAINABLE_MARGIN
from engine.steps.fitting import chosen_model, fit_meter, use_ranked_model
from engine.steps.prepared_site import prepare_site
from engine.wizard import DEFAULT_FAMILIES

CLOSURE = ("2025-02-03", "2025-02-10")  # a week left out of fitting
BROKEN = ("2025-03-01 06:00", "2025-03-01 18:00")  # half a day of readings removed


@pytest.fixture(scope="module")
def cleaned_site(new_site, tmp_path_factory):
    path = shutil.copyfile(new_site, tmp_path_factory.mktemp("brief") / "site.loadledger")
    with Project.open(path) as project:
        for kind, (start, end), note in (
            ("exclude", CLOSURE, "plant closed"),
            ("remove", BROKEN, ""),
        ):
            step = range_step(kind, "Hall", pd.Timestamp(start, tz="UTC"),
                              pd.Timestamp(end, tz="UTC"), note)  # fmt: skip
            project.add_cleaning_step(step.to_dict())
    return path


def test_the_readings_brief_counts_what_the_models_learn_from(cleaned_site):
    with Project.open(cleaned_site) as project:
        ready = prepare_site(project, ["Hall"]).meter("Hall")
        raw = project.load_meter("Hall").values
        weather = project.load_weather()
    brief = readings_brief(ready)
    # Worked out here: every stored hour, less the closure week and the removed half day.
    hours = raw.dropna().index
    left_out = ((hours >= CLOSURE[0]) & (hours < CLOSURE[1])) | (
        (hours >= BROKEN[0]) & (hours < BROKEN[1])
    )
    usable = hours[~left_out]
    assert brief.intervals == len(usable) == len(hours) - 7 * 24 - 12
    assert brief.days == usable.normalize().nunique() == 731 - 7  # 2024 is a leap year
    assert (brief.first, brief.last) == (usable[0], usable[-1])
    assert brief.span - brief.intervals == 7 * 24 + 12
    assert brief.excluded == 7 * 24 and brief.estimated == 0
    assert [(p.kind, p.note) for p in brief.left_out] == [("exclude", "plant closed"),
                                                          ("remove", "")]  # fmt: skip
    known = weather.reindex(usable).notna().mean()
    assert brief.weather == pytest.approx(known, abs=1e-12)
    words = " ".join(brief.lines())
    assert f"{len(usable):,} hourly readings on 724 days" in words
    assert "leaves 168 hours (7.0 days) out: 2025-02-03 to 2025-02-09: left out of fitting" in words
    assert "2025-03-01 06:00 to 2025-03-01 17:59: readings removed" in words
    assert f"{100 * known:.1f} %" in words
    # The backtest forecasts the last whole months, each from the readings before it.
    assert brief.backtest_months(3) == ["2025-10", "2025-11", "2025-12"]

    bare = readings_brief(replace(ready, inputs=replace(ready.inputs, temperature=None)))
    assert bare.weather is None and "no weather" in " ".join(bare.lines())


def test_each_family_says_how_it_forecasts_and_why_it_is_compared():
    notes = family_notes(list(MODEL_FAMILIES))
    assert [note.family for note in notes] == list(MODEL_FAMILIES)
    for note in notes:
        family = MODEL_FAMILIES[note.family]
        assert note.how.rstrip(".").lower() == family().how_it_forecasts().lower()
        assert "states no effects" not in note.how or not family.explainable
        assert ("Explainable" in note.why) == family.explainable
        if not family.explainable and not family.benchmark:
            assert f"more than {EXPLAINABLE_MARGIN:g} point" in note.why
    benchmarks = [note.family for note in notes if "benchmark" in note.why]
    assert benchmarks == ["seasonal_naive"]
    assert len({note.how for note in family_notes(DEFAULT_FAMILIES)}) == len(DEFAULT_FAMILIES)


def test_the_ranking_sentence_carries_the_rankings_numbers(new_site, tmp_path):
    path = shutil.copyfile(new_site, tmp_path / "site.loadledger")
    with Project.open(path) as project:
        outcome = fit_meter(
            project, "Hall", families=["daily_change_point", "seasonal_naive"], origins=2
        )
        choice = outcome.choice.to_dict()
        sentence = ranking_sentence(choice, outcome.backtest)
        # The chosen model's month-total error, worked out from the backtest's month totals:
        # mean |forecast / actual − 1| of its one-month-ahead months, typical weather.
        months = outcome.backtest.months
        mine = months[(months["model"] == choice["chosen"]) & (months["lead"] == 1)
                      & (months["weather"] == TYPICAL_WEATHER)]  # fmt: skip
        mape = 100 * np.mean(np.abs(mine["predicted kWh"] / mine["actual kWh"] - 1))
        label = MODEL_FAMILIES[choice["chosen"]].label
        assert sentence.startswith(f"{label[0].upper()}{label[1:]}: month totals within ")
        assert f"within {mape:.1f} % on {len(mine)} past months" in sentence
        rank = next(r["rank"] for r in choice["ranking"] if r["model"] == choice["chosen"])
        assert (", best of 2" in sentence) == (rank == 1)
        if choice["chosen"] != "seasonal_naive":
            naive = months[(months["model"] == "seasonal_naive") & (months["lead"] == 1)
                           & (months["weather"] == TYPICAL_WEATHER)]  # fmt: skip
            other = 100 * np.mean(np.abs(naive["predicted kWh"] / naive["actual kWh"] - 1))
            assert sentence.endswith(f"the benchmark 'seasonal naive benchmark' was {other:.1f} %.")

        # A hand choice keeps the wizard's recommendation; choosing it again restores it.
        first = choice["chosen"]
        other = next(r["model"] for r in choice["ranking"] if r["model"] != first)
        _, by_hand = use_ranked_model(project, "Hall", other)
        assert recommended(by_hand) == first and by_hand["chosen"] == other
        assert by_hand["diagnostics"] is None
        assert ranking_sentence(by_hand, outcome.backtest) == sentence  # still the wizard's
        assert re.match(r".* was chosen by hand over the recommended ", by_hand["reasons"][0])
        _, again = use_ranked_model(project, "Hall", first)
        assert again == choice and recommended(again) == first
        assert chosen_model(project, "Hall")[1] == choice
