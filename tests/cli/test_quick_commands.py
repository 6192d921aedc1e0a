"""The quick commands (`inspect`, `new`, `info`, `meter`, `accounts`) load none of the
modelling libraries, so a script that asks a project what it holds is answered in well under a
second; only the commands that model load them."""

from __future__ import annotations

import json
import subprocess
import sys

import pandas as pd
import pytest

MODELLING = ("statsmodels", "sklearn", "scipy.signal", "engine.wizard", "engine.models")

#: Runs the command line in this process, then prints which modelling modules it loaded.
PROBE = f"""
import contextlib, io, json, sys
from engine.cli import main
with contextlib.redirect_stdout(io.StringIO()):
    status = main(sys.argv[1:])
print(json.dumps({{"status": status, "loaded": [m for m in {MODELLING!r} if m in sys.modules]}}))
"""


def _loaded(*args) -> dict:
    done = subprocess.run([sys.executable, "-c", PROBE, *map(str, args)],
                          capture_output=True, text=True, timeout=120)  # fmt: skip
    assert done.returncode == 0, done.stderr
    return json.loads(done.stdout.splitlines()[-1])


@pytest.fixture(scope="module")
def site(tmp_path_factory):
    folder = tmp_path_factory.mktemp("quick")
    stamps = pd.date_range("2025-01-06", periods=24 * 21, freq="h")
    meters = folder / "m.csv"
    rows = "".join(f"{t:%Y-%m-%d %H:%M},{5 + t.hour % 7}\n" for t in stamps)
    meters.write_text("Timestamp,Hall (kWh)\n" + rows)
    project = folder / "p.loadledger"
    assert _loaded("new", project, "--meters", meters, "--timezone", "UTC") == {
        "status": 0,
        "loaded": [],
    }
    return meters, project


@pytest.mark.parametrize(
    "command",
    [("inspect", "METERS"), ("info", "PROJECT"), ("accounts", "PROJECT"),
     ("meter", "PROJECT", "Hall", "--display-name", "Hall A")],
)  # fmt: skip
def test_a_quick_command_loads_no_modelling_library(site, command):
    meters, project = site
    args = [{"METERS": meters, "PROJECT": project}.get(a, a) for a in command]
    assert _loaded(*args) == {"status": 0, "loaded": []}


def test_a_command_that_models_loads_them(site):
    _, project = site
    report = _loaded("profile", project)
    assert report["status"] == 0 and "engine.models" in report["loaded"]


@pytest.mark.parametrize(
    "args",
    [
        ["inspect", "MISSING.csv"],
        ["new", "MISSING.loadledger"],
        ["clean", "MISSING.loadledger"],
        ["profile", "MISSING.loadledger"],
        ["fit", "MISSING.loadledger"],
        ["budget", "MISSING.loadledger", "--start", "2026-01"],
        ["track", "MISSING.loadledger", "--budget", "FY"],
        ["calendar", "MISSING.loadledger"],
        ["meter", "MISSING.loadledger"],
        ["accounts", "MISSING.loadledger"],
        ["info", "MISSING.loadledger"],
    ],
    ids=lambda args: args[0],
)
def test_every_command_is_found_when_it_runs(tmp_path, capsys, args):
    """Each command's module is imported by name when it runs: a wrong name would be an
    internal error (exit 1); a missing file is the user's to fix (exit 2, one line)."""
    from engine.cli import main

    assert main([str(tmp_path / a) if a.startswith("MISSING") else a for a in args]) == 2
    err = capsys.readouterr().err
    assert err.startswith("loadledger: ") and len(err.strip().splitlines()) == 1
