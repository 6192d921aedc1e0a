"""Counts in the window's sentences agree with their nouns."""

import numpy as np

from engine.words import counted


def test_one_is_singular_and_every_other_count_plural():
    assert counted(1, "estimated value") == "1 estimated value"
    assert counted(0, "meter") == "0 meters"
    assert counted(1204, "interval") == "1,204 intervals"
    # numpy integers count the same (detectors pass them)
    assert counted(np.int64(1), "reading") == "1 reading"
    assert counted(np.int64(6), "interval") == "6 intervals"
