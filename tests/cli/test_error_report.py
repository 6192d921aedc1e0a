"""An internal error (exit 1) leaves a report in the user's log folder and names it; the
report holds the version, the system, the command and the traceback, but no readings."""

from __future__ import annotations

import platform

from engine import __version__
from engine.cli import main, project_commands
from engine.crash_report import log_folder

READING = "4187.25"


def _failing_info(args):
    """`info` broken by a bug whose message quotes a reading, as pandas errors sometimes do."""
    kwh = float(READING)
    raise ValueError(f"cannot place {kwh} kWh at row 17")


def test_an_internal_error_writes_a_report_and_says_where(tmp_path, monkeypatch, capsys):
    monkeypatch.setenv("XDG_STATE_HOME", str(tmp_path / "state"))  # Linux's log folder root
    monkeypatch.setattr(project_commands, "info", _failing_info)
    status = main(["info", "campus.loadledger"])
    err = capsys.readouterr().err
    assert status == 1
    reports = list(log_folder().glob("error-*.txt"))
    assert len(reports) == 1 and reports[0].is_relative_to(tmp_path)
    assert str(reports[0]) in err and "Traceback" not in err
    text = reports[0].read_text(encoding="utf-8")
    assert f"version: {__version__}" in text
    assert platform.python_version() in text and platform.machine() in text
    assert "command: loadledger info campus.loadledger" in text
    assert "Traceback (most recent call last):" in text and "_failing_info" in text
    assert "ValueError: cannot place # kWh at row #" in text
    assert READING not in text


def test_two_errors_in_the_same_second_keep_both_reports(tmp_path, monkeypatch, capsys):
    monkeypatch.setenv("XDG_STATE_HOME", str(tmp_path))
    monkeypatch.setattr(project_commands, "info", _failing_info)
    assert main(["info", "a.loadledger"]) == 1 and main(["info", "b.loadledger"]) == 1
    texts = sorted(path.read_text() for path in log_folder().glob("error-*.txt"))
    assert len(texts) == 2 and "a.loadledger" in texts[0] and "b.loadledger" in texts[1]


def test_a_log_folder_that_cannot_be_written_is_said_plainly(tmp_path, monkeypatch, capsys):
    blocker = tmp_path / "not-a-folder"
    blocker.write_text("")
    monkeypatch.setenv("XDG_STATE_HOME", str(blocker))
    monkeypatch.setattr(project_commands, "info", _failing_info)
    assert main(["info", "campus.loadledger"]) == 1
    assert "no report could be written" in capsys.readouterr().err
