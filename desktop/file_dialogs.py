"""The system's file dialogs, each opening in the folder its kind of file was last chosen in."""

from __future__ import annotations

from pathlib import Path

from PySide6.QtWidgets import QFileDialog, QWidget

from desktop.preferences import last_folder, remember_folder, stored_settings


def ask_open_path(parent: QWidget, purpose: str, title: str, pattern: str) -> Path | None:
    """Ask for one existing file; None when the person cancels."""
    settings = stored_settings()
    chosen, _ = QFileDialog.getOpenFileName(parent, title, last_folder(settings, purpose), pattern)
    if not chosen:
        return None
    remember_folder(settings, purpose, chosen)
    return Path(chosen)


def ask_save_path(
    parent: QWidget, purpose: str, title: str, pattern: str, name: str = ""
) -> tuple[Path, str] | None:
    """Ask where to write a file, suggesting ``name`` in the last folder; the path and the
    filter the person picked, or None when they cancel."""
    settings = stored_settings()
    folder = last_folder(settings, purpose)
    suggested = str(Path(folder, name)) if folder and name else name or folder
    chosen, picked = QFileDialog.getSaveFileName(parent, title, suggested, pattern)
    if not chosen:
        return None
    remember_folder(settings, purpose, chosen)
    return Path(chosen), picked


def ask_workbook_path(parent: QWidget, title: str, name: str) -> Path | None:
    """Ask where to write an Excel workbook, suggesting ``name``; a name typed without the
    extension gets ".xlsx", as the dialog's filter promises. None when the person cancels."""
    answer = ask_save_path(parent, "workbooks", title, "Excel workbooks (*.xlsx)", name)
    if answer is None:
        return None
    path = answer[0]
    return path if path.suffix.lower() == ".xlsx" else path.with_name(path.name + ".xlsx")
