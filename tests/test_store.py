"""The store's schema versions and migrations, on both backends."""

import sqlite3
from contextlib import closing
from datetime import UTC, datetime

import pytest

from service import store
from service.store_schema import SQLITE_TYPES, migrations

LATEST = migrations(SQLITE_TYPES)[-1][0]

PRE_VERSIONING_SCHEMA = """
CREATE TABLE pours (id TEXT PRIMARY KEY, name TEXT NOT NULL, placed_at TEXT NOT NULL,
    placed_at_offset TEXT, scenario TEXT NOT NULL, created_at TEXT NOT NULL,
    archived INTEGER NOT NULL DEFAULT 0);
CREATE TABLE readings (pour_id TEXT NOT NULL REFERENCES pours(id), sensor TEXT NOT NULL,
    time TEXT NOT NULL, hours REAL NOT NULL, temperature_c REAL NOT NULL,
    received_at TEXT NOT NULL, PRIMARY KEY (pour_id, sensor, time));
CREATE INDEX readings_by_time ON readings (pour_id, time);
CREATE TABLE statuses (pour_id TEXT PRIMARY KEY REFERENCES pours(id),
    computed_at TEXT NOT NULL, status TEXT NOT NULL);
INSERT INTO pours VALUES ('p1', 'Old mat', '2026-01-05T07:00:00.000000Z', '2026-01-05T07:00:00Z',
    '{}', '2026-01-05T08:00:00.000000Z', 0);
INSERT INTO readings VALUES ('p1', 'S1', '2026-01-05T08:00:00.000000Z', 1.0, 21.5,
    '2026-01-05T08:00:01.000000Z');
"""
"""A file as the store made it before its schema was versioned (no schema_version, no jobs)."""


def test_schema_is_created_at_the_latest_version_once(database_url):
    for _ in range(2):  # a second connection finds it current and applies nothing
        db = store.connect(database_url)
        try:
            versions = [r["version"] for r in db.all("SELECT version FROM schema_version")]
            assert versions == list(range(1, LATEST + 1))
            assert db.one("SELECT COUNT(*) AS n FROM jobs")["n"] == 0
        finally:
            db.close()


def test_a_file_from_before_versioning_is_migrated_keeping_its_data(tmp_path):
    path = str(tmp_path / "old.sqlite3")
    with closing(sqlite3.connect(path)) as old:
        old.executescript(PRE_VERSIONING_SCHEMA)
    db = store.connect(path)
    try:
        assert db.one("SELECT MAX(version) AS v FROM schema_version")["v"] == LATEST
        pour = store.get_pour(db, "p1")
        assert pour is not None and pour["name"] == "Old mat"
        assert store.readings_for(db, "p1")[0]["temperature_c"] == 21.5
        placed = datetime(2026, 1, 5, 7, tzinfo=UTC)
        done = store.add_readings(db, "p1", [(datetime(2026, 1, 5, 8, tzinfo=UTC), "S1", 21.5)],
                                  placed)  # fmt: skip
        assert (done.accepted, done.duplicates) == (0, 1)
    finally:
        db.close()


@pytest.mark.parametrize("database_url", ["sqlite"], indirect=True)
def test_a_newer_schema_is_left_alone(database_url):
    """A database migrated by a newer release (a version this code does not know) is opened
    without re-applying or failing on anything."""
    db = store.connect(database_url)
    try:
        with db.transaction():
            db.run("INSERT INTO schema_version VALUES (?, ?)", (LATEST + 1, "later"))
    finally:
        db.close()
    db = store.connect(database_url)
    try:
        assert db.one("SELECT MAX(version) AS v FROM schema_version")["v"] == LATEST + 1
    finally:
        db.close()
