"""The project: one SQLite file holding a site's data, import settings and cleaning log.

Every write method is one transaction; group several writes into one save with
:meth:`Project.transaction`. Readers in other connections see the previous state until the
save commits, and a save that is killed midway leaves the previous state intact.
"""

from __future__ import annotations

import contextlib
import sqlite3
import threading
from collections.abc import Iterator
from datetime import UTC, datetime
from pathlib import Path
from typing import Any

import pandas as pd

import engine
from engine.errors import InputError, ProjectError
from engine.meters import MeterSeries
from engine.progress import Progress
from engine.project import (
    adopted_table,
    bill_table,
    cleaning_table,
    contents,
    kept_table,
    meter_tables,
    migrations,
    results_table,
    schema,
    settings_table,
    source_table,
    sqlite_file,
    summary,
    weather_table,
)
from engine.zone_names import require_zone


class Project:
    """An open project file. Make one with :meth:`create` or :meth:`open`; close it when done.

    Attributes
    ----------
    path : Path
        The project file.
    format_version : int
        The file's format version (the current one once it is open; older files are upgraded).
    upgrade_note : str or None
        What opening upgraded, for the window or command line to show; None if nothing.
    """

    EXTENSION = ".loadledger"

    def __init__(self, path: Path, conn: sqlite3.Connection, upgrade_note: str | None) -> None:
        """Wrap an open, checked connection; use :meth:`create` or :meth:`open` instead."""
        self.path = path
        self.format_version = schema.FORMAT_VERSION
        self.upgrade_note = upgrade_note
        self._conn: sqlite3.Connection | None = conn
        self._lock = threading.RLock()
        self._depth = 0

    # -- files ----------------------------------------------------------------------------

    @classmethod
    def create(cls, path: str | Path, *, timezone: str, overwrite: bool = False) -> Project:
        """Create a new, empty project for a site in ``timezone`` (an IANA name) and open it.

        The file is built under a temporary name in the same folder and renamed into place
        when complete. An existing file is only replaced when ``overwrite`` is True.
        """
        path = Path(path)
        if path.suffix != cls.EXTENSION:
            raise InputError(
                f"project files end in '{cls.EXTENSION}'.",
                hint=f"Name it '{path.stem}{cls.EXTENSION}'.",
                file=path,
            )
        require_zone(timezone, "the site's time zone")

        def fill(conn: sqlite3.Connection) -> None:
            schema.create_schema(conn)
            settings_table.set_setting(conn, settings_table.SITE_TIMEZONE, timezone)
            settings_table.set_setting(conn, settings_table.CREATED_WITH, _this_version())
            settings_table.set_setting(conn, settings_table.WRITTEN_WITH, _this_version())
            settings_table.set_setting(
                conn, "created_at", datetime.now(UTC).strftime("%Y-%m-%dT%H:%M:%SZ")
            )

        sqlite_file.build_file(path, overwrite=overwrite, fill=fill)
        return cls.open(path)

    @classmethod
    def open(cls, path: str | Path) -> Project:
        """Open a project file, upgrading it first if an older Loadledger wrote it.

        Raises
        ------
        ProjectError
            The file is missing, not SQLite, not a project, newer than this code, or damaged.
        """
        path = Path(path).absolute()
        sqlite_file.require_sqlite_file(path)
        with sqlite_file.reported_as_project_errors(path):
            conn = sqlite_file.connect(path)
            try:
                found = sqlite_file.stored_version(conn, path)
                sqlite_file.require_intact(conn, path)
                contents.require_readable(conn, path)
                note = migrations.upgrade(conn, path, found)
                sqlite_file.require_tables(conn, path)
            except BaseException:
                conn.close()
                raise
        return cls(path, conn, note)

    def close(self) -> None:
        """Close the file; anything not committed is rolled back. Closing twice is harmless."""
        with self._lock:
            if self._conn is not None:
                self._conn.close()
                self._conn = None

    def __enter__(self) -> Project:
        return self

    def __exit__(self, *exc_info: object) -> None:
        self.close()

    def __repr__(self) -> str:
        state = "open" if self._conn is not None else "closed"
        return f"Project('{self.path}', format {self.format_version}, {state})"

    # -- transactions ---------------------------------------------------------------------

    @contextlib.contextmanager
    def transaction(self) -> Iterator[None]:
        """Make the writes inside the ``with`` block one save: all of them or none.

        Blocks nest; an inner block that fails undoes only its own writes.
        """
        with self._writing():
            yield

    @contextlib.contextmanager
    def _writing(self) -> Iterator[sqlite3.Connection]:
        with self._lock, sqlite_file.reported_as_project_errors(self.path):
            conn = self._connection()
            outer = self._depth == 0
            savepoint = f"nested_{self._depth}"
            conn.execute("BEGIN IMMEDIATE" if outer else f"SAVEPOINT {savepoint}")
            changes_before = conn.total_changes
            self._depth += 1
            try:
                yield conn
            except BaseException:
                if outer:
                    conn.execute("ROLLBACK")
                else:
                    conn.execute(f"ROLLBACK TO {savepoint}")
                    conn.execute(f"RELEASE {savepoint}")
                raise
            finally:
                self._depth -= 1
            if not outer:
                conn.execute(f"RELEASE {savepoint}")
                return
            try:
                if conn.total_changes > changes_before:  # a save: say which version made it
                    settings_table.set_setting(conn, settings_table.WRITTEN_WITH, _this_version())
                conn.execute("COMMIT")
            except sqlite3.Error:
                if conn.in_transaction:
                    conn.execute("ROLLBACK")
                raise

    @contextlib.contextmanager
    def _reading(self) -> Iterator[sqlite3.Connection]:
        with self._lock, sqlite_file.reported_as_project_errors(self.path):
            yield self._connection()

    def _connection(self) -> sqlite3.Connection:
        if self._conn is None:
            raise ProjectError(f"'{self.path.name}' is closed; open the project again.")
        return self._conn

    # -- settings -------------------------------------------------------------------------

    @property
    def timezone(self) -> str:
        """The site's IANA time zone (a setting)."""
        return self.get_setting(settings_table.SITE_TIMEZONE)

    @timezone.setter
    def timezone(self, name: str) -> None:
        self.set_setting(settings_table.SITE_TIMEZONE, name)

    def get_setting(self, key: str, default: Any = None) -> Any:
        """The value stored under ``key`` (decoded from JSON), or ``default``."""
        with self._reading() as conn:
            return settings_table.get_setting(conn, key, default)

    def set_setting(self, key: str, value: Any) -> None:
        """Store any JSON value (dicts, lists, text, numbers, booleans, None) under ``key``."""
        with self._writing() as conn:
            settings_table.set_setting(conn, key, value)

    # -- sources --------------------------------------------------------------------------

    def add_source(self, kind: str, file: str | Path, settings: dict, findings: list[dict]) -> int:
        """Record an imported file (its name, size and SHA-256) with the settings used and
        what the importer found; return the source id that stored data refers to.

        ``kind`` is one of :data:`~engine.project.schema.SOURCE_KINDS`.
        """
        with self._writing() as conn:
            return source_table.add_source(conn, kind, file, settings, findings)

    def sources(self) -> list[dict]:
        """Every recorded source file, oldest first, JSON-ready."""
        with self._reading() as conn:
            return source_table.list_sources(conn)

    # -- meters ---------------------------------------------------------------------------

    def add_meter(
        self,
        meter: MeterSeries,
        raw: pd.DataFrame,
        *,
        source_id: int,
        settings: dict,
        progress: Progress | None = None,
    ) -> None:
        """Store a new meter: its interval energy and every reading as read.

        Parameters
        ----------
        meter
            Interval energy (float64 kWh on sorted, unique, whole-second UTC interval starts).
        raw
            Columns ``t`` (UTC timestamps), ``raw_value`` (float, NaN allowed) and
            ``source_row`` (int): each reading exactly as read, duplicates included.
        source_id
            The file the meter came from (see :meth:`add_source`).
        settings
            The import settings for this meter (JSON values).
        progress
            Reports saving progress; cancelling rolls the whole meter back.
        """
        with self._writing() as conn:
            meter_tables.add_meter(
                conn, meter, raw, source_id=source_id, settings=settings, progress=progress
            )

    def meter_names(self) -> list[str]:
        """Names of the stored meters, in the order they were added."""
        with self._reading() as conn:
            return meter_tables.meter_names(conn)

    def load_meter(self, name: str) -> MeterSeries:
        """The meter as added: values bit for bit, same instants and metadata.

        The index comes back at microsecond resolution without a ``freq``; the Series is
        named after the meter.
        """
        with self._reading() as conn:
            return meter_tables.load_meter(conn, name)

    def load_raw(self, name: str) -> pd.DataFrame:
        """The meter's readings as read, in file order (columns t, raw_value, source_row)."""
        with self._reading() as conn:
            return meter_tables.load_raw(conn, name)

    def meter_settings(self, name: str) -> dict:
        """The import settings stored with the meter."""
        with self._reading() as conn:
            return meter_tables.meter_settings(conn, name)

    def meter_descriptions(self) -> list[tuple[str, str, str]]:
        """(name, utility, unit found) of every meter, in the order added; no readings read."""
        with self._reading() as conn:
            return meter_tables.meter_descriptions(conn)

    def meter_interval(self, name: str) -> pd.Timedelta | None:
        """Meter ``name``'s interval (None without such a meter); no readings read."""
        with self._reading() as conn:
            return meter_tables.meter_interval(conn, name)

    def last_reading_starts(self) -> list[pd.Timestamp]:
        """The last interval start (UTC) of every meter with readings, in the order added; no
        readings read."""
        with self._reading() as conn:
            starts = meter_tables.last_reading_starts(conn)
        return [pd.Timestamp(start, unit="s", tz="UTC") for start in starts]

    def set_meter_utility(self, name: str, utility: str) -> None:
        """File meter ``name`` under ``utility`` (one of ``engine.meters.UTILITIES``)."""
        with self._writing() as conn:
            meter_tables.set_utility(conn, name, utility)

    def remove_meter(self, name: str) -> None:
        """Delete a meter with its readings, raw readings and cleaning steps."""
        with self._writing() as conn:
            meter_tables.remove_meter(conn, name)

    # -- bills and weather ----------------------------------------------------------------

    def add_bills(self, account: str, bills: pd.DataFrame, *, source_id: int) -> None:
        """Store an account's bills: columns period_start, period_end (dates), quantity_kwh,
        raw_quantity, unit_found, peak_kw and cost (NaN where the bill has no number)."""
        with self._writing() as conn:
            bill_table.add_bills(conn, account, bills, source_id=source_id)

    def load_bills(self, account: str | None = None) -> pd.DataFrame:
        """Bills of one account or of all, ordered by account and period start."""
        with self._reading() as conn:
            return bill_table.load_bills(conn, account)

    def add_weather(
        self,
        station: str,
        temps_c: pd.Series,
        raw: pd.Series,
        *,
        source_id: int,
        progress: Progress | None = None,
    ) -> None:
        """Store a station's temperatures (°C, UTC index) with the values as read beside them."""
        with self._writing() as conn:
            weather_table.add_weather(
                conn, station, temps_c, raw, source_id=source_id, progress=progress
            )

    def weather_stations(self) -> list[str]:
        """Names of the weather stations in the project."""
        with self._reading() as conn:
            return weather_table.station_names(conn)

    def load_weather(self, station: str | None = None) -> pd.Series:
        """A station's temperatures in °C on a UTC index; the station may be left out when
        the project has only one."""
        with self._reading() as conn:
            return weather_table.load_weather(conn, station)

    def remove_weather(self, station: str) -> None:
        """Delete every temperature of a station."""
        with self._writing() as conn:
            weather_table.remove_station(conn, station)

    # -- cleaning log ---------------------------------------------------------------------

    def add_cleaning_step(self, step: dict) -> int:
        """Append ``{"kind", "meter", "params", "note"}`` to the cleaning log; return its id."""
        with self._writing() as conn:
            return cleaning_table.add_step(conn, step)

    def cleaning_steps(self, meter: str | None = None, active_only: bool = True) -> list[dict]:
        """Cleaning steps in the order they apply (all meters when ``meter`` is None)."""
        with self._reading() as conn:
            return cleaning_table.list_steps(conn, meter, active_only)

    def set_step_active(self, step_id: int, active: bool) -> None:
        """Undo (False) or redo (True) a cleaning step; it stays in the log either way."""
        with self._writing() as conn:
            cleaning_table.set_active(conn, step_id, active)

    def move_cleaning_step(self, step_id: int, index: int) -> None:
        """Move a step to place ``index`` (0-based) among its meter's steps."""
        with self._writing() as conn:
            cleaning_table.move_step(conn, step_id, index)

    def remove_cleaning_step(self, step_id: int) -> None:
        """Delete a cleaning step from the log."""
        with self._writing() as conn:
            cleaning_table.remove_step(conn, step_id)

    def stored_steps(self) -> dict[int, tuple]:
        """Every cleaning step exactly as stored, by id (for taking a change back)."""
        with self._reading() as conn:
            return cleaning_table.stored_rows(conn)

    def put_stored_steps(self, rows: dict[int, tuple | None]) -> None:
        """Make the steps of ``rows`` as :meth:`stored_steps` gave them (None: absent), in one
        save."""
        with self._writing() as conn:
            cleaning_table.put_rows(conn, rows)

    # -- results of analyses --------------------------------------------------------------

    def add_result(self, kind: str, meter: str | None, label: str, body: dict) -> int:
        """Keep a fitted model, backtest or budget run (a JSON document); return its id."""
        with self._writing() as conn:
            return results_table.add_result(conn, kind, meter, label, body)

    def results(self, kind: str, meter: str | None = None) -> list[dict]:
        """Stored results of ``kind`` (for ``meter`` when given), oldest first."""
        with self._reading() as conn:
            return results_table.list_results(conn, kind, meter)

    def last_result(self, kind: str, meter: str | None = None) -> dict | None:
        """The newest result of ``kind`` (for ``meter`` when given), or None; the older
        documents are not read."""
        with self._reading() as conn:
            found = results_table.list_results(conn, kind, meter, last_only=True)
        return found[0] if found else None

    def result_counts(self, kind: str) -> dict[str | None, int]:
        """How many results of ``kind`` each meter has, without reading them (None: results
        of no single meter, such as budgets)."""
        with self._reading() as conn:
            return results_table.count_results(conn, kind)

    def remove_result(self, result_id: int) -> None:
        with self._writing() as conn:
            results_table.remove_result(conn, result_id)

    def stored_result(self, result_id: int) -> tuple:
        """A result exactly as stored (id, kind, meter, label, created_at, JSON text)."""
        with self._reading() as conn:
            return results_table.stored_row(conn, result_id)

    def take_result(self, result_id: int) -> tuple:
        """Remove a result and give it back as stored, for :meth:`put_back_result`."""
        with self._writing() as conn:
            return results_table.take_result(conn, result_id)

    def put_back_result(self, row: tuple) -> None:
        """Store a result taken with :meth:`take_result` again, under its own id."""
        with self._writing() as conn:
            results_table.put_back_result(conn, row)

    # -- budget modelling kept between runs ---------------------------------------------

    def find_kept(self, meter: str, key: str) -> dict | None:
        """The document kept for ``meter`` under ``key`` (see :mod:`engine.steps.kept_models`)."""
        with self._reading() as conn:
            return kept_table.find_kept(conn, meter, key)

    def put_kept(self, meter: str, key: str, body: dict, keep: int) -> None:
        """Keep ``body`` for ``meter`` under ``key``, and only the newest ``keep`` of the meter."""
        with self._writing() as conn:
            kept_table.put_kept(conn, meter, key, body, keep)

    def count_kept(self, meter: str | None = None) -> int:
        with self._reading() as conn:
            return kept_table.count_kept(conn, meter)

    # -- adopted budgets ------------------------------------------------------------------

    def adopt_budget(self, name: str, body: dict, *, replace: bool = False) -> None:
        """Store a budget under ``name`` (:mod:`engine.steps.adopting`); an adopted name is
        replaced only when ``replace``, otherwise refused with an :class:`InputError`."""
        with self._writing() as conn:
            if not replace and adopted_table.find_adopted(conn, name) is not None:
                raise adopted_table.name_taken(name, self.path)
            adopted_table.put_adopted(conn, name, body, replace=replace)

    def adopted_budget(self, name: str) -> dict | None:
        """The budget adopted as ``name`` ({name, adopted_at, body}), or None."""
        with self._reading() as conn:
            return adopted_table.find_adopted(conn, name)

    def adopted_budget_names(self) -> list[str]:
        with self._reading() as conn:
            return adopted_table.adopted_names(conn)

    # -- overview -------------------------------------------------------------------------

    def summary(self) -> dict:
        """What the project holds, JSON-ready, without loading any readings."""
        with self._reading() as conn:
            return {
                "path": str(self.path),
                "format_version": self.format_version,
                "timezone": settings_table.get_setting(conn, settings_table.SITE_TIMEZONE),
                "created_with": settings_table.get_setting(conn, settings_table.CREATED_WITH),
                "written_with": settings_table.get_setting(conn, settings_table.WRITTEN_WITH),
                "meters": summary.meter_overview(conn),
                "bills": summary.bill_overview(conn),
                "weather": summary.weather_overview(conn),
                "cleaning_steps": len(cleaning_table.list_steps(conn)),
                "sources": [
                    {key: value for key, value in source.items() if key != "findings"}
                    | {"finding_count": len(source["findings"])}
                    for source in source_table.list_sources(conn)
                ],
            }


def _this_version() -> str:
    return f"Loadledger {engine.__version__}"
