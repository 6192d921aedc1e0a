"""No malformed file reaches a traceback: every fuzzed input is read, or refused in one line.

A bounded, deterministic set (the same files on every run) goes through every reader
in-process; a few of them also go through the real command line to check the exit status
and stderr. ``tests/benchmarks/fuzz_long.py`` runs many more.
"""

from __future__ import annotations

import json
from collections import Counter

import pytest

from tests.cli.cli_support import loadledger
from tests.fuzz.corpus import READERS, cases
from tests.fuzz.harness import Tally, run_case

SEED = 20261204
COUNT = 1100
SCALE = 100  # long lines and repeated rows in the tens of thousands keep the run short


@pytest.fixture(scope="module")
def fuzz_cases():
    return list(cases(COUNT, SEED, SCALE))


def test_every_fuzzed_input_is_read_or_refused_clearly(fuzz_cases, tmp_path):
    tally = Tally()
    readers: Counter = Counter()
    for index, case in enumerate(fuzz_cases):
        readers[case.reader] += 1
        tally.add(run_case(case, tmp_path, index))
    assert sum(tally.counts.values()) >= 1000
    assert set(readers) == set(READERS), readers
    assert tally.counts["bad"] == 0 and tally.counts["slow"] == 0, tally.summary()
    # both good outcomes occur: damage is refused, and what survives damage is read
    assert tally.counts["input_error"] > 100 and tally.counts["read"] > 50, tally.summary()


def _cli_cases(fuzz_cases, count=8):
    """The first cases of distinct labels that ``inspect`` can take (not rate cards)."""
    chosen, kinds = [], set()
    for case in fuzz_cases:
        kind = case.label.split()[1].split(":")[0]
        if case.reader != "ratecard" and kind not in kinds:
            kinds.add(kind)
            chosen.append(case)
    return chosen[:count]


def test_fuzzed_inputs_through_the_command_line(fuzz_cases, tmp_path):
    outcomes = Counter()
    for case in _cli_cases(fuzz_cases):
        path = tmp_path / case.filename
        path.write_bytes(case.content)
        kind = [] if case.reader == "auto" else ["--kind", case.reader]
        done = loadledger("inspect", path, "--timezone", "UTC", "--json", *kind, expect=None)
        assert done.returncode in (0, 2), (case.label, done.stderr)
        if done.returncode == 2:
            lines = done.stderr.strip().splitlines()
            assert len(lines) == 1 and lines[0].startswith("loadledger: "), done.stderr
            assert case.filename in lines[0]
        else:
            assert done.stderr == "", done.stderr
            assert json.loads(done.stdout)["file"] == str(path)
        outcomes[done.returncode] += 1
    assert outcomes[2] >= 1
