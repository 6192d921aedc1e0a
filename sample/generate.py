"""Rewrite the bundled sample files in ``sample/data/``: ``python sample/generate.py``.

The output is deterministic: reruns write byte-identical files.
"""

from __future__ import annotations

import sys
from pathlib import Path

HERE = Path(__file__).resolve().parent


def main() -> None:
    """Simulate the invented campus and write its files, listing each with its size."""
    if sys.path and Path(sys.path[0]).resolve() == HERE:
        # Run as a script: import the ``sample`` package rather than its modules one by one.
        sys.path[0] = str(HERE.parent)
    from sample.export import write_sample

    for path in write_sample(HERE / "data"):
        print(f"{path.stat().st_size / 1e6:7.2f} MB  {path.relative_to(HERE.parent)}")


if __name__ == "__main__":
    main()
