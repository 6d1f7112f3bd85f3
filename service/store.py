"""Stored pours, their thermocouple readings, statuses and jobs: plain SQL, no ORM.

Two backends with the same guarantees, chosen by the app setting ``DATABASE`` (env
``POURHEAT_DB``): a file path selects SQLite (service/store_sqlite.py, the embedded default),
a ``postgresql://`` URL selects PostgreSQL (service/store_postgres.py, psycopg 3 with a
connection pool). The schema is versioned and migrated on first connection
(service/store_schema.py). A request's connection is opened on first use and kept in
``flask.g`` (the pattern of the Flask tutorial's ``db.py``); the plain functions below take the
connection as their first argument so the CLI, the job runner and tests can use them with
:func:`connect`.

Guarantees, in both backends: every write is one transaction committed before the request is
acknowledged, so an acknowledged upload survives a killed worker; a reading is keyed by (pour,
sensor, instant) and inserted with ``ON CONFLICT DO NOTHING``, so re-posting it, from any
number of instances at once, stores it once.

Times are stored as UTC text of fixed width, ``YYYY-MM-DDTHH:MM:SS.ffffffZ``, so that text
order is time order and the same instant written with different offsets is one key (re-posting
a reading is idempotent). :func:`iso_utc` gives the form used in responses: UTC with ``Z``,
fractional seconds only when present.
"""

import json
import uuid
from dataclasses import dataclass, field
from datetime import UTC, datetime
from typing import Any

from flask import Flask, current_app, g

from service.store_sqlite import SqliteDatabase

Database = Any
"""A backend connection: :class:`SqliteDatabase` or :class:`PostgresDatabase`, with
``dialect``, ``transaction()``, ``all``, ``one``, ``run``, ``insert_new``,
``stored_temperatures`` and ``close``."""
POSTGRES_SCHEMES = ("postgresql://", "postgres://")
SAME_VALUE_C = 1e-9
"""A re-posted reading within this of the stored value is a duplicate, otherwise a conflict."""

HOURS_DECIMALS = 6
"""Hours since placement are returned to 1e-6 h (3.6 ms)."""


def stored_time(moment: datetime) -> str:
    """An aware datetime as stored: UTC, fixed width, microseconds, ``Z``."""
    utc = moment.astimezone(UTC).replace(tzinfo=None)
    return utc.isoformat(timespec="microseconds") + "Z"


def iso_utc(moment: datetime) -> str:
    """An aware datetime as shown in responses: ISO 8601 UTC with ``Z``, seconds unless the time
    has a fraction."""
    utc = moment.astimezone(UTC).replace(tzinfo=None)
    return utc.isoformat(timespec="microseconds" if utc.microsecond else "seconds") + "Z"


def parse_stored(text: str) -> datetime:
    """A stored time back to an aware UTC datetime."""
    return datetime.fromisoformat(text).astimezone(UTC)


def hours_between(start: datetime, end: datetime) -> float:
    """Hours from ``start`` to ``end`` (both aware)."""
    return (end - start).total_seconds() / 3600.0


def is_postgres(url: str) -> bool:
    """Whether a ``DATABASE`` setting names a PostgreSQL database."""
    return url.startswith(POSTGRES_SCHEMES)


def connect(url: str) -> Database:
    """Open the database named by ``url`` (a SQLite file path or a ``postgresql://`` URL),
    migrating its schema if needed. Close it with ``.close()``."""
    if is_postgres(url):
        from service.store_postgres import PostgresDatabase

        return PostgresDatabase(url)
    return SqliteDatabase(url)


def get_db() -> Database:
    """The request's connection, opened on first use."""
    if "db" not in g:
        g.db = connect(current_app.config["DATABASE"])
    return g.db


def close_db(_error: BaseException | None = None) -> None:
    """Close the request's connection, if one was opened."""
    db = g.pop("db", None)
    if db is not None:
        db.close()


def init_app(app: Flask) -> None:
    """Close each request's connection when its app context ends."""
    app.teardown_appcontext(close_db)


def create_pour(db: Database, name: str, placed_at: datetime, scenario: dict) -> str:
    """Store a pour (``placed_at`` aware); returns its new id."""
    pour_id = uuid.uuid4().hex[:12]
    with db.transaction():
        db.run(
            "INSERT INTO pours (id, name, placed_at, placed_at_offset, scenario, created_at)"
            " VALUES (?, ?, ?, ?, ?, ?)",
            (
                pour_id,
                name,
                stored_time(placed_at),
                placed_at.isoformat(),
                json.dumps(scenario),
                stored_time(datetime.now(UTC).replace(microsecond=0)),
            ),
        )
    return pour_id


def _pour(row: Any) -> dict[str, Any]:
    return {
        "id": row["id"],
        "name": row["name"],
        "placed_at": parse_stored(row["placed_at"]),
        "placed_at_local": row["placed_at_offset"],
        "archived": bool(row["archived"]),
        "created_at": parse_stored(row["created_at"]),
    }


def get_pour(db: Database, pour_id: str) -> dict[str, Any] | None:
    """The pour, or None: id, name, placed_at (aware, UTC), placed_at_local (the instant in the
    caller's offset, text), scenario (dict), archived (bool), created_at (aware, UTC)."""
    row = db.one("SELECT * FROM pours WHERE id = ?", (pour_id,))
    if row is None:
        return None
    return {**_pour(row), "scenario": json.loads(row["scenario"])}


def reading_stats(db: Database, pour_id: str) -> tuple[int, datetime | None]:
    """Number of stored readings of a pour and the time of the latest one."""
    row = db.one(
        "SELECT COUNT(*) AS n, MAX(time) AS last FROM readings WHERE pour_id = ?", (pour_id,)
    )
    return row["n"], parse_stored(row["last"]) if row["last"] else None


def list_pours(db: Database, include_archived: bool = False) -> list[dict[str, Any]]:
    """Pours, latest placement first, without their scenarios but with ``readings_count`` and
    ``last_reading_time`` (aware datetime or None)."""
    rows = db.all(
        "SELECT p.*, COALESCE(r.n, 0) AS readings_count, r.last AS last_reading_time"
        " FROM pours p LEFT JOIN (SELECT pour_id, COUNT(*) AS n, MAX(time) AS last"
        " FROM readings GROUP BY pour_id) r ON r.pour_id = p.id"
        " WHERE ? OR p.archived = 0 ORDER BY p.placed_at DESC, p.id",
        (include_archived,),
    )
    return [
        {
            **_pour(row),
            "readings_count": row["readings_count"],
            "last_reading_time": (
                parse_stored(row["last_reading_time"]) if row["last_reading_time"] else None
            ),
        }
        for row in rows
    ]


def archive_pour(db: Database, pour_id: str) -> bool:
    """Mark a pour archived (kept, readable, closed to new readings); False if there is none."""
    with db.transaction():
        changed = db.run("UPDATE pours SET archived = 1 WHERE id = ?", (pour_id,))
    return changed > 0


@dataclass
class UploadResult:
    """What an upload did: rows stored new, rows already stored with the same value, and the
    positions (in the rows given) of rows whose stored value differs, with that value; with
    ``replace`` those were overwritten and are counted in ``replaced``."""

    accepted: int = 0
    duplicates: int = 0
    conflicts: list[tuple[int, float]] = field(default_factory=list)
    replaced: int = 0


def add_readings(
    db: Database,
    pour_id: str,
    rows: list[tuple[datetime, str, float]],
    placed_at: datetime,
    replace: bool = False,
) -> UploadResult:
    """Store (time, sensor, temperature_c) rows in one committed transaction. A row whose
    (sensor, time) is already stored (or repeated within ``rows``) is a duplicate if its value
    is the stored one, otherwise a conflict: left as stored, or overwritten with ``replace``."""
    received_at = stored_time(datetime.now(UTC))
    values = [
        (pour_id, sensor, stored_time(time), hours_between(placed_at, time), temp, received_at)
        for time, sensor, temp in rows
    ]
    result = UploadResult()
    with db.transaction():
        inserted = db.insert_new(
            "INSERT INTO readings (pour_id, sensor, time, hours, temperature_c, received_at)"
            " VALUES (?, ?, ?, ?, ?, ?) ON CONFLICT (pour_id, sensor, time) DO NOTHING",
            values,
        )
        result.accepted = sum(inserted)
        repeated = [i for i, new in enumerate(inserted) if not new]
        stored_c = db.stored_temperatures(pour_id, [values[i][1:3] for i in repeated])
        for index in repeated:
            row = values[index]
            stored = stored_c[row[1:3]]
            if abs(stored - row[4]) <= SAME_VALUE_C:
                result.duplicates += 1
                continue
            result.conflicts.append((index, stored))
            if replace:
                result.replaced += db.run(
                    "UPDATE readings SET temperature_c = ?, received_at = ?"
                    " WHERE pour_id = ? AND sensor = ? AND time = ?",
                    (row[4], received_at, *row[:3]),
                )
    return result


def readings_for(
    db: Database,
    pour_id: str,
    start: datetime | None = None,
    end: datetime | None = None,
    sensor: str | None = None,
) -> list[dict[str, Any]]:
    """Readings of a pour, ordered by time then sensor, optionally in [start, end] and of one
    sensor: dicts of time (ISO 8601 UTC text, ``Z``), sensor, temperature_c, hours (since
    placement, to 1e-6 h)."""
    sql = "SELECT time, sensor, temperature_c, hours FROM readings WHERE pour_id = ?"
    params: list[Any] = [pour_id]
    if start is not None:
        sql += " AND time >= ?"
        params.append(stored_time(start))
    if end is not None:
        sql += " AND time <= ?"
        params.append(stored_time(end))
    if sensor is not None:
        sql += " AND sensor = ?"
        params.append(sensor)
    sql += " ORDER BY time, sensor"
    return [
        {
            "time": iso_utc(parse_stored(row["time"])),
            "sensor": row["sensor"],
            "temperature_c": row["temperature_c"],
            "hours": round(row["hours"], HOURS_DECIMALS),
        }
        for row in db.all(sql, params)
    ]


def save_status(db: Database, pour_id: str, status: dict[str, Any]) -> None:
    """Keep the latest computed status of a pour (replacing the previous one)."""
    with db.transaction():
        db.run(
            "INSERT INTO statuses (pour_id, computed_at, status) VALUES (?, ?, ?)"
            " ON CONFLICT (pour_id) DO UPDATE"
            " SET computed_at = excluded.computed_at, status = excluded.status",
            (pour_id, stored_time(datetime.now(UTC)), json.dumps(status)),
        )


def latest_status(db: Database, pour_id: str) -> dict[str, Any] | None:
    """The latest computed status of a pour with its ``computed_at`` time (ISO, UTC), or None."""
    row = db.one("SELECT computed_at, status FROM statuses WHERE pour_id = ?", (pour_id,))
    if row is None:
        return None
    return {**json.loads(row["status"]), "computed_at": iso_utc(parse_stored(row["computed_at"]))}
