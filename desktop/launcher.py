"""The ``loadledger`` console command: the window with no arguments, else the command line.

Qt is imported only when the window opens, so the command line runs with no display.
"""

from __future__ import annotations

import sys
from collections.abc import Sequence


def main(argv: Sequence[str] | None = None) -> int:
    args = list(sys.argv[1:] if argv is None else argv)
    if args and args[0] not in ("--project",):
        from engine.cli import main as command_line

        return command_line(args)
    from desktop.app import run_window

    project = args[1] if len(args) > 1 else None
    return run_window(project)


if __name__ == "__main__":
    sys.exit(main())
