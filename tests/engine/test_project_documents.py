"""JSON documents in the project file: versioned, brought up to date on reading, never newer.

The fixture ``v4_documents.loadledger`` was made by the format-4 code (before documents carried
a version) with the command line, from the first 17 months of the sample campus's boilerhouse
gas meter (invented data) with its bills and calendar: it holds one document of every kind.
``v4_documents.expected.json`` is each document as that code stored it, read with plain SQL.
"""

from __future__ import annotations

import json
import shutil
import sqlite3
from pathlib import Path

import pytest

from engine.backtest import BacktestResult
from engine.cleaning.steps import CleaningStep
from engine.cli.main import main
from engine.errors import ProjectError
from engine.meter_labels import LABELS_SETTING
from engine.models import model_from_dict
from engine.project import FORMAT_VERSION, Project, documents
from engine.project.columns import DamagedValue, from_json
from engine.project.results_table import RESULT_KINDS
from engine.steps import account_membership as membership
from engine.steps.adopting import adopted_as_issued
from engine.steps.budgeting import budget_project, budget_request, keep_budget, latest_budget
from engine.steps.cleaning import cleaned_meter
from engine.steps.fitting import chosen_model, meter_inputs
from engine.steps.labels import meter_labels
from engine.steps.site_calendar import CALENDAR_SETTING, stored_calendar

FIXTURES = Path(__file__).parents[1] / "fixtures" / "projects"
FIXTURE = FIXTURES / "v4_documents.loadledger"
METER = "gas-boilerhouse-daily"
ADOPTED = "FY25"
#: Every JSON column and the document its rows hold (settings: by key, below).
JSON_COLUMNS = {
    ("sources", "settings"): "source settings",
    ("sources", "findings"): "findings",
    ("meters", "settings"): "meter settings",
    ("cleaning_steps", "params"): "cleaning step",
    ("kept_models", "body"): "kept modelling",
    ("adopted_budgets", "body"): "adopted budget",
}


@pytest.fixture(scope="module")
def expected() -> dict[str, list[dict]]:
    text = (FIXTURES / "v4_documents.expected.json").read_text(encoding="utf-8")
    return json.loads(text)["documents"]


@pytest.fixture
def upgraded(tmp_path: Path) -> Path:
    """A copy of the format-4 fixture, opened (so upgraded) once."""
    path = tmp_path / "v4_documents.loadledger"
    shutil.copyfile(FIXTURE, path)
    with Project.open(path) as project:
        assert project.upgrade_note == (
            f"Upgraded 'v4_documents.loadledger' from project format 4 to {FORMAT_VERSION}."
        )
    return path


def _texts(path: Path) -> dict[tuple, str]:
    """Every JSON text of the file by (table, column, row key), read with plain SQL."""
    texts = {}
    with sqlite3.connect(path) as conn:
        for key, text in conn.execute("SELECT key, value FROM settings"):
            texts[("settings", "value", key)] = text
        for kind, text in conn.execute("SELECT kind, body FROM results"):
            texts[("results", "body", kind)] = text
        for table, column in JSON_COLUMNS:
            for row_id, text in conn.execute(f"SELECT rowid, {column} FROM {table}"):
                texts[(table, column, row_id)] = text
    return texts


def _kind(place: tuple) -> str | None:
    """The document a stored text is (None: a single-value setting)."""
    table, column, key = place
    if table == "settings":
        return documents.SETTING_DOCUMENTS.get(key)
    if table == "results":
        return documents.RESULT_DOCUMENTS[key]
    return JSON_COLUMNS[(table, column)]


def test_the_upgrade_puts_each_document_in_an_envelope_byte_for_byte(upgraded: Path) -> None:
    before, after = _texts(FIXTURE), _texts(upgraded)
    assert before.keys() == after.keys()
    wrapped = 0
    for place, text in before.items():
        kind = _kind(place)
        if kind is None:
            assert after[place] == text, place
            continue
        assert after[place] == f'{{"document": "{kind}", "version": 1, "body": {text}}}', place
        wrapped += 1
    # Four document settings, three sources' settings and findings, the meter's settings, the
    # cleaning step, three results (model, backtest, budget), kept modelling, the adopted budget.
    assert wrapped == 4 + 3 * 2 + 1 + 1 + 3 + 1 + 1


def test_the_format_4_documents_read_as_they_were_written(upgraded, expected) -> None:
    with Project.open(upgraded) as project:
        settings = {row["row"][0]: row["document"] for row in expected["settings.value"]}
        for key, value in settings.items():
            if key != "written_with":
                assert project.get_setting(key) == value, key
        sources = project.sources()
        assert [s["settings"] for s in sources] == _documents(expected, "sources.settings")
        assert [s["findings"] for s in sources] == _documents(expected, "sources.findings")
        assert [project.meter_settings(METER)] == _documents(expected, "meters.settings")
        assert [s["params"] for s in project.cleaning_steps()] == _documents(
            expected, "cleaning_steps.params"
        )
        results = {row["row"][1]: row["document"] for row in expected["results.body"]}
        for kind in ("model", "budget"):
            assert project.last_result(kind)["body"] == results[kind]
        # Version 2 of a backtest and of an adopted budget keep no version key of their own.
        old_backtest = results["backtest"]
        assert old_backtest["format"] == 1
        backtest = project.last_result("backtest")["body"]
        assert backtest == {k: v for k, v in old_backtest.items() if k != "format"}
        (old_adopted,) = _documents(expected, "adopted_budgets.body")
        assert old_adopted["layout"] == 1
        adopted = project.adopted_budget(ADOPTED)["body"]
        assert adopted == {k: v for k, v in old_adopted.items() if k != "layout"}
        ((kept_row, kept),) = [(r["row"], r["document"]) for r in expected["kept_models.body"]]
        assert project.find_kept(kept_row[1], kept_row[2]) == kept


def _documents(expected: dict, column: str) -> list:
    return [row["document"] for row in expected[column]]


def _written_today(path: Path, kept_key: str) -> None:
    """Store the documents of ``path`` again through today's writers (read back first): all
    but the sources' and meter's import settings, which are written once, on import."""
    with Project.open(path) as project, project.transaction():
        for key in documents.SETTING_DOCUMENTS:
            project.set_setting(key, project.get_setting(key))
        for kind in RESULT_KINDS:
            found = project.last_result(kind, None if kind == "budget" else METER)
            project.add_result(kind, found["meter"], found["label"], found["body"])
        for step in project.cleaning_steps():
            project.remove_cleaning_step(step["id"])
            project.add_cleaning_step({k: step[k] for k in ("kind", "meter", "params", "note")})
        adopted = project.adopted_budget(ADOPTED)["body"]
        project.adopt_budget(ADOPTED, adopted, replace=True)
        project.put_kept(METER, kept_key, project.find_kept(METER, kept_key), keep=1)


def test_old_documents_give_the_same_results_as_documents_written_today(
    upgraded, expected, tmp_path
):
    key = expected["kept_models.body"][0]["row"][2]
    today = tmp_path / "today.loadledger"
    shutil.copyfile(upgraded, today)
    _written_today(today, key)
    for place, text in _texts(today).items():  # each written with the current version
        kind = _kind(place)
        if kind is not None and place[0] not in ("sources", "meters"):
            stored = json.loads(text)
            assert (stored["document"], stored["version"]) == (kind, documents.version(kind))
    old, new = _results(upgraded, key), _results(today, key)
    assert old.keys() == new.keys()
    for name, value in old.items():
        same = value.equals(new[name]) if hasattr(value, "equals") else value == new[name]
        assert same, name


def _results(path: Path, kept_key: str) -> dict:
    """What the engine makes of a project's documents, one entry per kind of document."""
    with Project.open(path) as project:
        model, choice = chosen_model(project, METER)
        without_energy = meter_inputs(project, METER).without_energy()
        backtest = BacktestResult.from_dict(project.last_result("backtest", METER)["body"])
        kept = model_from_dict(project.find_kept(METER, kept_key)["model"])
        return {
            "calendar": stored_calendar(project),
            "labels": meter_labels(project),
            "accounts": membership.meter_accounts(project),
            "cleaned": cleaned_meter(project, METER)[1].values,
            "predicted": model.predict(without_energy),
            "choice": choice,
            "backtest scores": backtest.scores,
            "budget": latest_budget(project).run.to_json(),
            "adopted": adopted_as_issued(project, ADOPTED).run.to_json(),
            "kept model predicts": kept.predict(without_energy),
        }


def test_the_upgraded_fixture_budgets_again(upgraded, expected) -> None:
    # The budget the fixture's builder ran (2 months from 2024-12, 100 paths, the default seed),
    # run again by today's code on the upgraded file: the same meters over the same months, kept
    # with the run. (Its figures equalled the format-4 code's when the migration was written;
    # budgets have learnt since, and the kept modelling's digest with them, so the figures are
    # compared with documents written today, above.)
    (old,) = [row["document"] for row in expected["results.body"] if row["row"][1] == "budget"]
    with Project.open(upgraded) as project:
        request = budget_request(project, ["2024-12", "2025-01"], paths=100)
        outcome = budget_project(project, request, workers=1)
        keep_budget(project, outcome)
        assert project.count_kept() >= 1
    new = outcome.run.to_json()
    assert [new[key] for key in ("start", "months", "as_of")] == [
        old[key] for key in ("start", "months", "as_of")
    ]
    assert [m["name"] for m in new["meters"]] == [m["name"] for m in old["meters"]]


def _stored_as(path: Path, sql: str, *args: object) -> None:
    with sqlite3.connect(path) as conn:
        conn.execute(sql, args)
    conn.close()


def _envelope(kind: str, version: object, body: object) -> str:
    return json.dumps({"document": kind, "version": version, "body": body})


def test_a_document_from_a_newer_loadledger_is_refused_in_words(upgraded, capsys) -> None:
    calendar = {"country": None, "subdivision": None, "periods": []}
    _stored_as(
        upgraded,
        "UPDATE settings SET value = ? WHERE key = 'calendar'",
        _envelope("calendar", documents.version("calendar") + 1, calendar),
    )
    with pytest.raises(ProjectError, match="setting 'calendar' was made by a newer Loadledger"):
        Project.open(upgraded)  # small documents are checked on opening
    assert main(["info", str(upgraded)]) == 2
    err = capsys.readouterr().err
    assert "made by a newer Loadledger" in err and "update Loadledger" in err
    assert "Traceback" not in err and len(err.strip().splitlines()) == 1


def test_a_newer_result_or_model_is_refused_when_read(upgraded) -> None:
    with Project.open(upgraded) as project:
        body = project.last_result("model", METER)["body"]
    _stored_as(
        upgraded,
        "UPDATE results SET body = ? WHERE kind = 'backtest'",
        _envelope("backtest", documents.version("backtest") + 1, {}),
    )
    with Project.open(upgraded) as project:
        with pytest.raises(ProjectError, match="backtest result 1 was made by a newer Loadledger"):
            project.last_result("backtest")
        newer_model = {**body["model"], "version": documents.version("model") + 1}
        with pytest.raises(ProjectError, match="made by a newer Loadledger"):
            model_from_dict(newer_model)


@pytest.mark.parametrize(
    ("stored", "words"),
    [
        (_envelope("budget form", 1, {}), "holds a 'budget form' document, not a 'calendar'"),
        (_envelope("calendar", "two", {}), "has the version 'two', not a whole number"),
        (_envelope("calendar", 0, {}), "has the version '0', not a whole number"),
        (_envelope("calendar", 1, []), "holds a list where an object belongs"),
    ],
)
def test_a_damaged_envelope_is_refused(upgraded, stored: str, words: str) -> None:
    _stored_as(upgraded, "UPDATE settings SET value = ? WHERE key = 'calendar'", stored)
    with pytest.raises(ProjectError, match=words + ".*changed outside Loadledger"):
        Project.open(upgraded)


def test_steps_run_in_order_from_the_stored_version(monkeypatch) -> None:
    # A document line of three versions: each step records itself, so the order shows.
    line = documents.DocumentKind(
        list, (lambda body: [*body, "1 to 2"], lambda body: [*body, "2 to 3"])
    )
    monkeypatch.setitem(documents.DOCUMENTS, "findings", line)
    assert line.version == 3
    assert documents.read("findings", "[]", "findings") == ["1 to 2", "2 to 3"]  # no envelope
    assert documents.read("findings", _envelope("findings", 2, []), "findings") == ["2 to 3"]
    assert documents.read("findings", _envelope("findings", 3, []), "findings") == []
    assert json.loads(documents.written("findings", [], "findings"))["version"] == 3


def test_each_step_leaves_the_document_it_is_handed_unchanged(expected) -> None:
    olds = {
        "backtest": next(r for r in expected["results.body"] if r["row"][1] == "backtest"),
        "adopted budget": expected["adopted_budgets.body"][0],
    }
    for kind, row in olds.items():
        old = row["document"]
        frozen = json.dumps(old, sort_keys=True)
        for step in documents.DOCUMENTS[kind].steps:
            step(old)
        assert json.dumps(old, sort_keys=True) == frozen, kind


def test_every_document_the_engine_keeps_is_registered() -> None:
    from desktop.budget_jobs import FORM_SETTING  # the window's own setting, Qt-free glue

    settings = {CALENDAR_SETTING, LABELS_SETTING, membership.SETTING, FORM_SETTING}
    assert set(documents.SETTING_DOCUMENTS) == settings
    assert set(documents.RESULT_DOCUMENTS) == set(RESULT_KINDS)
    named = {*documents.SETTING_DOCUMENTS.values(), *documents.RESULT_DOCUMENTS.values()}
    assert named | set(JSON_COLUMNS.values()) | {"model"} == set(documents.DOCUMENTS)


def test_a_cleaning_step_stored_today_reads_back_as_given(tmp_path) -> None:
    step = CleaningStep("cap", METER, {"start": "2024-01-01T00:00:00+00:00", "high": 2.5})
    with Project.create(tmp_path / "p.loadledger", timezone="UTC") as project:
        project.add_cleaning_step(step.to_dict())
        (stored,) = project.cleaning_steps()
    assert CleaningStep.from_dict(stored) == step


def test_no_document_under_a_setting_is_no_setting(upgraded) -> None:
    with Project.open(upgraded) as project:
        project.set_setting(CALENDAR_SETTING, None)
        assert project.get_setting(CALENDAR_SETTING, "never set") == "never set"
        assert stored_calendar(project) is None
    with Project.open(upgraded) as project:  # and the file still opens
        assert project.get_setting(CALENDAR_SETTING) is None


@pytest.mark.parametrize(
    "number",
    [
        "1e309",  # beyond float64's largest finite value, about 1.8e308 (IEEE 754)
        "1.5E+400",
        "9" * 250 + "e99",  # long digits that overflow with a two-digit exponent
        "1" + "0" * 320 + ".5",  # no exponent at all
        "9" * 19 + "e290",  # 19 digits and a three-digit exponent: 1e309
    ],
)
def test_json_numbers_too_large_for_a_float_are_refused(number: str) -> None:
    """A stored number that overflows a float is refused, not read as infinity, however it
    is written."""
    with pytest.raises(DamagedValue, match="a number too large to read"):
        from_json(f'{{"kWh": [1.25, {number}]}}', "the test document")


def test_json_numbers_that_only_look_large_are_read() -> None:
    values = from_json("[1.5e-300, 2.5e+300, 0.000125, 12345678901234567890.5]", "numbers")
    assert values == [1.5e-300, 2.5e300, 0.000125, 12345678901234567890.5]
