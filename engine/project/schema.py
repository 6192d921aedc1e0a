"""The tables of a project file (format 1 and what later formats add), and the numbers that
mark a file as ours.

Design notes for whoever writes the next migration:

* Times are INTEGER seconds since the Unix epoch, UTC (interval starts for meters). Billing
  periods are calendar dates, stored as ISO ``YYYY-MM-DD`` text, because a billing period is a
  date on the bill, not an instant.
* Measured numbers (kWh, °C, raw values) live in columns with **no declared type** plus a CHECK
  that they are REAL or NULL. A column declared REAL lets SQLite store integral values as
  integers on disk, which turns ``-0.0`` into ``0.0``; without a declared type every float64
  comes back bit for bit. NaN is stored as NULL.
* Structured values (settings, import settings, findings, step parameters) are JSON text
  written by ``json.dumps``. There is no ``json_valid`` CHECK: connections run with
  ``trusted_schema=OFF`` (a file from someone else must not run functions through its schema),
  and SQLite 3.40 refuses ``json_valid`` in a schema under that setting. Nothing is pickled.
"""

from __future__ import annotations

import sqlite3

#: ``PRAGMA application_id`` of every project file: the ASCII bytes "LdLg" read big-endian.
APPLICATION_ID = int.from_bytes(b"LdLg", "big")

#: ``PRAGMA user_version`` written by this code; older files are upgraded on open. Format 5
#: has the tables of format 4; its JSON documents carry their kind and version
#: (:mod:`engine.project.documents`).
FORMAT_VERSION = 5

#: What a source file may hold (the CHECK on ``sources.kind`` lists the same words).
SOURCE_KINDS: tuple[str, ...] = ("meters", "bills", "weather", "calendar", "tariff")

_MEASURED = "CHECK (typeof({0}) IN ('real', 'null'))"

SCHEMA_V1: tuple[str, ...] = (
    """CREATE TABLE settings (
        key TEXT PRIMARY KEY,
        value TEXT NOT NULL
    ) WITHOUT ROWID""",
    """CREATE TABLE sources (
        id INTEGER PRIMARY KEY,
        kind TEXT NOT NULL
            CHECK (kind IN ('meters', 'bills', 'weather', 'calendar', 'tariff')),
        file_name TEXT NOT NULL,
        file_path TEXT NOT NULL,
        size_bytes INTEGER NOT NULL,
        sha256 TEXT NOT NULL CHECK (length(sha256) = 64),
        settings TEXT NOT NULL,
        findings TEXT NOT NULL,
        imported_at INTEGER NOT NULL
    )""",
    """CREATE TABLE meters (
        id INTEGER PRIMARY KEY,
        name TEXT NOT NULL UNIQUE,
        utility TEXT NOT NULL,
        unit_found TEXT NOT NULL,
        interval_s INTEGER NOT NULL CHECK (interval_s > 0),
        timezone TEXT NOT NULL,
        source_label TEXT NOT NULL,
        source_id INTEGER NOT NULL REFERENCES sources (id),
        settings TEXT NOT NULL
    )""",
    f"""CREATE TABLE raw_readings (
        meter_id INTEGER NOT NULL REFERENCES meters (id) ON DELETE CASCADE,
        seq INTEGER NOT NULL,
        t INTEGER NOT NULL,
        raw_value {_MEASURED.format("raw_value")},
        source_row INTEGER NOT NULL,
        PRIMARY KEY (meter_id, seq)
    ) WITHOUT ROWID""",
    f"""CREATE TABLE readings (
        meter_id INTEGER NOT NULL REFERENCES meters (id) ON DELETE CASCADE,
        t INTEGER NOT NULL,
        kwh {_MEASURED.format("kwh")},
        PRIMARY KEY (meter_id, t)
    ) WITHOUT ROWID""",
    f"""CREATE TABLE bills (
        id INTEGER PRIMARY KEY,
        account TEXT NOT NULL,
        period_start TEXT NOT NULL CHECK (date(period_start) IS period_start),
        period_end TEXT NOT NULL
            CHECK (date(period_end) IS period_end AND period_end >= period_start),
        quantity_kwh {_MEASURED.format("quantity_kwh")},
        raw_quantity {_MEASURED.format("raw_quantity")},
        unit_found TEXT NOT NULL,
        peak_kw {_MEASURED.format("peak_kw")},
        cost {_MEASURED.format("cost")},
        source_id INTEGER NOT NULL REFERENCES sources (id)
    )""",
    "CREATE INDEX bills_by_account ON bills (account, period_start)",
    f"""CREATE TABLE weather (
        station TEXT NOT NULL,
        t INTEGER NOT NULL,
        temp_c {_MEASURED.format("temp_c")},
        raw_value {_MEASURED.format("raw_value")},
        source_id INTEGER NOT NULL REFERENCES sources (id),
        PRIMARY KEY (station, t)
    ) WITHOUT ROWID""",
    """CREATE TABLE cleaning_steps (
        id INTEGER PRIMARY KEY,
        meter TEXT,
        position INTEGER NOT NULL,
        kind TEXT NOT NULL,
        params TEXT NOT NULL,
        note TEXT NOT NULL,
        created_at INTEGER NOT NULL,
        active INTEGER NOT NULL CHECK (active IN (0, 1))
    )""",
    "CREATE INDEX cleaning_steps_in_order ON cleaning_steps (position)",
)

#: Format 2 adds the results of analyses: fitted models, backtests and budget runs, each a
#: JSON document (never pickled objects) tied to a meter or to the whole project.
SCHEMA_V2_ADDITIONS: tuple[str, ...] = (
    """CREATE TABLE results (
        id INTEGER PRIMARY KEY,
        kind TEXT NOT NULL CHECK (kind IN ('model', 'backtest', 'budget')),
        meter TEXT,
        label TEXT NOT NULL,
        created_at INTEGER NOT NULL,
        body TEXT NOT NULL
    )""",
    "CREATE INDEX results_by_kind ON results (kind, meter, id)",
)

#: Format 3 keeps each meter's budget modelling (model choice, fit, refits and their errors)
#: between runs, under a digest of everything it was computed from (see
#: :mod:`engine.steps.kept_models`); the key column makes a lookup read one document.
SCHEMA_V3_ADDITIONS: tuple[str, ...] = (
    """CREATE TABLE kept_models (
        id INTEGER PRIMARY KEY,
        meter TEXT NOT NULL,
        key TEXT NOT NULL,
        created_at INTEGER NOT NULL,
        body TEXT NOT NULL
    )""",
    "CREATE INDEX kept_models_by_meter ON kept_models (meter, key)",
)

#: Format 4 keeps adopted budgets: a budget stored under a name with everything it assumed
#: (see :mod:`engine.steps.adopting`), written once and never changed by later imports,
#: cleaning or refits; a name is adopted again only by replacing its row on request.
SCHEMA_V4_ADDITIONS: tuple[str, ...] = (
    """CREATE TABLE adopted_budgets (
        id INTEGER PRIMARY KEY,
        name TEXT NOT NULL UNIQUE,
        adopted_at INTEGER NOT NULL,
        body TEXT NOT NULL
    )""",
)

#: Tables a file of the current format must have.
TABLES: frozenset[str] = frozenset(
    {
        "settings",
        "sources",
        "meters",
        "raw_readings",
        "readings",
        "bills",
        "weather",
        "cleaning_steps",
        "results",
        "kept_models",
        "adopted_budgets",
    }
)


def create_schema(conn: sqlite3.Connection) -> None:
    """Create the current format's tables and stamp the file; call inside a transaction.

    Statements run one by one because ``executescript`` would commit the open transaction.
    """
    for statement in (*SCHEMA_V1, *SCHEMA_V2_ADDITIONS, *SCHEMA_V3_ADDITIONS, *SCHEMA_V4_ADDITIONS):
        conn.execute(statement)
    conn.execute(f"PRAGMA application_id = {APPLICATION_ID}")
    conn.execute(f"PRAGMA user_version = {FORMAT_VERSION}")


def table_names(conn: sqlite3.Connection) -> set[str]:
    """Names of the ordinary tables in the file."""
    rows = conn.execute("SELECT name FROM sqlite_schema WHERE type = 'table'").fetchall()
    return {name for (name,) in rows}
