"""Shared fixtures: a scratch folder per test and helpers to write real input files."""

from __future__ import annotations

import os

os.environ.setdefault("QT_QPA_PLATFORM", "offscreen")
