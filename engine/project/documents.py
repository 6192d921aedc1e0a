"""JSON documents kept in a project file: each carries a version and is read as the current one.

The schema has :mod:`engine.project.migrations`; the JSON inside it has this module. Every kind
of document the project keeps has a line in :data:`DOCUMENTS`: the JSON type it is (an object
or a list) and the steps that bring it from each older version to the next. A document is
stored in an envelope naming its kind and version::

    {"document": "calendar", "version": 1, "body": {...}}

Reading opens the envelope, refuses a version newer than this code knows (made by a newer
Loadledger), and runs every step from the stored version up, so the callers only ever see the
current shape. A document stored without an envelope (every file before project format 5) is
version 1. Fitted models are documents inside others (a model result, kept modelling, an
adopted budget), so they carry their version in their own ``"version"`` key and are brought up
to date by the same steps through :func:`upgraded` when a model is loaded.

To change a document's shape: append a step here (a small function from the old shape to the
new, on plain JSON values, never through the current domain code, which knows only the newest
shape), so the version goes up by one, and add a document of the old version to the fixtures
under ``tests/fixtures/``. A step must not change a document it is handed in place.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass
from typing import Any

from engine.errors import ProjectError
from engine.project.columns import DamagedValue, from_json, require_type, to_json

#: A step from one version of a document to the next, on plain JSON values.
Step = Callable[[Any], Any]
#: The keys of the envelope a stored document is kept in.
ENVELOPE_KEYS = frozenset({"document", "version", "body"})


@dataclass(frozen=True)
class DocumentKind:
    """One kind of document: the JSON type it is and its steps (``steps[0]``: 1 → 2, …)."""

    shape: type
    steps: tuple[Step, ...] = ()

    @property
    def version(self) -> int:
        """The version this code writes."""
        return len(self.steps) + 1


def _backtest_2_keeps_no_format(body: dict) -> dict:
    """Backtest 1 → 2: the envelope's version replaces the backtest's own ``format`` key."""
    return {key: value for key, value in body.items() if key != "format"}


def _adopted_2_keeps_no_layout(body: dict) -> dict:
    """Adopted budget 1 → 2: the envelope's version replaces the document's ``layout`` key."""
    return {key: value for key, value in body.items() if key != "layout"}


#: Every kind of document a project keeps, by the name its envelope gives (see the inventory
#: in DEVELOPERS.md for the table, column, writer and reader of each).
DOCUMENTS: dict[str, DocumentKind] = {
    "calendar": DocumentKind(dict),
    "meter labels": DocumentKind(dict),
    "meter accounts": DocumentKind(dict),
    "budget form": DocumentKind(dict),
    "source settings": DocumentKind(dict),
    "findings": DocumentKind(list),
    "meter settings": DocumentKind(dict),
    "cleaning step": DocumentKind(dict),
    "model result": DocumentKind(dict),
    "backtest": DocumentKind(dict, (_backtest_2_keeps_no_format,)),
    "budget run": DocumentKind(dict),
    "kept modelling": DocumentKind(dict),
    "adopted budget": DocumentKind(dict, (_adopted_2_keeps_no_layout,)),
    "model": DocumentKind(dict),  # inside other documents; its version is its "version" key
}

#: Settings that hold documents, by setting key (other settings are single values: a time
#: zone, a unit, version text, none with a shape to migrate).
SETTING_DOCUMENTS: dict[str, str] = {
    "calendar": "calendar",
    "meter_labels": "meter labels",
    "accounts.meter_account": "meter accounts",
    "window.budget_form": "budget form",
}

#: Result kinds of the ``results`` table and the document each one is.
RESULT_DOCUMENTS: dict[str, str] = {
    "model": "model result",
    "backtest": "backtest",
    "budget": "budget run",
}


def version(kind: str) -> int:
    """The version of ``kind`` this code writes."""
    return DOCUMENTS[kind].version


def written(kind: str, body: Any, what: str) -> str:
    """JSON text of ``body`` in its envelope at the current version of ``kind``.

    ``what`` names the value for messages; a body that is not the kind's JSON type is a
    programming error (``ValueError``).
    """
    line = DOCUMENTS[kind]
    if not isinstance(body, line.shape):
        raise ValueError(f"{what} must be a {line.shape.__name__}, not {type(body).__name__}")
    return to_json({"document": kind, "version": line.version, "body": body}, what)


def read(kind: str, text: str, what: str) -> Any:
    """The document of ``kind`` stored as ``text``, brought up to the current version.

    Raises :class:`DamagedValue` for text that is not such a document, and
    :class:`~engine.errors.ProjectError` for a version newer than this code reads.
    """
    return opened(kind, from_json(text, what), what)


def opened(kind: str, stored: Any, what: str) -> Any:
    """:func:`read` on a decoded JSON value: the envelope's body, or a bare value (stored before
    documents carried a version) as version 1; then every step up to the current version."""
    if isinstance(stored, dict) and stored.keys() == ENVELOPE_KEYS:
        if stored["document"] != kind:
            raise DamagedValue(f"{what} holds a {stored['document']!r} document, not a {kind!r}")
        found, body = stored["version"], stored["body"]
    else:
        found, body = 1, stored
    body = upgraded(kind, body, found, what)
    require_type(body, what, DOCUMENTS[kind].shape)
    return body


def upgraded(kind: str, body: Any, found: Any, what: str) -> Any:
    """``body``, a ``kind`` document of version ``found`` (None: 1), as the current version."""
    line = DOCUMENTS[kind]
    found = 1 if found is None else found
    if not isinstance(found, int) or isinstance(found, bool) or found < 1:
        raise DamagedValue(f"{what} has the version {str(found)[:20]!r}, not a whole number")
    if found > line.version:
        raise ProjectError(
            f"{what} was made by a newer Loadledger (document version {found}; this one reads "
            f"up to {line.version}); update Loadledger to use it."
        )
    for step in line.steps[found - 1 :]:
        body = step(body)
    return body
