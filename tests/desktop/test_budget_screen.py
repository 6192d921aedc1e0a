"""The Budget screen budgets a real project on a worker and shows what the engine ran and kept.

The project holds two of the sample campus's electricity meters (Library and Science Labs)
from June 2025 on, with the sample's weather and calendar, each with a daily change-point model
chosen by the engine's fit wizard beforehand; the sample's invented rate card prices them.
"""

from __future__ import annotations

import shutil
from datetime import date
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from desktop_support import (
    FITTED_METERS,
    RATE_CARD,
    SITE_ZONE,
    fitted_campus,
    save_screen,
    wait_until_idle,
)
from PySide6.QtCore import QDate

from desktop.budget_jobs import period_months
from desktop.budget_screen import BudgetScreen
from desktop.budget_table import ROW_ROLE
from desktop.session import Session
from engine.project import Project
from engine.steps.labels import relabelled, store_label

METERS = FITTED_METERS
PATHS = 200


@pytest.fixture(scope="module")
def unbudgeted(tmp_path_factory) -> Path:
    """The fitted campus before any budget: copied for tests that need a project without one."""
    return fitted_campus(tmp_path_factory.mktemp("budget") / f"fitted{Project.EXTENSION}")


@pytest.fixture(scope="module")
def campus(unbudgeted, tmp_path_factory) -> Path:
    """The project the tests of this module budget one after another."""
    return Path(shutil.copy(unbudgeted, tmp_path_factory.mktemp("budget") / unbudgeted.name))


def _screen_on(qtbot, path: Path):
    session = Session()
    widget = BudgetScreen(session)
    qtbot.addWidget(widget)
    widget.resize(1400, 900)
    widget.show()
    session.open(Project.open(path))
    wait_until_idle(qtbot, widget)  # the as-of date is looked up on a worker
    yield widget
    session.close()


@pytest.fixture
def screen(qtbot, campus):
    yield from _screen_on(qtbot, campus)


@pytest.fixture
def fresh_screen(qtbot, unbudgeted, tmp_path):
    """The screen on a copy of the fitted campus that keeps no budget yet."""
    yield from _screen_on(qtbot, Path(shutil.copy(unbudgeted, tmp_path)))


def _stored_budgets(path: Path) -> list[dict]:
    with Project.open(path) as project:
        return project.results("budget")


def _run(qtbot, screen: BudgetScreen) -> None:
    screen.run()
    wait_until_idle(qtbot, screen)


def test_the_table_shows_the_run_the_project_keeps(qtbot, screen, campus):
    project = screen.session.project
    # The default as-of date is the last local day with a reading, found here with pandas.
    last = max(project.load_meter(n).values.index[-1].tz_convert(SITE_ZONE).date() for n in METERS)
    assert screen.form.choices().as_of == last
    # A mid-month as-of date re-forecasts October: its metered days plus the rest.
    screen.form.set_as_of(date(2026, 10, 15))
    screen.form.period.set_value("months")
    screen.form.months.setValue(3)
    screen.form.tariff.path.setText(str(RATE_CARD))
    screen.form.paths.setValue(PATHS)
    assert screen.form.choices().start == "2026-10"
    kept_before = len(_stored_budgets(campus))
    _run(qtbot, screen)
    assert screen.notice.tone == "done", screen.notice.text.text()
    assert screen.budget is not None

    stored = _stored_budgets(campus)
    assert len(stored) == kept_before + 1
    run = stored[-1]["body"]
    assert run["months"] == ["2026-10", "2026-11", "2026-12"]
    table = screen.table
    p50 = next(h for h in table.headers if h.startswith("P50"))
    for meter in run["meters"]:
        for month in meter["months"]:
            shown = table.value(meter["name"], month["month"], p50)
            assert shown == month["quantiles"]["50"]
    campus_run = run["campus"]
    assert table.titles()[:2] == [
        "Campus, all utilities added (2 meters)",
        "electricity (roll-up of 2 meters)",
    ]
    november = campus_run["months"][1]
    assert table.value("campus", "2026-11", p50) == november["quantiles"]["50"]
    # The campus is summed path by path, so its mean is the sum of the meters' means
    # (linearity of expectation); quantiles do not add up that way.
    mean = next(h for h in table.headers if h.startswith("mean"))
    meters_mean = sum(table.value(name, "2026-11", mean) for name in METERS)
    assert table.value("campus", "2026-11", mean) == pytest.approx(meters_mean, rel=1e-12)

    # October's actual to date: the Library's whole local hours of 1–15 October, with pandas.
    readings = project.load_meter("Library").values.dropna()
    hours = readings.groupby(readings.index.floor("h")).agg(["sum", "size"])
    whole = hours.loc[hours["size"] == 4, "sum"]
    local = whole.index.tz_convert(SITE_ZONE)
    to_date = whole[(local >= "2026-10-01") & (local < "2026-10-16")].sum()
    actual = next(h for h in table.headers if h.startswith("actual to date"))
    assert table.value("Library", "2026-10", actual) == pytest.approx(to_date, rel=1e-9)
    assert np.isnan(table.value("Library", "2026-11", actual))  # not begun: blank, not 0

    # Costs under the rate card, ordered like the energy figures.
    costs = [table.value("campus", "total", h) for h in table.headers if h.startswith("cost P")]
    assert len(costs) == 3 and costs == sorted(costs) and costs[0] > 0

    # The plot draws the campus's monthly P50 and its P10–P90 range in kWh, as the table.
    plot = screen.plot
    assert plot.pick.value() == "Campus, all utilities added (2 meters)" and plot.showing_plot
    medians = [m["quantiles"]["50"] for m in campus_run["months"]]
    np.testing.assert_allclose(plot.drawn_median(), medians, rtol=1e-12)
    low = np.asarray(plot.ranges.opts["y0"])
    high = low + np.asarray(plot.ranges.opts["height"])
    assert "kWh" in plot.plot.getAxis("left").labelText
    assert plot.plot.getAxis("left").tickStrings([380000.0], 1.0, 10000.0) == ["380,000"]
    np.testing.assert_allclose(low, [m["quantiles"]["10"] for m in campus_run["months"]])
    np.testing.assert_allclose(high, [m["quantiles"]["90"] for m in campus_run["months"]])

    # How well such ranges held, per meter, and the cautions of a forecast.
    notes = screen.notes.toPlainText()
    for name in METERS:
        assert f"{name}: the 80 % range held the actual month total in" in notes
    assert "estimate" in notes and "licensed engineer under local codes" in notes
    assert "2026-10-15" in screen.summary.text()
    save_screen(screen, "budget")


def test_a_bad_tariff_file_is_named_in_a_message(qtbot, screen, campus, tmp_path):
    bad = tmp_path / "north-campus.ratecard.toml"
    bad.write_text("ratecard_format = 1\nname = [unclosed\n", encoding="utf-8")
    screen.form.tariff.path.setText(str(bad))
    kept_before, shown = len(_stored_budgets(campus)), screen.budget
    _run(qtbot, screen)
    assert screen.notice.tone == "problem"
    words = screen.notice.text.text()
    assert "north-campus.ratecard.toml" in words and "TOML" in words
    assert "Traceback" not in words and not screen.notice.details_button.isVisible()
    assert screen.budget is shown and len(_stored_budgets(campus)) == kept_before


def test_a_weather_file_must_be_chosen(qtbot, screen):
    screen.form.weather.set_value("file")
    _run(qtbot, screen)
    assert screen.notice.tone == "problem" and "no file is chosen" in screen.notice.text.text()


def test_cancel_stops_a_running_budget(qtbot, fresh_screen):
    screen = fresh_screen
    screen.form.paths.setValue(PATHS)
    project = screen.session.project.path
    kept_before = len(_stored_budgets(project))
    screen.run()
    assert "appears here when the run ends" in screen.plot.note.text()
    screen.runner.task.progressed.connect(lambda *_: screen.task_bar.cancel_button.click())
    wait_until_idle(qtbot, screen)
    assert screen.notice.tone == "info" and "Stopped budgeting" in screen.notice.text.text()
    assert screen.budget is None and "Stopped before" in screen.plot.note.text()
    assert len(_stored_budgets(project)) == kept_before
    assert screen.budget_button.isEnabled()


def test_months_already_metered_are_refused_and_the_chart_stops_waiting(qtbot, fresh_screen):
    screen = fresh_screen
    as_of = screen.form.as_of.date().toPython()
    screen.form.period.set_value("months")
    screen.form.start.setDate(QDate(as_of.year - 1, 1, 1))
    screen.form.months.setValue(2)
    _run(qtbot, screen)
    words = screen.notice.text.text()
    assert screen.notice.tone == "problem" and "nothing to forecast" in words
    # The chart said it waited for the run; once refused it says no budget was made.
    assert screen.budget is None and "No budget was made" in screen.plot.note.text()
    assert screen.budget_button.isEnabled()


def test_period_choices_follow_the_as_of_date(fresh_screen):
    form = fresh_screen.form
    form.set_as_of(date(2026, 10, 31))
    assert period_months(form.choices()) == ["2026-11"]  # next month
    # A fiscal year is named by the calendar year it ends in (common practice in US
    # universities): with a July start, November 2026 lies in fiscal year 2027, in its second
    # quarter (October–December).
    form.period.set_value("fiscal")
    form.fiscal_start.set_value(7)
    choices = form.choices()
    assert choices.fiscal_year == 2027
    months = period_months(choices)
    assert months == [f"{p}" for p in pd.period_range("2026-07", "2027-06", freq="M")]
    form.period.set_value("quarter")
    assert form.choices().quarter == 2
    assert period_months(form.choices()) == ["2026-10", "2026-11", "2026-12"]
    # A January start is the calendar year.
    form.fiscal_start.set_value(1)
    assert form.choices().fiscal_year == 2026 and form.choices().quarter == 4
    assert form.fiscal_year.isVisible() and not form.start.isVisible()


def _blank_rows(table) -> list[int]:
    """Rows of the table whose cells show nothing: hidden under a stale span or left empty."""
    grid = table.table
    blank = []
    for row in range(grid.rowCount()):
        first = grid.item(row, 0)
        if first is None or not first.text():
            blank.append(row)
        elif first.data(ROW_ROLE) is not None and grid.columnSpan(row, 0) != 1:
            blank.append(row)  # a figures row drawn as one wide cell hides its numbers
    return blank


def test_a_second_budget_of_another_length_fills_every_row(qtbot, screen):
    screen.form.set_as_of(date(2026, 10, 15))
    screen.form.paths.setValue(PATHS)
    screen.form.period.set_value("months")
    screen.form.months.setValue(2)
    _run(qtbot, screen)
    assert screen.notice.tone == "done", screen.notice.text.text()
    screen.form.period.set_value("fiscal")
    screen.form.fiscal_start.set_value(7)
    _run(qtbot, screen)
    assert screen.notice.tone == "done", screen.notice.text.text()
    run = screen.budget.run
    assert len(run.months) == 12
    table = screen.table
    assert _blank_rows(table) == []
    # Every month and total of every budgeted thing shows the engine's P50, the campus first.
    p50 = next(h for h in table.headers if h.startswith("P50"))
    for meter in run.meters:
        for period in [*meter.months, meter.total]:
            assert table.value(meter.name, period.period, p50) == period.energy.quantiles["50"]
    for rollup in [run.campus, *run.utilities]:
        for period in [*rollup.months, rollup.total]:
            shown = table.value(rollup.group, period.period, p50)
            assert shown == period.energy.quantiles["50"]
    # Actual to date: what the readings hold for months begun by the as-of date (2026-10-15),
    # nothing (not 0) for the months after it.
    actual = next(h for h in table.headers if h.startswith("actual to date"))
    for period in run.campus.months:
        shown = table.value(run.campus.group, period.period, actual)
        if period.period <= "2026-10":
            assert shown == period.actual_to_date and shown > 0
        else:
            assert shown is None or np.isnan(shown), period.period


def test_the_weather_default_is_the_command_lines_and_says_why(fresh_screen):
    # One default for one question: a new project's form asks for the weather assumption the
    # command line assumes when --weather is not given, and says why in a visible sentence.
    from engine.cli.main import build_parser

    command_line = build_parser().parse_args(["budget", "p.loadledger", "--start", "2026-11"])
    choices = fresh_screen.form.choices()
    assert choices.weather == command_line.weather == "past-years"
    # The other defaults are the engine's too, written once there.
    from engine.budget.periods import DEFAULT_FISCAL_START
    from engine.defaults import DEFAULT_PATHS

    assert choices.paths == command_line.paths == DEFAULT_PATHS
    assert choices.fiscal_start_month == DEFAULT_FISCAL_START
    note = fresh_screen.form.weather_note
    assert note.isVisible() and "default" in note.text() and "past years" in note.text()


def test_utility_keys_read_as_words_and_the_campus_says_it_adds_utilities():
    from desktop.budget_table import item_title
    from engine.export.finance_tables import Budgeted

    gas = Budgeted("utility", "natural_gas", 2, [], None)
    campus = Budgeted("campus", "campus", 1, [], None)
    assert item_title(gas) == "natural gas (roll-up of 2 meters)"
    assert item_title(campus) == "Campus, all utilities added (1 meter)"


def test_a_budget_is_adopted_listed_and_shown_again_as_issued(qtbot, fresh_screen):
    screen = fresh_screen
    assert not screen.adopt_button.isEnabled()  # nothing run here yet
    screen.form.set_as_of(date(2026, 10, 15))
    screen.form.paths.setValue(PATHS)
    screen.form.period.set_value("months")
    screen.form.months.setValue(2)
    _run(qtbot, screen)
    issued = screen.budget.run
    assert screen.adopt_button.isEnabled()
    screen.ask_adopt("FY test")
    wait_until_idle(qtbot, screen)
    assert screen.notice.tone == "done" and "Adopted as 'FY test'" in screen.notice.text.text()
    assert [screen.adopted.itemText(i) for i in range(1, screen.adopted.count())] == ["FY test"]
    # A second adoption under the same name is refused in words unless replaced.
    screen.ask_adopt("FY test")
    wait_until_idle(qtbot, screen)
    assert screen.notice.tone == "problem" and "already adopted" in screen.notice.text.text()

    # Shown again from the list: the adopted figures, which the Export step then writes.
    exported = []
    screen.budget_changed.connect(exported.append)
    _run(qtbot, screen)  # another run, so the adopted one is not what is on screen
    screen._adopted_chosen(1)
    shown = screen.budget.run
    assert exported[-1] is screen.budget and "adopted as 'FY test'" in screen.summary.text()
    p50 = next(h for h in screen.table.headers if h.startswith("P50"))
    for meter, adopted in zip(issued.meters, shown.meters, strict=True):
        for month, again in zip(meter.months, adopted.months, strict=True):
            assert again.energy.quantiles["50"] == month.energy.quantiles["50"]
            assert screen.table.value(meter.name, month.period, p50) == pytest.approx(
                month.energy.quantiles["50"]
            )
    assert not screen.adopt_button.isEnabled()  # an adopted budget is not adopted again


def test_the_campus_shows_the_cost_of_its_priced_meters_in_plain_words(qtbot):
    """A small real budget with an unpriced gas meter: the campus rows have no cost, and a
    block of its priced meters shows their energy and cost and names the meter left out."""
    from dataclasses import replace

    from desktop.budget_table import BudgetTable
    from engine.budget import WeatherAssumption, simulate_budget
    from engine.meter_labels import MeterLabel
    from tests.engine.test_budget_cost import AS_OF, TARIFF, annex

    boilers = replace(annex(10.0), name="GM-2", utility="natural_gas")
    run = simulate_budget(
        [annex(10.0, tariff=TARIFF), boilers],
        ["2025-06"],
        AS_OF,
        WeatherAssumption.none(),
        paths=50,
        rng=7,
    )
    table = BudgetTable()
    qtbot.addWidget(table)
    table.show_run(run, {"GM-2": MeterLabel("GM-2", "natural_gas", display_name="Gas main")})
    assert (
        "Campus, priced meters only: energy and cost of 1 meter; leaves out Gas main: no price"
        in table.titles()
    )
    part = run.campus.priced_only.total
    key = "campus, priced meters only"
    assert table.value(key, "total", "cost P50 (USD)") == part.cost.quantiles["50"]
    assert table.value(key, "total", "P50 (kWh)") == part.energy.quantiles["50"]
    assert np.isnan(table.value("campus", "total", "cost P50 (USD)"))  # a blank cell


def test_a_bill_account_is_not_called_a_meter(qtbot):
    """The sample's electric account is budgeted from its bills: its block says so (it read
    "electric-bills (meter)"), and the roll-ups count it apart from the meters (the campus
    said "9 meters" beside a status bar of 8)."""
    from dataclasses import replace

    from desktop.budget_table import BudgetTable
    from engine.budget import WeatherAssumption, simulate_budget
    from tests.engine.test_budget_cost import AS_OF, annex

    store = replace(annex(10.0), name="electric-bills")
    run = simulate_budget(
        [annex(10.0), store], ["2025-06"], AS_OF, WeatherAssumption.none(), paths=20
    )
    run.meters[1] = replace(run.meters[1], source="bills")
    table = BudgetTable()
    qtbot.addWidget(table)
    table.show_run(run)
    titles = table.titles()
    assert titles[0] == "Campus, all utilities added (1 meter and 1 bill account)"
    assert titles[1] == "electricity (roll-up of 1 meter and 1 bill account)"
    assert titles[-1] == "electric-bills (bill account: budgeted from its bills)"


def test_the_chart_picker_shows_the_whole_campus_title(qtbot):
    """At the width the chart gets on a laptop screen (about 640 px), the picker spans the
    panel and shows the campus's whole title; it kept the width of 28 characters and cut
    "Campus, all utilities added (8 meters a"."""
    from dataclasses import replace

    from PySide6.QtWidgets import QStyle, QStyleOptionComboBox

    from desktop.budget_plot import BudgetRangePanel
    from engine.budget import WeatherAssumption, simulate_budget
    from tests.engine.test_budget_cost import AS_OF, annex

    plans = [replace(annex(10.0), name=f"Hall {n}") for n in range(8)]
    store = replace(annex(10.0), name="electric-bills")
    run = simulate_budget([*plans, store], ["2025-06"], AS_OF, WeatherAssumption.none(), paths=20)
    run.meters[-1] = replace(run.meters[-1], source="bills")
    panel = BudgetRangePanel()
    qtbot.addWidget(panel)
    panel.resize(640, 300)
    panel.show()
    panel.show_run(run)
    qtbot.wait(20)
    picker = panel.pick
    title = picker.currentText()
    assert title == "Campus, all utilities added (8 meters and 1 bill account)"
    option = QStyleOptionComboBox()
    picker.initStyleOption(option)
    field = picker.style().subControlRect(
        QStyle.ComplexControl.CC_ComboBox, option, QStyle.SubControl.SC_ComboBoxEditField, picker
    )  # where the chosen words are drawn: the box less its frame and arrow
    needed = picker.fontMetrics().horizontalAdvance(title)
    assert field.width() >= needed, (field.width(), needed)
    assert picker.width() >= 0.8 * panel.width()  # the row's width, for longer titles too


def test_meters_still_to_model_are_named_as_shown(qtbot, unbudgeted, tmp_path):
    """The notice that a budget first fits models names meters by their display names."""
    path = Path(shutil.copy(unbudgeted, tmp_path))
    with Project.open(path) as project:
        store_label(project, relabelled(project, "Science Labs", display_name="North lab block"))
        for result in project.results("model", "Science Labs"):
            project.remove_result(result["id"])
    for screen in _screen_on(qtbot, path):
        screen.form.paths.setValue(PATHS)
        screen.run()
        text = screen.notice.text.text()
        screen.task_bar.cancel_button.click()
        wait_until_idle(qtbot, screen)
    assert text.startswith("North lab block has no fitted model yet")
    assert "Science Labs" not in text
