"""The PostgreSQL store backend (``POURHEAT_DB=postgresql://...``): psycopg 3 with a pool.

Each process keeps one connection pool per database URL (made on first use, after gunicorn
has forked its workers); a request borrows a connection and gives it back when its app context
ends. Connections are in autocommit mode and writes go through explicit transactions, so a
write is committed (and, with PostgreSQL's default ``synchronous_commit=on``, flushed to the
WAL) before the request is acknowledged. Statements are written with ``?`` placeholders, as for
SQLite, and translated to psycopg's ``%s`` here.

The schema is migrated when a process first opens a pool, in one transaction holding an
advisory lock, so instances starting at once migrate once.
"""

import os
import threading
from collections.abc import Iterator, Sequence
from contextlib import contextmanager
from typing import Any

from service.store_schema import POSTGRES_TYPES, migrations

POOL_MIN_SIZE = 1
POOL_MAX_SIZE = 8
"""Connections per process; a sync gunicorn worker uses one at a time, plus the job runner."""
POOL_TIMEOUT_S = 10.0
"""How long a request waits for a free connection before failing [s]."""
MIGRATION_LOCK = 0x706F7572
"""Advisory lock key held while migrating ('pour')."""

_pools: dict[tuple[int, str], Any] = {}
_pools_lock = threading.Lock()


def _placeholders(sql: str) -> str:
    return sql.replace("?", "%s")


def _pool(url: str) -> Any:
    """This process's pool for ``url``, opened (and the schema migrated) on first use."""
    key = (os.getpid(), url)
    with _pools_lock:
        pool = _pools.get(key)
        if pool is None:
            from psycopg.rows import dict_row
            from psycopg_pool import ConnectionPool

            pool = ConnectionPool(
                url,
                min_size=POOL_MIN_SIZE,
                max_size=POOL_MAX_SIZE,
                timeout=POOL_TIMEOUT_S,
                kwargs={"autocommit": True, "row_factory": dict_row},
                open=True,
            )
            with pool.connection() as connection:
                _migrate(connection)
            _pools[key] = pool
    return pool


def _migrate(connection: Any) -> None:
    with connection.transaction():
        connection.execute("SELECT pg_advisory_xact_lock(%s)", (MIGRATION_LOCK,))
        connection.execute(
            "CREATE TABLE IF NOT EXISTS schema_version"
            " (version INTEGER PRIMARY KEY, applied_at TEXT NOT NULL)"
        )
        done = connection.execute(
            "SELECT COALESCE(MAX(version), 0) AS v FROM schema_version"
        ).fetchone()["v"]
        for version, statements in migrations(POSTGRES_TYPES):
            if version <= done:
                continue
            for statement in statements:
                connection.execute(statement)
            connection.execute(
                "INSERT INTO schema_version VALUES"
                " (%s, to_char(now() AT TIME ZONE 'UTC', 'YYYY-MM-DD\"T\"HH24:MI:SS.US\"Z\"'))",
                (version,),
            )


def close_pools() -> None:
    """Close this process's pools (tests and shutdown)."""
    with _pools_lock:
        for key in [k for k in _pools if k[0] == os.getpid()]:
            _pools.pop(key).close()


class PostgresDatabase:
    """A connection borrowed from the pool of ``url``; same methods as the SQLite backend."""

    dialect = "postgresql"

    def __init__(self, url: str) -> None:
        self._pool = _pool(url)
        self.connection = self._pool.getconn()

    @contextmanager
    def transaction(self) -> Iterator["PostgresDatabase"]:
        """One transaction, committed on leaving, rolled back on error."""
        with self.connection.transaction():
            yield self

    def all(self, sql: str, params: Sequence[Any] = ()) -> list[Any]:
        """Every row of a query, as dicts."""
        return self.connection.execute(_placeholders(sql), params).fetchall()

    def one(self, sql: str, params: Sequence[Any] = ()) -> Any:
        """The first row of a query, or None."""
        return self.connection.execute(_placeholders(sql), params).fetchone()

    def run(self, sql: str, params: Sequence[Any] = ()) -> int:
        """Execute a statement; returns the number of rows it changed."""
        return self.connection.execute(_placeholders(sql), params).rowcount

    def insert_new(self, sql: str, rows: Sequence[Sequence[Any]]) -> list[bool]:
        """Run an ``INSERT ... ON CONFLICT DO NOTHING`` for each row (pipelined, inside a
        transaction); whether each row was inserted. A row another transaction is inserting
        at the same moment waits for it and then counts as not inserted."""
        with self.connection.cursor() as cursor:
            cursor.executemany(_placeholders(sql) + " RETURNING 1", rows, returning=True)
            inserted = []
            while True:
                inserted.append(cursor.fetchone() is not None)
                if not cursor.nextset():
                    break
        return inserted if rows else []

    def stored_temperatures(
        self, pour_id: str, keys: Sequence[tuple[str, str]]
    ) -> dict[tuple[str, str], float]:
        """Stored temperature_c of a pour's readings by (sensor, stored time), in one query."""
        if not keys:
            return {}
        sensors, times = zip(*set(keys), strict=True)
        rows = self.connection.execute(
            "SELECT sensor, time, temperature_c FROM readings WHERE pour_id = %s"
            " AND (sensor, time) IN (SELECT * FROM unnest(%s::text[], %s::text[]))",
            (pour_id, list(sensors), list(times)),
        ).fetchall()
        return {(r["sensor"], r["time"]): r["temperature_c"] for r in rows}

    def close(self) -> None:
        """Give the connection back to the pool."""
        self._pool.putconn(self.connection)
