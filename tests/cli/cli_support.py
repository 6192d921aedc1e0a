"""Running the real `loadledger` command line in a subprocess, as scripts do."""

from __future__ import annotations

import subprocess
import sys


def loadledger(*args, expect: int | None = 0, timeout: float = 900, cwd=None):
    """Run ``loadledger ARGS``; check the exit status unless ``expect`` is None."""
    done = subprocess.run(
        [sys.executable, "-m", "desktop.launcher", *map(str, args)],
        capture_output=True,
        text=True,
        timeout=timeout,
        cwd=cwd,
    )
    if expect is not None:
        assert done.returncode == expect, done.stderr
    return done
