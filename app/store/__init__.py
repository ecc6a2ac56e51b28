"""The SQLite store: saved designs and user parts.

``db`` opens connections and migrates the schema; ``designs`` and
``user_parts`` are plain functions taking a connection, so they run the same
on a file or on ``:memory:``. Every write goes through ``db.transaction``.
"""

from app.store.db import Store, connect, migrate, schema_version, transaction

__all__ = ["Store", "connect", "migrate", "schema_version", "transaction"]
