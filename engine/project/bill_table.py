"""Utility bills: one row per billing period and account, as printed on the bill."""

from __future__ import annotations

import sqlite3

import pandas as pd

from engine.project.columns import calendar_dates, dates_from_iso, fetch_columns, float_values
from engine.project.source_table import require_source

#: Columns a bills table passed to :func:`add_bills` has, in stored order.
BILL_COLUMNS = (
    "period_start",
    "period_end",
    "quantity_kwh",
    "raw_quantity",
    "unit_found",
    "peak_kw",
    "cost",
)
_STORED = ("account", *BILL_COLUMNS, "source_id")
_FETCHED_AS = (
    "object",
    "object",
    "object",
    "float64",
    "float64",
    "object",
    "float64",
    "float64",
    "int64",
)
_NUMBERS = ("quantity_kwh", "raw_quantity", "peak_kw", "cost")


def add_bills(
    conn: sqlite3.Connection, account: str, bills: pd.DataFrame, *, source_id: int
) -> None:
    """Store an account's billing periods; missing numbers (NaN) are kept as missing."""
    what = f"bills of account '{account}'"
    if not isinstance(account, str) or not account:
        raise ValueError("bills need a non-empty account name")
    if set(bills.columns) != set(BILL_COLUMNS):
        raise ValueError(f"{what} need the columns {BILL_COLUMNS}, got {list(bills.columns)}")
    column = {
        "account": [account] * len(bills),
        "period_start": calendar_dates(bills["period_start"], f"{what}: period_start"),
        "period_end": calendar_dates(bills["period_end"], f"{what}: period_end"),
        "unit_found": bills["unit_found"],
        "source_id": [source_id] * len(bills),
    }
    if (column["period_end"] < column["period_start"]).any():
        raise ValueError(f"{what}: a billing period ends before it starts")
    if column["unit_found"].isna().any():
        raise ValueError(f"{what}: unit_found is missing on some rows")
    column["unit_found"] = column["unit_found"].astype(str).tolist()
    for name in _NUMBERS:
        column[name] = float_values(bills[name], f"{what}: {name}").tolist()
    require_source(conn, source_id)
    conn.executemany(
        f"INSERT INTO bills ({', '.join(_STORED)}) VALUES ({', '.join('?' * len(_STORED))})",
        zip(*(list(column[name]) for name in _STORED), strict=True),
    )


def load_bills(conn: sqlite3.Connection, account: str | None = None) -> pd.DataFrame:
    """Bills of one account (or all), ordered by account and period start.

    Columns: account, the :data:`BILL_COLUMNS` (periods as naive midnight datetimes) and
    source_id.
    """
    where, params = ("WHERE account = ?", (account,)) if account is not None else ("", ())
    columns = fetch_columns(
        conn.execute(
            f"SELECT {', '.join(_STORED)} FROM bills {where} ORDER BY account, period_start, id",
            params,
        ),
        _FETCHED_AS,
    )
    if account is not None and not len(columns[0]):
        raise KeyError(f"no bills for account {account!r} in the project")
    frame = pd.DataFrame(dict(zip(_STORED, columns, strict=True)))
    for name in ("account", "unit_found"):
        frame[name] = frame[name].astype("str")
    for name in ("period_start", "period_end"):
        frame[name] = dates_from_iso(frame[name].to_numpy())
    return frame
