"""Help inside the window: a short page for each step and the About page, read from the
Markdown files bundled under ``desktop/help/`` and shown in a plain reading dialog (no
network, no browser)."""

from __future__ import annotations

from importlib.resources import files

from PySide6.QtWidgets import QDialog, QDialogButtonBox, QTextBrowser, QVBoxLayout, QWidget

import engine


def help_text(page: str) -> str:
    """The Markdown of help page ``page`` (a step's name, or "About")."""
    return (files("desktop") / "help" / f"{page.lower()}.md").read_text(encoding="utf-8")


def about_text() -> str:
    """The About page, with this copy's version."""
    return help_text("About").replace("{version}", engine.__version__)


class ReadingDialog(QDialog):
    """A window that shows one page of help at a time; it stays open beside the work."""

    def __init__(self, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.browser = QTextBrowser()
        self.browser.setOpenLinks(False)
        buttons = QDialogButtonBox(QDialogButtonBox.StandardButton.Close)
        buttons.rejected.connect(self.close)
        layout = QVBoxLayout(self)
        layout.addWidget(self.browser)
        layout.addWidget(buttons)
        self.resize(620, 560)

    def show_page(self, title: str, markdown: str) -> None:
        """Show ``markdown`` under the window title ``title`` and bring the dialog forward."""
        self.setWindowTitle(title)
        self.browser.setMarkdown(markdown)
        self.show()
        self.raise_()
        self.activateWindow()
