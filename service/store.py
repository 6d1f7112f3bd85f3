"""Stored pours and their thermocouple readings: stdlib sqlite3, no ORM.

One SQLite file (app config ``DATABASE``, env ``POURHEAT_DB``) opened once per request and kept
in ``flask.g`` (the pattern of the Flask tutorial's ``db.py``); the plain functions below take
the connection as their first argument so the CLI and other code can use them with
:func:`connect`.

Settings of every connection:

- ``journal_mode=WAL``: readers never block the writer, so dashboards can read while a logger
  uploads; several gunicorn workers share the file.
- ``synchronous=FULL``: a commit is fsynced to the WAL before the request is acknowledged. A
  200 on an upload tells the gateway it may discard its copy; with NORMAL a committed upload
  survives a process crash but may be lost on a power cut or OS crash. The cost is one fsync
  per upload (one transaction however many rows), which is small at logger rates.
- ``busy_timeout=5000``: concurrent writers wait up to 5 s for the lock instead of failing.
- ``foreign_keys=ON``: a reading always belongs to a stored pour.

Times are stored as UTC text of fixed width, ``YYYY-MM-DDTHH:MM:SS.ffffffZ``, so that text
order is time order and the same instant written with different offsets is one key (re-posting
a reading is idempotent). :func:`iso_utc` gives the form used in responses: UTC with ``Z``,
fractional seconds only when present.
"""

import json
import sqlite3
import uuid
from collections.abc import Iterator
from contextlib import contextmanager
from datetime import UTC, datetime
from typing import Any

from flask import Flask, current_app, g

SCHEMA = """
CREATE TABLE IF NOT EXISTS pours (
    id TEXT PRIMARY KEY,
    name TEXT NOT NULL,
    placed_at TEXT NOT NULL,            -- UTC ISO 8601
    placed_at_offset TEXT,              -- the instant in the caller's own offset
    scenario TEXT NOT NULL,             -- JSON, as posted
    created_at TEXT NOT NULL,
    archived INTEGER NOT NULL DEFAULT 0
);
CREATE TABLE IF NOT EXISTS readings (
    pour_id TEXT NOT NULL REFERENCES pours(id),
    sensor TEXT NOT NULL,
    time TEXT NOT NULL,                 -- UTC ISO 8601
    hours REAL NOT NULL,                -- since placement
    temperature_c REAL NOT NULL,
    received_at TEXT NOT NULL,
    PRIMARY KEY (pour_id, sensor, time)
);
CREATE INDEX IF NOT EXISTS readings_by_time ON readings (pour_id, time);
CREATE TABLE IF NOT EXISTS statuses (
    pour_id TEXT PRIMARY KEY REFERENCES pours(id),
    computed_at TEXT NOT NULL,          -- UTC ISO 8601
    status TEXT NOT NULL                -- JSON, the latest GET /v1/pours/<id>/status
);
"""
SCHEMA_LAST_OBJECT = "statuses"
"""The schema is (re)applied, idempotently, when this table is missing."""

BUSY_TIMEOUT_MS = 5000
"""How long a connection waits for another writer's lock [ms]."""


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


def connect(path: str) -> sqlite3.Connection:
    """Open the database at ``path`` with the settings above, creating the schema if needed.

    The connection is in autocommit mode; writes go through explicit transactions.
    """
    db = sqlite3.connect(path, timeout=BUSY_TIMEOUT_MS / 1000, isolation_level=None)
    db.row_factory = sqlite3.Row
    # busy_timeout first: switching a new file to WAL needs a lock another worker may hold
    db.execute(f"PRAGMA busy_timeout={BUSY_TIMEOUT_MS}")
    db.execute("PRAGMA journal_mode=WAL")
    db.execute("PRAGMA synchronous=FULL")
    db.execute("PRAGMA foreign_keys=ON")
    found = db.execute("SELECT 1 FROM sqlite_master WHERE name = ?", (SCHEMA_LAST_OBJECT,))
    if found.fetchone() is None:
        db.executescript(SCHEMA)
    return db


def get_db() -> sqlite3.Connection:
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


@contextmanager
def _write(db: sqlite3.Connection) -> Iterator[sqlite3.Connection]:
    """One write transaction, taken with the write lock up front (no lock upgrade deadlock)."""
    db.execute("BEGIN IMMEDIATE")
    try:
        yield db
    except BaseException:
        db.execute("ROLLBACK")
        raise
    db.execute("COMMIT")


def create_pour(db: sqlite3.Connection, name: str, placed_at: datetime, scenario: dict) -> str:
    """Store a pour (``placed_at`` aware); returns its new id."""
    pour_id = uuid.uuid4().hex[:12]
    with _write(db):
        db.execute(
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


def _pour(row: sqlite3.Row) -> dict[str, Any]:
    return {
        "id": row["id"],
        "name": row["name"],
        "placed_at": parse_stored(row["placed_at"]),
        "placed_at_local": row["placed_at_offset"],
        "archived": bool(row["archived"]),
        "created_at": parse_stored(row["created_at"]),
    }


def get_pour(db: sqlite3.Connection, pour_id: str) -> dict[str, Any] | None:
    """The pour, or None: id, name, placed_at (aware, UTC), placed_at_local (the instant in the
    caller's offset, text), scenario (dict), archived (bool), created_at (aware, UTC)."""
    row = db.execute("SELECT * FROM pours WHERE id = ?", (pour_id,)).fetchone()
    if row is None:
        return None
    return {**_pour(row), "scenario": json.loads(row["scenario"])}


def reading_stats(db: sqlite3.Connection, pour_id: str) -> tuple[int, datetime | None]:
    """Number of stored readings of a pour and the time of the latest one."""
    count, last = db.execute(
        "SELECT COUNT(*), MAX(time) FROM readings WHERE pour_id = ?", (pour_id,)
    ).fetchone()
    return count, parse_stored(last) if last else None


def list_pours(db: sqlite3.Connection, include_archived: bool = False) -> list[dict[str, Any]]:
    """Pours, latest placement first, without their scenarios but with ``readings_count`` and
    ``last_reading_time`` (aware datetime or None)."""
    rows = db.execute(
        "SELECT p.*, COALESCE(r.n, 0) AS readings_count, r.last AS last_reading_time"
        " FROM pours p LEFT JOIN (SELECT pour_id, COUNT(*) AS n, MAX(time) AS last"
        " FROM readings GROUP BY pour_id) r ON r.pour_id = p.id"
        " WHERE ? OR p.archived = 0 ORDER BY p.placed_at DESC, p.id",
        (include_archived,),
    ).fetchall()
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


def archive_pour(db: sqlite3.Connection, pour_id: str) -> bool:
    """Mark a pour archived (kept, readable, closed to new readings); False if there is none."""
    with _write(db):
        cursor = db.execute("UPDATE pours SET archived = 1 WHERE id = ?", (pour_id,))
    return cursor.rowcount > 0


def add_readings(
    db: sqlite3.Connection,
    pour_id: str,
    rows: list[tuple[datetime, str, float]],
    placed_at: datetime,
) -> tuple[int, int]:
    """Store (time, sensor, temperature_c) rows in one committed transaction; a row whose
    (sensor, time) is already stored is left as it was. Returns (accepted, duplicates)."""
    received_at = stored_time(datetime.now(UTC))
    values = [
        (pour_id, sensor, stored_time(time), hours_between(placed_at, time), temp, received_at)
        for time, sensor, temp in rows
    ]
    with _write(db):
        before = db.total_changes
        db.executemany(
            "INSERT OR IGNORE INTO readings"
            " (pour_id, sensor, time, hours, temperature_c, received_at)"
            " VALUES (?, ?, ?, ?, ?, ?)",
            values,
        )
        accepted = db.total_changes - before
    return accepted, len(values) - accepted


def readings_for(
    db: sqlite3.Connection,
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
        for row in db.execute(sql, params)
    ]


def save_status(db: sqlite3.Connection, pour_id: str, status: dict[str, Any]) -> None:
    """Keep the latest computed status of a pour (replacing the previous one)."""
    with _write(db):
        db.execute(
            "INSERT OR REPLACE INTO statuses (pour_id, computed_at, status) VALUES (?, ?, ?)",
            (pour_id, stored_time(datetime.now(UTC)), json.dumps(status)),
        )


def latest_status(db: sqlite3.Connection, pour_id: str) -> dict[str, Any] | None:
    """The latest computed status of a pour with its ``computed_at`` time (ISO, UTC), or None."""
    row = db.execute(
        "SELECT computed_at, status FROM statuses WHERE pour_id = ?", (pour_id,)
    ).fetchone()
    if row is None:
        return None
    return {**json.loads(row["status"]), "computed_at": iso_utc(parse_stored(row["computed_at"]))}
