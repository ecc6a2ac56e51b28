"""Saved designs: functions taking a connection.

A design row holds the inputs exactly as saved (JSON), never a computed
result: pages and the API recompute from the inputs, so a saved design
always shows what the current code makes of it. Only a hash of the owner
token is kept; the token itself goes back to the person who saved it once.
"""

from __future__ import annotations

import hashlib
import hmac
import json
import re
import secrets
import sqlite3
from dataclasses import dataclass, field
from typing import Any, Optional

from app.store.db import now, transaction

ID_BYTES = 12          # 96 random bits, 16 URL-safe characters
TOKEN_BYTES = 24       # 192 random bits
ID_PATTERN = re.compile(r"^[A-Za-z0-9_-]{16}$")
MAX_LIST = 500


@dataclass(frozen=True)
class Design:
    id: str
    name: str
    notes: str
    kind: str
    view: str
    inputs: dict[str, Any]
    created: str
    updated: str
    parts: dict[str, Any] = field(default_factory=dict)

    def summary(self) -> dict[str, Any]:
        return {"id": self.id, "name": self.name, "notes": self.notes, "kind": self.kind,
                "view": self.view, "created": self.created, "updated": self.updated}


def new_id() -> str:
    return secrets.token_urlsafe(ID_BYTES)


def valid_id(design_id: str) -> bool:
    return bool(ID_PATTERN.match(design_id or ""))


def token_hash(token: str) -> str:
    return hashlib.sha256(token.encode("utf-8")).hexdigest()


def _row(row: sqlite3.Row) -> Design:
    keys = row.keys()
    return Design(
        id=row["id"], name=row["name"], notes=row["notes"], kind=row["kind"], view=row["view"],
        inputs=json.loads(row["inputs"]), created=row["created"], updated=row["updated"],
        parts=json.loads(row["parts"]) if "parts" in keys else {},
    )


def save(conn: sqlite3.Connection, *, name: str, inputs: dict[str, Any], kind: str, notes: str = "",
         view: str = "bench", parts: Optional[dict[str, Any]] = None) -> tuple[Design, str]:
    """Insert a design; returns it and its owner token (shown once, stored hashed)."""
    token = secrets.token_urlsafe(TOKEN_BYTES)
    stamp = now()
    text = json.dumps(inputs, ensure_ascii=False, allow_nan=False, separators=(",", ":"))
    parts_text = json.dumps(parts or {}, ensure_ascii=False, allow_nan=False, separators=(",", ":"))
    with transaction(conn):
        for _ in range(5):  # a 96-bit collision is not going to happen; cheap to be sure
            design_id = new_id()
            if conn.execute("SELECT 1 FROM designs WHERE id = ?", (design_id,)).fetchone() is None:
                break
        conn.execute(
            "INSERT INTO designs (id, name, notes, kind, view, inputs, owner_hash, created, updated, parts)"
            " VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?)",
            (design_id, name, notes, kind, view, text, token_hash(token), stamp, stamp, parts_text),
        )
    design = Design(design_id, name, notes, kind, view, json.loads(text), stamp, stamp, json.loads(parts_text))
    return design, token


def get(conn: sqlite3.Connection, design_id: str) -> Optional[Design]:
    if not valid_id(design_id):
        return None
    row = conn.execute("SELECT * FROM designs WHERE id = ?", (design_id,)).fetchone()
    return _row(row) if row else None


def _like(text: str) -> str:
    return "%" + re.sub(r"([\\%_])", r"\\\1", text) + "%"


def list_designs(conn: sqlite3.Connection, name: str = "", limit: int = 200, offset: int = 0) -> list[Design]:
    """Newest first; ``name`` filters by a case-insensitive substring of the name."""
    limit = max(1, min(int(limit), MAX_LIST))
    rows = conn.execute(
        "SELECT * FROM designs WHERE name LIKE ? ESCAPE '\\' ORDER BY created DESC, rowid DESC LIMIT ? OFFSET ?",
        (_like(name.strip()), limit, max(0, int(offset))),
    ).fetchall()
    return [_row(r) for r in rows]


def count(conn: sqlite3.Connection, name: str = "") -> int:
    return conn.execute("SELECT COUNT(*) FROM designs WHERE name LIKE ? ESCAPE '\\'", (_like(name.strip()),)).fetchone()[0]


def is_owner(conn: sqlite3.Connection, design_id: str, token: Optional[str]) -> bool:
    """Constant-time check of an owner token against the stored hash."""
    if not token or not valid_id(design_id):
        return False
    row = conn.execute("SELECT owner_hash FROM designs WHERE id = ?", (design_id,)).fetchone()
    return row is not None and hmac.compare_digest(row["owner_hash"], token_hash(token))


def rename(conn: sqlite3.Connection, design_id: str, name: Optional[str] = None,
           notes: Optional[str] = None) -> Optional[Design]:
    """Change the name and/or notes; None if there is no such design."""
    with transaction(conn):
        row = conn.execute("SELECT * FROM designs WHERE id = ?", (design_id,)).fetchone()
        if row is None:
            return None
        conn.execute(
            "UPDATE designs SET name = ?, notes = ?, updated = ? WHERE id = ?",
            (row["name"] if name is None else name, row["notes"] if notes is None else notes, now(), design_id),
        )
    return get(conn, design_id)


def delete(conn: sqlite3.Connection, design_id: str) -> bool:
    with transaction(conn):
        return conn.execute("DELETE FROM designs WHERE id = ?", (design_id,)).rowcount > 0
