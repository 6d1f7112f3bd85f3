"""The embedded store backend: one SQLite file through the standard library's sqlite3.

Settings of every connection:

- ``journal_mode=WAL``: readers never block the writer, so dashboards can read while a logger
  uploads; several gunicorn workers share the file.
- ``synchronous=FULL``: a commit is fsynced to the WAL before the request is acknowledged. A
  200 on an upload tells the gateway it may discard its copy; with NORMAL a committed upload
  survives a process crash but may be lost on a power cut or OS crash. The cost is one fsync
  per upload (one transaction however many rows), which is small at logger rates.
- ``busy_timeout=5000``: concurrent writers wait up to 5 s for the lock instead of failing.
- ``foreign_keys=ON``: a reading always belongs to a stored pour.

Write transactions take the write lock up front (``BEGIN IMMEDIATE``), so one writer at a time
runs its reads and writes with nothing changing underneath (no lock-upgrade deadlock).
"""

import sqlite3
from collections.abc import Iterator, Sequence
from contextlib import contextmanager
from typing import Any

from service.store_schema import SQLITE_TYPES, migrations

BUSY_TIMEOUT_MS = 5000
"""How long a connection waits for another writer's lock [ms]."""


class SqliteDatabase:
    """A connection to the SQLite file at ``path``; statements use ``?`` placeholders."""

    dialect = "sqlite"

    def __init__(self, path: str) -> None:
        db = sqlite3.connect(path, timeout=BUSY_TIMEOUT_MS / 1000, isolation_level=None)
        db.row_factory = sqlite3.Row
        # busy_timeout first: switching a new file to WAL needs a lock another worker may hold
        db.execute(f"PRAGMA busy_timeout={BUSY_TIMEOUT_MS}")
        db.execute("PRAGMA journal_mode=WAL")
        db.execute("PRAGMA synchronous=FULL")
        db.execute("PRAGMA foreign_keys=ON")
        self.connection = db
        self._migrate()

    def _migrate(self) -> None:
        """Bring the schema to the latest version; versions applied are kept in
        ``schema_version`` (a file made before versioning counts as version 0)."""
        steps = migrations(SQLITE_TYPES)
        latest = steps[-1][0]
        if self._version() >= latest:  # the usual case: no write lock taken
            return
        with self.transaction():
            self.connection.execute(
                "CREATE TABLE IF NOT EXISTS schema_version"
                " (version INTEGER PRIMARY KEY, applied_at TEXT NOT NULL)"
            )
            done = self.one("SELECT COALESCE(MAX(version), 0) AS v FROM schema_version")["v"]
            for version, statements in steps:
                if version <= done:
                    continue
                for statement in statements:
                    self.connection.execute(statement)
                self.connection.execute(
                    "INSERT INTO schema_version VALUES (?, strftime('%Y-%m-%dT%H:%M:%fZ'))",
                    (version,),
                )

    def _version(self) -> int:
        if self.one("SELECT 1 FROM sqlite_master WHERE name = 'schema_version'") is None:
            return 0
        return self.one("SELECT COALESCE(MAX(version), 0) AS v FROM schema_version")["v"]

    @contextmanager
    def transaction(self) -> Iterator["SqliteDatabase"]:
        """One write transaction, committed (fsynced) on leaving, rolled back on error."""
        self.connection.execute("BEGIN IMMEDIATE")
        try:
            yield self
        except BaseException:
            self.connection.execute("ROLLBACK")
            raise
        self.connection.execute("COMMIT")

    def all(self, sql: str, params: Sequence[Any] = ()) -> list[Any]:
        """Every row of a query (rows are indexed by column name)."""
        return self.connection.execute(sql, params).fetchall()

    def one(self, sql: str, params: Sequence[Any] = ()) -> Any:
        """The first row of a query, or None."""
        return self.connection.execute(sql, params).fetchone()

    def run(self, sql: str, params: Sequence[Any] = ()) -> int:
        """Execute a statement; returns the number of rows it changed."""
        return self.connection.execute(sql, params).rowcount

    def insert_new(self, sql: str, rows: Sequence[Sequence[Any]]) -> list[bool]:
        """Run an ``INSERT ... ON CONFLICT DO NOTHING`` for each row (inside a transaction);
        whether each row was inserted."""
        execute = self.connection.execute
        return [execute(sql, row).rowcount == 1 for row in rows]

    def stored_temperatures(
        self, pour_id: str, keys: Sequence[tuple[str, str]]
    ) -> dict[tuple[str, str], float]:
        """Stored temperature_c of a pour's readings by (sensor, stored time)."""
        query = "SELECT temperature_c FROM readings WHERE pour_id = ? AND sensor = ? AND time = ?"
        execute = self.connection.execute
        return {key: execute(query, (pour_id, *key)).fetchone()[0] for key in set(keys)}

    def close(self) -> None:
        """Close the connection."""
        self.connection.close()
