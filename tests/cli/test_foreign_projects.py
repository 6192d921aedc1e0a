"""Project files from elsewhere: a project whose stored JSON or time zones were tampered with
(SQLite tools make that easy) is refused with one line naming the value and what to do,
exit 2, never a traceback, and the file is not changed by the attempt. Rate cards with
over-long integers or deep nesting are refused the same way.

The project is built from the sample campus (invented: electricity export, weather station,
campus calendar), cleaned and fitted for one meter, then each case edits one copy with
``sqlite3`` the way a person with a database browser would.
"""

from __future__ import annotations

import hashlib
import shutil
import sqlite3
from pathlib import Path

import pytest

from engine.cli.main import main

ROOT = Path(__file__).resolve().parents[2]
DATA = ROOT / "sample" / "data"
DEEP = "[" * 100_000 + "]" * 100_000
LONG = "1" + "0" * 5_000  # Python reads at most 4,300 digits into an int
STEP = '{"start": "2024-02-13T15:00:00+00:00", "end": "2024-02-13T21:15:00+00:00", "high": %s}'
BUDGET = ("--start", "2026-11", "--paths", "100", "--workers", "1")

#: name: (SQL changing one value, the value, the command that meets it, words of the message)
TAMPERED = {
    "zone from nowhere": ("UPDATE settings SET value = ? WHERE key = 'site_timezone'",
                          '"Mars/Olympus"', "info", "'Mars/Olympus', which is not a time zone"),
    "zone as a number": ("UPDATE settings SET value = ? WHERE key = 'site_timezone'",
                         "5", "info", "setting 'site_timezone' holds a number where text"),
    "meter's zone": ("UPDATE meters SET timezone = ?", "Mars/Olympus", "info",
                     "meter 'Library' has the time zone 'Mars/Olympus'"),
    "invalid JSON": ("UPDATE settings SET value = ? WHERE key = 'calendar'", '{"periods": [',
                     "info", "setting 'calendar' is not valid JSON"),
    "100k-deep nesting": ("UPDATE settings SET value = ? WHERE key = 'calendar'", DEEP, "info",
                          "setting 'calendar' is nested too deeply"),
    "5,000-digit integer": ("UPDATE cleaning_steps SET params = ?", STEP % LONG, "clean",
                            "is not valid JSON (a number too long to read)"),
    "5,000-digit float": ("UPDATE cleaning_steps SET params = ?", STEP % f"{LONG}.5", "clean",
                          "is not valid JSON (a number too large to read)"),
    "NaN": ("UPDATE cleaning_steps SET params = ?", STEP % "NaN", "profile",
            "NaN is not a number JSON allows"),
    "unknown setting, not JSON": ("INSERT INTO settings VALUES ('theme', ?)", "dark", "info",
                                  "setting 'theme' is not valid JSON"),
    "settings of the wrong type": ("UPDATE meters SET settings = ?", "[]", "info",
                                   "import settings of meter 'Library' holds a list"),
    "unknown utility": ("UPDATE meters SET utility = ?", "plasma", "info",
                        "the unknown utility 'plasma'"),
    "findings of the wrong type": ("UPDATE sources SET findings = ?", '{"rows": 1}', "info",
                                   "findings of source file 1 holds an object where a list"),
    "model result not JSON": ("UPDATE results SET body = ? WHERE kind = 'model'", "{'model':",
                              "budget", "model result"),
    "deep model result": ("UPDATE results SET body = ? WHERE kind = 'model'", DEEP, "budget",
                          "is nested too deeply"),
}  # fmt: skip


def _cli(capsys, *args) -> tuple[int, str]:
    code = main([str(arg) for arg in args])
    return code, capsys.readouterr().err


@pytest.fixture(scope="module")
def built(tmp_path_factory) -> Path:
    project = tmp_path_factory.mktemp("foreign") / "campus.loadledger"
    for args in (
        ("new", project, "--timezone", "America/Chicago", "--meters",
         DATA / "electricity-15min.xlsx", "--weather", DATA / "weather-station.csv",
         "--calendar", DATA / "campus-calendar.csv", "--holidays", "US-IL"),
        ("clean", project, "--apply-recommended"),
        ("fit", project, "--meter", "Library", "--models", "calendar_regression",
         "--origins", "2", "--workers", "1"),
    ):  # fmt: skip
        assert main([str(arg) for arg in args]) == 0
    return project


def _digest(path: Path) -> str:
    return hashlib.sha256(path.read_bytes()).hexdigest()


@pytest.mark.parametrize("case", TAMPERED)
def test_a_tampered_project_is_refused_in_one_line_and_left_as_it_was(
    built, tmp_path, capsys, case
):
    sql, value, command, words = TAMPERED[case]
    project = tmp_path / "campus.loadledger"
    shutil.copyfile(built, project)
    with sqlite3.connect(project) as conn:
        assert conn.execute(sql, (value,)).rowcount >= 1
    conn.close()
    before = _digest(project)
    extra = BUDGET if command == "budget" else ()
    code, stderr = _cli(capsys, command, project, *extra)
    assert code == 2, stderr
    assert stderr.count("\n") == 1 and "campus.loadledger" in stderr, stderr
    assert words in stderr
    assert "backup copy" in stderr or "tzdata" in stderr  # what to do
    assert _digest(project) == before


def test_an_unknown_setting_holding_json_is_kept_and_left_alone(built, tmp_path, capsys):
    """Settings are an open store of JSON values (a later version may add one): a value that
    reads back is no sign of damage."""
    project = tmp_path / "campus.loadledger"
    shutil.copyfile(built, project)
    with sqlite3.connect(project) as conn:
        conn.execute("INSERT INTO settings VALUES ('theme', ?)", ('{"dark": true}',))
    conn.close()
    before = _digest(project)
    assert _cli(capsys, "info", project)[0] == 0
    assert _digest(project) == before


@pytest.mark.parametrize(
    ("value", "words"),
    [(LONG, "thousands of digits"), ("[" * 5_000 + "]" * 5_000, "too deeply")],
)
def test_a_rate_card_with_huge_numbers_or_deep_arrays_exits_2(
    built, tmp_path, capsys, value, words
):
    card = tmp_path / "hostile.ratecard.toml"
    card.write_text(f"ratecard_format = 1\nname = 'x'\nsurprise = {value}\n", encoding="utf-8")
    code, stderr = _cli(capsys, "budget", built, *BUDGET, "--tariff", card)
    assert code == 2 and words in stderr and "hostile.ratecard.toml" in stderr, stderr
