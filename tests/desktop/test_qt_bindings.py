"""The installed Qt bindings count references correctly (PySide6 6.12.0 on Python 3.11 did not).

That release returned None from void methods and True from signal emits without counting the
reference, so CPython aborted ("deallocating None") after a few thousand calls; pyproject.toml
keeps PySide6 below 6.12 for this reason. This test fails if such a release comes back.
"""

from __future__ import annotations

import sys

from PySide6.QtCore import QObject, QThread, Signal


class _Pinger(QObject):
    ping = Signal()


def test_void_calls_and_emits_keep_the_reference_counts_of_none_and_true():
    pinger = _Pinger()
    calls = 5_000
    before = (sys.getrefcount(None), sys.getrefcount(True))
    for _ in range(calls):
        QThread.msleep(0)
        pinger.ping.emit()
    after = (sys.getrefcount(None), sys.getrefcount(True))
    # other threads may take or drop a few references meanwhile; a leak loses one per call
    assert after[0] > before[0] - calls // 10
    assert after[1] > before[1] - calls // 10
