"""The engine imports without cycles: each module's imports form a graph with no loop.

The layers contract (``lint-imports``, pyproject.toml) keeps the order between the engine's
layers; inside a layer, siblings marked ``:`` may import each other, so a loop there would
pass it. This test closes that gap. Imports under ``TYPE_CHECKING`` are left out: they never
run.
"""

from __future__ import annotations

import graphlib
import sys
from pathlib import Path

import grimp


def import_cycle(package: str) -> tuple[str, ...]:
    """One import loop among ``package``'s modules, or an empty tuple when there is none."""
    graph = grimp.build_graph(package, exclude_type_checking_imports=True, cache_dir=None)
    order = graphlib.TopologicalSorter(
        {module: graph.find_modules_directly_imported_by(module) for module in graph.modules}
    )
    try:
        order.prepare()
    except graphlib.CycleError as error:
        return tuple(error.args[1])
    return ()


def test_the_check_finds_a_loop(tmp_path: Path, monkeypatch) -> None:
    package = tmp_path / "looped"
    package.mkdir()
    (package / "__init__.py").write_text("")
    (package / "first.py").write_text("from looped import second\n")
    (package / "second.py").write_text("from looped.first import *\n")
    (package / "third.py").write_text("import looped.second\n")
    monkeypatch.syspath_prepend(str(tmp_path))
    cycle = import_cycle("looped")
    sys.modules.pop("looped", None)
    assert set(cycle) == {"looped.first", "looped.second"}


def test_the_engine_has_no_import_loop() -> None:
    assert import_cycle("engine") == ()
