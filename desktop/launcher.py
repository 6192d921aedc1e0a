"""The ``loadledger`` console command: the window with no arguments, else the command line.

Qt is imported only when the window opens, so the command line runs with no display.
``--self-check`` opens the window, shows every step once and exits (0 when all went well).
"""

from __future__ import annotations

import multiprocessing
import sys
import time
from collections.abc import Sequence

STARTED = time.perf_counter()


def main(argv: Sequence[str] | None = None) -> int:
    args = list(sys.argv[1:] if argv is None else argv)
    if args[:1] == ["--self-check"]:
        from desktop.self_check import run_self_check

        return run_self_check(STARTED)
    if args and args[0] not in ("--project",):
        from engine.cli import main as command_line

        return command_line(args)
    from desktop.app import run_window

    project = args[1] if len(args) > 1 else None
    return run_window(project)


if __name__ == "__main__":
    # A bundled copy starts worker processes by running itself again: let those run the work.
    multiprocessing.freeze_support()
    sys.exit(main())
