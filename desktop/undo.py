"""Undo and redo of the changes a person makes to the open project (one ``QUndoStack``).

Each command carries two engine calls, one that makes the change and one that takes it back,
and the kind of change, so the screens that show it can look again after an undo or a redo.
A change that was already made (on a worker, say) is remembered with :meth:`ProjectUndo.made`
and is only undone or redone from then on. The stack is emptied whenever another project (or
none) is opened: its commands belong to the project they were made on.
"""

from __future__ import annotations

import weakref
from collections.abc import Callable

from PySide6.QtCore import QObject, QTimer, Signal
from PySide6.QtGui import QUndoCommand, QUndoStack

from desktop.project_changes import Reversible
from desktop.session import Session
from engine.errors import InputError, ProjectError


class _Command(QUndoCommand):
    def __init__(self, change: Reversible, owner: ProjectUndo, made: bool) -> None:
        super().__init__(change.words)
        self.change = change
        self._owner = owner
        self._made = made

    def redo(self) -> None:
        if self._made:  # made before it was pushed: nothing to do the first time
            self._made = False
            return
        self._owner.call(self.change.do, self.change)

    def undo(self) -> None:
        self._owner.call(self.change.undo, self.change)


class ProjectUndo(QObject):
    """The open project's undo stack; ``changed`` carries each change undone or redone."""

    changed = Signal(object)
    problem = Signal(str)
    _made_elsewhere = Signal(object)

    def __init__(self, session: Session) -> None:
        super().__init__()
        self.session = session
        self.stack = QUndoStack(self)
        self._made_elsewhere.connect(self.made)
        session.subscribe(lambda _project: self.stack.clear())

    def push(self, change: Reversible) -> None:
        """Make ``change`` now and remember it."""
        self.stack.push(_Command(change, self, made=False))

    def made(self, change: Reversible) -> None:
        """Remember ``change``, which was made already (it is not made again); a change to a
        project no longer open is not remembered."""
        if change.project is self.session.project:
            self.stack.push(_Command(change, self, made=True))

    def made_on_worker(self, change: Reversible) -> None:
        """:meth:`made`, callable from a worker thread (the stack is the window thread's)."""
        self._made_elsewhere.emit(change)

    def call(self, engine_call: Callable[[], object], change: Reversible) -> None:
        """Run one side of a command; a refusal empties the stack, which no longer matches
        the project, and is said in words."""
        try:
            engine_call()
        except (InputError, ProjectError, KeyError, ValueError) as error:
            QTimer.singleShot(0, self.stack.clear)  # not from inside the stack's own call
            self.problem.emit(f"'{change.words}' could not be undone or redone: {error}")
            return
        self.changed.emit(change)


_STACKS: weakref.WeakKeyDictionary[Session, ProjectUndo] = weakref.WeakKeyDictionary()


def undo_for(session: Session) -> ProjectUndo:
    """The one undo stack of ``session`` (made on first use), shared by all its screens."""
    if session not in _STACKS:
        _STACKS[session] = ProjectUndo(session)
    return _STACKS[session]
