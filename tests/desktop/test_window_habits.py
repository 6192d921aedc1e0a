"""What a person expects of a desktop window: recent projects, the project in the title bar,
the platform's standard keys, settings kept between runs, and help for each step."""

from __future__ import annotations

import fnmatch
import tomllib
from pathlib import Path

import pytest
from desktop_support import ROOT, save_screen, show_widget
from PySide6.QtCore import QPoint, QSettings, Qt
from PySide6.QtGui import QKeySequence
from PySide6.QtWidgets import QFileDialog, QMessageBox

import engine
from desktop.main_window import APP_NAME, STEP_NAMES, MainWindow
from desktop.preferences import (
    APPLICATION,
    ORGANISATION,
    RECENT_KEY,
    RECENT_LIMIT,
    RecentProjects,
    stored_settings,
)
from engine.project import Project


@pytest.fixture
def window(qtbot):
    widget = show_widget(qtbot, MainWindow(), (1280, 720))
    widget.activateWindow()
    qtbot.waitActive(widget)
    return widget


def empty_project(path: Path) -> Path:
    """A real project file with no meters yet."""
    Project.create(path, timezone="Europe/Berlin").close()
    return path


def menu(window, words: str):
    (found,) = [a.menu() for a in window.menuBar().actions() if a.text() == words]
    return found


def action(window, menu_words: str, words: str):
    return next(a for a in menu(window, menu_words).actions() if a.text() == words)


def recent_entries(window) -> list[str]:
    window.fill_recent_menu()
    return [a.text() for a in window.recent_menu.actions() if a.isEnabled()]


def test_recent_projects_newest_first_and_gone_files_dropped_with_a_word(qtbot, window, tmp_path):
    north = empty_project(tmp_path / f"north-hall{Project.EXTENSION}")
    south = empty_project(tmp_path / f"south-plant{Project.EXTENSION}")
    assert window.windowTitle() == APP_NAME
    assert recent_entries(window) == []
    assert window.open_project(north) and window.open_project(south)
    assert window.windowTitle() == f"south-plant — {APP_NAME}"
    assert recent_entries(window) == [f"&1 {south.name}", f"&2 {north.name}"]
    assert window.open_project(north)
    assert recent_entries(window) == [f"&1 {north.name}", f"&2 {south.name}"]
    window.recent_menu.popup(window.mapToGlobal(QPoint(40, 40)))
    save_screen(window.recent_menu, "recent-projects-menu", min_bytes=500)
    window.recent_menu.hide()

    south.unlink()
    window.fill_recent_menu()
    words = [a.text() for a in window.recent_menu.actions()]
    assert words[0] == f"No longer found, taken off the list: {south.name}"
    assert not window.recent_menu.actions()[0].isEnabled()
    assert recent_entries(window) == [f"&1 {north.name}"]
    assert RecentProjects(stored_settings()).paths() == [north.absolute()]

    action(window, "&Project", "&Close project").trigger()
    assert window.project is None and window.windowTitle() == APP_NAME
    (entry,) = [a for a in window.recent_menu.actions() if a.text() == f"&1 {north.name}"]
    entry.trigger()
    assert window.project is not None and window.project.path == north.absolute()


def test_the_empty_window_lists_recent_projects_and_opens_one(qtbot, tmp_path):
    kept = empty_project(tmp_path / f"east-wing{Project.EXTENSION}")
    recent = RecentProjects(stored_settings())
    for path in (kept, tmp_path / f"moved-away{Project.EXTENSION}"):
        recent.remember(path)
    window = show_widget(qtbot, MainWindow(), (1280, 720))
    assert window.recent_list.isVisible()
    assert window.recent_list.names() == [kept.name]
    assert f"No longer found, taken off the list: moved-away{Project.EXTENSION}" in (
        window.recent_list.note.text()
    )
    save_screen(window, "main-window-recent-projects")
    window.recent_list.files.itemActivated.emit(window.recent_list.files.item(0))
    assert window.project is not None and window.project.path == kept.absolute()
    assert not window.recent_list.isVisible()
    window.close_project()
    assert window.recent_list.isVisible() and window.recent_list.names() == [kept.name]


def test_a_recent_project_that_vanished_after_the_menu_was_filled(window, tmp_path, monkeypatch):
    shown = []
    monkeypatch.setattr(QMessageBox, "warning", lambda *args: shown.append(args[1:]))
    gone = empty_project(tmp_path / f"annex{Project.EXTENSION}")
    assert window.open_project(gone)
    window.close_project()
    gone.unlink()
    assert not window.open_recent(gone.absolute())
    ((title, text),) = shown
    assert title == "Project not found" and gone.name in text
    assert RecentProjects(stored_settings()).paths() == []


def test_the_recent_list_keeps_its_newest_entries(own_settings, tmp_path):
    recent = RecentProjects(stored_settings())
    paths = [tmp_path / f"p{n}{Project.EXTENSION}" for n in range(RECENT_LIMIT + 3)]
    for path in paths:
        recent.remember(path)
    recent.remember(paths[-2])
    expected = [paths[-2], paths[-1], *reversed(paths[-RECENT_LIMIT:-2])]
    # a new settings object reads the file again: the list survives the run
    assert RecentProjects(stored_settings()).paths() == expected
    assert list(own_settings.rglob("*.ini"))


def test_a_lone_recent_project_written_by_an_earlier_run_reads_back(own_settings, tmp_path):
    """INI files give a one-item list back as plain text, not a list of one."""
    only = tmp_path / f"one{Project.EXTENSION}"
    ini = own_settings / ORGANISATION / f"{APPLICATION}.ini"
    ini.parent.mkdir()
    ini.write_text(f"[recent]\nprojects={only}\n", encoding="utf-8")
    settings = stored_settings()
    assert Path(settings.fileName()) == ini
    assert isinstance(settings.value(RECENT_KEY), str)
    assert RecentProjects(settings).paths() == [only]


STANDARD = [
    ("&Project", "&New from files…", QKeySequence.StandardKey.New),
    ("&Project", "&Open…", QKeySequence.StandardKey.Open),
    ("&Project", "&Close project", QKeySequence.StandardKey.Close),
    ("&Help", "Help on this &step", QKeySequence.StandardKey.HelpContents),
    ("&Edit", "&Undo", QKeySequence.StandardKey.Undo),
    ("&Edit", "&Redo", QKeySequence.StandardKey.Redo),
]


@pytest.mark.parametrize(("menu_words", "words", "key"), STANDARD)
def test_menu_actions_carry_the_platforms_standard_keys(window, menu_words, words, key):
    bound = QKeySequence.keyBindings(key)
    assert bound, f"this platform binds no key to {key.name}"
    assert action(window, menu_words, words).shortcuts() == bound


def test_quit_has_a_key_even_where_the_platform_binds_none(window):
    keys = action(window, "&Project", "&Quit").shortcuts()
    assert keys == (
        QKeySequence.keyBindings(QKeySequence.StandardKey.Quit) or [QKeySequence("Ctrl+Q")]
    )


def test_undo_and_redo_are_offered_only_when_there_is_something_to_undo(window):
    assert not action(window, "&Edit", "&Undo").isEnabled()
    assert not action(window, "&Edit", "&Redo").isEnabled()


def test_ctrl_and_a_number_goes_to_that_step_and_f1_explains_it(qtbot, window):
    for number, name in reversed(list(enumerate(STEP_NAMES, start=1))):
        qtbot.keyClick(
            window, getattr(Qt.Key, f"Key_{number}"), Qt.KeyboardModifier.ControlModifier
        )
        assert window.screens.currentWidget() is window.screens.widget(number - 1)
        assert window.steps.currentItem().text() == name
        qtbot.keyClick(window, Qt.Key.Key_F1)
        assert window.help_dialog.isVisible()
        assert window.help_dialog.windowTitle() == f"Help: {name}"
        text = window.help_dialog.browser.toPlainText()
        assert text.startswith(name) and "What to do" in text
        window.help_dialog.hide()
        window.activateWindow()
        qtbot.waitActive(window)


def test_the_close_key_closes_the_project(qtbot, window, tmp_path):
    assert window.open_project(empty_project(tmp_path / f"gym{Project.EXTENSION}"))
    close = QKeySequence.keyBindings(QKeySequence.StandardKey.Close)[0]
    qtbot.keyClick(window, close[0].key(), close[0].keyboardModifiers())
    assert window.project is None and window.windowTitle() == APP_NAME


def reopened(qtbot) -> MainWindow:
    """A new window, as the next run of the program makes it."""
    return show_widget(qtbot, MainWindow())


def test_size_and_state_come_back_in_the_next_session(qtbot, own_settings):
    first = reopened(qtbot)
    # the test screen is 800 pixels square: a height that fits, as the width cannot
    first.resize(first.width(), 623)
    qtbot.waitUntil(lambda: first.height() == 623)
    first.close()
    second = reopened(qtbot)
    assert second.height() == 623 and not second.isMaximized()
    second.showMaximized()
    qtbot.waitUntil(second.isMaximized)
    second.close()
    assert reopened(qtbot).isMaximized()
    (ini,) = own_settings.rglob("*.ini")
    assert QSettings(str(ini), QSettings.Format.IniFormat).value("window/geometry") is not None


def test_the_open_dialog_starts_in_the_folder_used_last(qtbot, window, tmp_path, monkeypatch):
    folder = tmp_path / "projects on the share"
    folder.mkdir()
    project = empty_project(folder / f"library{Project.EXTENSION}")
    asked_in = []

    def choose(parent, title, start, pattern):
        asked_in.append(start)
        return str(project), pattern

    monkeypatch.setattr(QFileDialog, "getOpenFileName", choose)
    open_action = action(window, "&Project", "&Open…")
    open_action.trigger()
    window.close_project()
    other = reopened(qtbot)
    other_open = next(a for a in menu(other, "&Project").actions() if a.text() == "&Open…")
    other_open.trigger()
    other.close()
    assert asked_in == ["", str(folder)]


def test_every_step_has_a_help_page_packaged_with_the_window():
    help_folder = ROOT / "desktop" / "help"
    pages = {p.name for p in help_folder.glob("*.md")}
    assert pages == {f"{name.lower()}.md" for name in STEP_NAMES} | {"about.md"}
    config = tomllib.loads((ROOT / "pyproject.toml").read_text(encoding="utf-8"))
    patterns = config["tool"]["setuptools"]["package-data"]["desktop"]
    for page in pages:
        assert any(fnmatch.fnmatch(f"help/{page}", pattern) for pattern in patterns), page


def test_about_names_the_version_and_what_a_forecast_is_not(qtbot, window):
    action(window, "&Help", f"&About {APP_NAME}").trigger()
    assert window.about_dialog.isVisible()
    text = window.about_dialog.browser.toPlainText()
    assert f"Loadledger {engine.__version__}" in text
    assert "estimates with ranges" in text and "not a design load" in text
    assert "licensed engineer under local codes" in text
    save_screen(window.about_dialog, "about-dialog")
    window.show_step("Budget")
    window.show_help()
    save_screen(window.help_dialog, "help-budget")
    save_screen(window, "main-window-empty")
    for words in ("&Project", "&Steps", "&Help"):
        shown = menu(window, words)
        shown.popup(window.mapToGlobal(QPoint(10, 10)))
        save_screen(shown, f"menu-{words.strip('&').lower()}", min_bytes=500)
        shown.hide()
