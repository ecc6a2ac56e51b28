"""Connections, the one write-transaction helper and the ordered migrations.

A migration is a version number and a tuple of statements; once a version
has shipped its statements never change (databases in the field were built
from them), a change is a new version appended to ``MIGRATIONS``.
"""

from __future__ import annotations

import sqlite3
from contextlib import contextmanager
from datetime import datetime, timezone
from pathlib import Path
from typing import Iterator

BUSY_TIMEOUT_MS = 10_000
DB_NAME = "ohmpick.sqlite3"

V1 = (
    """CREATE TABLE designs (
        id TEXT PRIMARY KEY,
        name TEXT NOT NULL,
        notes TEXT NOT NULL DEFAULT '',
        kind TEXT NOT NULL,
        view TEXT NOT NULL DEFAULT 'bench',
        inputs TEXT NOT NULL CHECK (json_valid(inputs)),
        owner_hash TEXT NOT NULL,
        created TEXT NOT NULL,
        updated TEXT NOT NULL
    )""",
    "CREATE INDEX designs_by_created ON designs (created)",
)

# v2: user parts, and a snapshot of the library parts a design names, so a
# design still recomputes after its part is deleted or the library changes.
V2 = (
    "ALTER TABLE designs ADD COLUMN parts TEXT NOT NULL DEFAULT '{}'",
    """CREATE TABLE user_parts (
        id TEXT PRIMARY KEY,
        name TEXT NOT NULL,
        kind TEXT NOT NULL,
        data TEXT NOT NULL CHECK (json_valid(data)),
        created TEXT NOT NULL
    )""",
)

MIGRATIONS: tuple[tuple[int, tuple[str, ...]], ...] = ((1, V1), (2, V2))
LATEST = MIGRATIONS[-1][0]


def now() -> str:
    """UTC time as ISO 8601 text to the second (sorts as text)."""
    return datetime.now(timezone.utc).isoformat(timespec="seconds")


def connect(path: str | Path) -> sqlite3.Connection:
    """A connection in autocommit mode (writes use :func:`transaction`).

    WAL lets readers run beside the one writer; ``synchronous=FULL`` syncs
    every commit, so a design whose save was answered survives a crash or a
    power cut; the busy timeout queues concurrent writers instead of failing.
    """
    conn = sqlite3.connect(str(path), timeout=BUSY_TIMEOUT_MS / 1000, isolation_level=None,
                           check_same_thread=False)
    conn.row_factory = sqlite3.Row
    conn.execute(f"PRAGMA busy_timeout = {BUSY_TIMEOUT_MS}")
    if str(path) != ":memory:":
        conn.execute("PRAGMA journal_mode = WAL")
    conn.execute("PRAGMA synchronous = FULL")
    conn.execute("PRAGMA foreign_keys = ON")
    return conn


@contextmanager
def transaction(conn: sqlite3.Connection) -> Iterator[sqlite3.Connection]:
    """BEGIN IMMEDIATE ... COMMIT, rolled back on any exception.

    IMMEDIATE takes the write lock up front, so two writers never both read
    then collide on upgrade (which SQLite reports as a busy error at once).
    """
    conn.execute("BEGIN IMMEDIATE")
    try:
        yield conn
    except BaseException:
        conn.execute("ROLLBACK")
        raise
    conn.execute("COMMIT")


def schema_version(conn: sqlite3.Connection) -> int:
    has_table = conn.execute(
        "SELECT 1 FROM sqlite_master WHERE type = 'table' AND name = 'schema_version'").fetchone()
    if not has_table:
        return 0
    row = conn.execute("SELECT MAX(version) FROM schema_version").fetchone()
    return int(row[0] or 0)


def migrate(conn: sqlite3.Connection) -> int:
    """Apply the migrations the database lacks, in order, in one transaction."""
    with transaction(conn):
        conn.execute("CREATE TABLE IF NOT EXISTS schema_version (version INTEGER PRIMARY KEY, applied TEXT NOT NULL)")
        current = schema_version(conn)
        if current > LATEST:
            raise RuntimeError(f"the data folder's store is schema version {current}, newer than this "
                               f"program ({LATEST}); use a newer ohmpick or another --data folder")
        for version, statements in MIGRATIONS:
            if version <= current:
                continue
            for sql in statements:
                conn.execute(sql)
            conn.execute("INSERT INTO schema_version (version, applied) VALUES (?, ?)", (version, now()))
    return schema_version(conn)


class Store:
    """The store in a data folder: created and migrated on open.

    Each request opens its own short-lived connection (cheap for SQLite,
    and nothing is shared between threads).
    """

    def __init__(self, data_dir: str | Path):
        self.data_dir = Path(data_dir)
        self.data_dir.mkdir(parents=True, exist_ok=True)
        self.path = self.data_dir / DB_NAME
        with self.connection() as conn:
            self.version = migrate(conn)

    @contextmanager
    def connection(self) -> Iterator[sqlite3.Connection]:
        conn = connect(self.path)
        try:
            yield conn
        finally:
            conn.close()
