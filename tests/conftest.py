"""Shared test settings: Qt draws offscreen; property tests are reproducible in CI."""

from __future__ import annotations

import os

from hypothesis import settings

os.environ.setdefault("QT_QPA_PLATFORM", "offscreen")

# In CI every run draws the same examples, so a red build can be reproduced exactly; on a
# developer's machine hypothesis keeps exploring new ones (which is how it finds edge cases).
settings.register_profile("ci", derandomize=True, deadline=None)
settings.register_profile("dev", deadline=None)
settings.load_profile("ci" if os.environ.get("CI") else "dev")
