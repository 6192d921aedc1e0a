"""A JSON-ready overview of what a project holds, computed in SQL without loading readings."""

from __future__ import annotations

import sqlite3

from engine.project.columns import iso_utc


def meter_overview(conn: sqlite3.Connection) -> list[dict]:
    """Per meter: description, first/last interval start (UTC), readings with a value, kWh."""
    rows = conn.execute(
        "SELECT m.name, m.utility, m.unit_found, m.interval_s, min(r.t), max(r.t), "
        "count(r.kwh), sum(r.kwh) FROM meters AS m LEFT JOIN readings AS r ON r.meter_id = m.id "
        "GROUP BY m.id ORDER BY m.id"
    ).fetchall()
    return [
        {
            "name": name,
            "utility": utility,
            "unit_found": unit_found,
            "interval_minutes": interval_s / 60,
            "first": iso_utc(first),
            "last": iso_utc(last),
            "count": count,
            "total_kwh": total,
        }
        for name, utility, unit_found, interval_s, first, last, count, total in rows
    ]


def bill_overview(conn: sqlite3.Connection) -> list[dict]:
    """Per account: number of bills, first period start, last period end, totals.

    Totals skip bills without the number; the ``bills_without_*`` counts say how many.
    """
    rows = conn.execute(
        "SELECT account, count(*), min(period_start), max(period_end), sum(quantity_kwh), "
        "count(*) - count(quantity_kwh), sum(cost), count(*) - count(cost) "
        "FROM bills GROUP BY account ORDER BY account"
    ).fetchall()
    return [
        {
            "account": account,
            "count": count,
            "first_period_start": first,
            "last_period_end": last,
            "total_kwh": total_kwh,
            "bills_without_kwh": without_kwh,
            "total_cost": total_cost,
            "bills_without_cost": without_cost,
        }
        for account, count, first, last, total_kwh, without_kwh, total_cost, without_cost in rows
    ]


def weather_overview(conn: sqlite3.Connection) -> list[dict]:
    """Per station: first/last time (UTC) and how many temperatures it has."""
    rows = conn.execute(
        "SELECT station, min(t), max(t), count(temp_c) FROM weather GROUP BY station "
        "ORDER BY station"
    ).fetchall()
    return [
        {"station": station, "first": iso_utc(first), "last": iso_utc(last), "count": count}
        for station, first, last, count in rows
    ]
