"""User parts: parts people add in the app, kept beside the TOML library.

A part is stored as the JSON of ``Part.to_dict()``; ``part_of`` turns a
stored record back into a validated :class:`~app.parts.Part` with origin
``"user"``. Ids follow the library's id rule (lowercase, URL-safe), made
unique with a random suffix so two people naming a part alike never clash.
"""

from __future__ import annotations

import json
import re
import secrets
import sqlite3
from typing import Any, Optional

from app.parts import ID_PATTERN, Part, part_from_mapping
from app.store.db import now, transaction

PART_FIELDS = ("name", "notes", "sensor", "tolerances", "dissipation_w_per_k", "fitted")


class DuplicatePart(ValueError):
    def __init__(self, part_id: str):
        super().__init__(f"a user part with id {part_id!r} exists")
        self.part_id = part_id


def slug(text: str, limit: int = 40) -> str:
    out = re.sub(r"[^a-z0-9]+", "-", text.lower()).strip("-")[:limit].strip("-")
    return out or "part"


def new_id(conn: sqlite3.Connection, name: str) -> str:
    """``user-<slug of name>-<8 hex>``, unused in the store; matches the library id rule."""
    for _ in range(10):
        part_id = f"user-{slug(name)}-{secrets.token_hex(4)}"
        if conn.execute("SELECT 1 FROM user_parts WHERE id = ?", (part_id,)).fetchone() is None:
            return part_id
    raise RuntimeError("could not find a free part id")


def save(conn: sqlite3.Connection, part: dict[str, Any]) -> dict[str, Any]:
    """Store a part dict (``Part.to_dict()``, with its ``id``); returns the record with ``created``."""
    part_id = part.get("id")
    if not isinstance(part_id, str) or not ID_PATTERN.match(part_id):
        raise ValueError("a user part needs an id of lowercase letters, digits, '-' or '_'")
    data = {**part, "origin": "user"}
    record = {**data, "created": now()}
    try:
        with transaction(conn):
            conn.execute(
                "INSERT INTO user_parts (id, name, kind, data, created) VALUES (?, ?, ?, ?, ?)",
                (part_id, str(data["name"]), str(data["kind"]),
                 json.dumps(data, ensure_ascii=False, allow_nan=False), record["created"]),
            )
    except sqlite3.IntegrityError:
        raise DuplicatePart(part_id) from None
    return record


def _record(row: sqlite3.Row) -> dict[str, Any]:
    return {**json.loads(row["data"]), "id": row["id"], "created": row["created"]}


def get(conn: sqlite3.Connection, part_id: str) -> Optional[dict[str, Any]]:
    row = conn.execute("SELECT * FROM user_parts WHERE id = ?", (part_id,)).fetchone()
    return _record(row) if row else None


def list_parts(conn: sqlite3.Connection) -> list[dict[str, Any]]:
    rows = conn.execute("SELECT * FROM user_parts ORDER BY created, rowid").fetchall()
    return [_record(r) for r in rows]


def delete(conn: sqlite3.Connection, part_id: str) -> bool:
    with transaction(conn):
        return conn.execute("DELETE FROM user_parts WHERE id = ?", (part_id,)).rowcount > 0


def part_of(record: dict[str, Any]) -> Part:
    """A stored record as a validated Part (raises InputError if the rules changed)."""
    fields = {k: record[k] for k in PART_FIELDS if record.get(k) is not None}
    if not fields.get("tolerances"):
        fields.pop("tolerances", None)
    return part_from_mapping(record["id"], fields, origin="user")
