"""The engine never imports Qt, pyqtgraph or the desktop package (design rule, also in CI)."""

from __future__ import annotations

import ast
from pathlib import Path

ENGINE = Path(__file__).resolve().parents[2] / "engine"
FORBIDDEN = ("PySide6", "pyqtgraph", "desktop", "PyQt5", "PyQt6", "shiboken6")


def _imported_roots(path: Path) -> set[str]:
    tree = ast.parse(path.read_text(encoding="utf-8"))
    roots = set()
    for node in ast.walk(tree):
        if isinstance(node, ast.Import):
            roots.update(alias.name.split(".")[0] for alias in node.names)
        elif isinstance(node, ast.ImportFrom) and node.module and node.level == 0:
            roots.add(node.module.split(".")[0])
    return roots


def test_engine_imports_no_qt_and_no_desktop():
    offenders = {
        str(path.relative_to(ENGINE.parent)): sorted(_imported_roots(path) & set(FORBIDDEN))
        for path in ENGINE.rglob("*.py")
    }
    offenders = {k: v for k, v in offenders.items() if v}
    assert offenders == {}


def test_the_scan_sees_a_forbidden_import(tmp_path):
    sample = tmp_path / "bad.py"
    sample.write_text("def f():\n    from PySide6 import QtCore\n")
    assert "PySide6" in _imported_roots(sample)


def test_no_pickle_in_the_code():
    root = ENGINE.parent
    for package in ("engine", "desktop"):
        for path in (root / package).rglob("*.py"):
            assert not {"pickle", "joblib", "dill", "cloudpickle"} & _imported_roots(path), path
