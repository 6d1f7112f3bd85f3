"""The store's schema as numbered migrations, shared by the SQLite and PostgreSQL backends.

Each backend keeps the versions it has applied in a ``schema_version`` table and applies the
missing ones in order, in one transaction, when it first connects (PostgreSQL under an advisory
lock, SQLite under its write lock), so instances starting together migrate once. Never edit a
released migration: add the next one.

Times are stored as UTC text of fixed width, ``YYYY-MM-DDTHH:MM:SS.ffffffZ`` (see
:func:`service.store.stored_time`), in both backends, so that text order is time order.
"""

from collections.abc import Mapping

SQLITE_TYPES = {"float": "REAL", "json": "TEXT"}
POSTGRES_TYPES = {"float": "DOUBLE PRECISION", "json": "TEXT"}


def migrations(types: Mapping[str, str]) -> list[tuple[int, list[str]]]:
    """(version, statements) in order, with the backend's column ``types``."""
    real, json = types["float"], types["json"]
    return [
        (
            1,
            [
                "CREATE TABLE IF NOT EXISTS pours ("
                " id TEXT PRIMARY KEY,"
                " name TEXT NOT NULL,"
                " placed_at TEXT NOT NULL,"  # UTC
                " placed_at_offset TEXT,"  # the instant in the caller's own offset
                f" scenario {json} NOT NULL,"  # as posted
                " created_at TEXT NOT NULL,"
                " archived INTEGER NOT NULL DEFAULT 0)",
                "CREATE TABLE IF NOT EXISTS readings ("
                " pour_id TEXT NOT NULL REFERENCES pours(id),"
                " sensor TEXT NOT NULL,"
                " time TEXT NOT NULL,"  # UTC
                f" hours {real} NOT NULL,"  # since placement
                f" temperature_c {real} NOT NULL,"
                " received_at TEXT NOT NULL,"
                " PRIMARY KEY (pour_id, sensor, time))",
                "CREATE INDEX IF NOT EXISTS readings_by_time ON readings (pour_id, time)",
                "CREATE TABLE IF NOT EXISTS statuses ("
                " pour_id TEXT PRIMARY KEY REFERENCES pours(id),"
                " computed_at TEXT NOT NULL,"
                f" status {json} NOT NULL)",  # the latest GET /v1/pours/<id>/status
            ],
        ),
        (
            2,
            [
                "CREATE TABLE jobs ("
                " id TEXT PRIMARY KEY,"
                " kind TEXT NOT NULL,"  # forecast, plan, comparison, pour_forecast
                " state TEXT NOT NULL,"  # queued, running, done, failed, cancelled
                f" request {json},"  # kind's payload and options; cleared when expired
                " created_at TEXT NOT NULL,"
                " started_at TEXT,"
                " finished_at TEXT,"
                " expires_at TEXT,"  # results kept until then
                " lease_owner TEXT,"  # the runner holding it while running
                " lease_expires_at TEXT,"
                " attempts INTEGER NOT NULL DEFAULT 0,"
                " forecasts_done INTEGER NOT NULL DEFAULT 0,"
                " forecasts_total INTEGER,"
                f" simulated_h {real},"
                f" horizon_h {real},"
                f" result {json},"  # the synchronous call's body
                f" error {json})",  # problem details
                "CREATE INDEX jobs_by_state ON jobs (state, created_at)",
            ],
        ),
    ]
