"""The headless command line: the same engine as the window, for scripts and scheduled runs."""

from engine.cli.main import build_parser, main

__all__ = ["build_parser", "main"]
