"""The SQLite store: connections, migrations, designs and user parts.

The store functions take a connection, so most checks run on ``:memory:``;
the pragmas, the migration from a schema-1 database and concurrent writers
need a real file.
"""

from __future__ import annotations

import json
import sqlite3
import threading

import pytest

from app.parts import ID_PATTERN as PART_ID_PATTERN
from app.parts import Library
from app.store import Store, connect, db, migrate, schema_version, transaction
from app.store import designs, user_parts

# Schema version 1 exactly as it shipped. Databases in the field were built
# from it, so the migration test builds its fixture from this frozen copy, and
# a test below fails if anyone edits version 1 in place instead of adding one.
FROZEN_V1 = (
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

BENCH_INPUTS = {
    "sensor": {"part": "demo-ntc-10k-b3950"},
    "circuit": {"supply_v": 3.3, "sensor_at": "bottom"},
    "range": {"min": 0, "max": 100},
    "objective": "swing",
    "series": "E24",
}


@pytest.fixture
def conn():
    c = connect(":memory:")
    migrate(c)
    yield c
    c.close()


def test_migrations_bring_a_new_database_to_the_latest_version(conn):
    assert schema_version(conn) == db.LATEST == 2
    versions = [r[0] for r in conn.execute("SELECT version FROM schema_version ORDER BY version")]
    assert versions == [1, 2]
    assert migrate(conn) == db.LATEST  # idempotent
    assert [r[0] for r in conn.execute("SELECT version FROM schema_version")] == [1, 2]


def test_version_one_was_never_edited():
    assert db.MIGRATIONS[0] == (1, FROZEN_V1)
    assert [v for v, _ in db.MIGRATIONS] == list(range(1, db.LATEST + 1))


def test_file_store_uses_wal_foreign_keys_full_sync_and_a_busy_timeout(tmp_path):
    store = Store(tmp_path / "nested" / "data")
    assert store.path.is_file()
    with store.connection() as c:
        assert c.execute("PRAGMA journal_mode").fetchone()[0] == "wal"
        assert c.execute("PRAGMA foreign_keys").fetchone()[0] == 1
        assert c.execute("PRAGMA synchronous").fetchone()[0] == 2  # FULL
        assert c.execute("PRAGMA busy_timeout").fetchone()[0] == db.BUSY_TIMEOUT_MS


def test_a_newer_database_than_the_program_is_refused_not_damaged(tmp_path):
    store = Store(tmp_path)
    with store.connection() as c:
        c.execute("INSERT INTO schema_version (version, applied) VALUES (?, ?)", (db.LATEST + 1, db.now()))
    with pytest.raises(RuntimeError, match="newer than this program"):
        Store(tmp_path)


def test_transaction_rolls_back_on_error(conn):
    with pytest.raises(ZeroDivisionError):
        with transaction(conn):
            conn.execute("INSERT INTO user_parts (id, name, kind, data, created) VALUES ('a', 'a', 'rtd', '{}', 'x')")
            1 / 0
    assert conn.execute("SELECT COUNT(*) FROM user_parts").fetchone()[0] == 0
    assert not conn.in_transaction


def test_design_save_get_rename_delete(conn):
    saved, token = designs.save(conn, name="Boiler", notes="trip at 85 °C", kind="NTC", inputs=BENCH_INPUTS)
    assert designs.valid_id(saved.id)
    got = designs.get(conn, saved.id)
    assert got == saved
    assert got.inputs == BENCH_INPUTS and got.view == "bench" and got.parts == {}
    assert designs.rename(conn, saved.id, name="Boiler loop").name == "Boiler loop"
    assert designs.get(conn, saved.id).notes == "trip at 85 °C"  # notes kept when only the name changes
    assert designs.rename(conn, saved.id, notes="").notes == ""
    assert designs.rename(conn, "AAAAAAAAAAAAAAAA", name="x") is None
    assert designs.delete(conn, saved.id) is True
    assert designs.get(conn, saved.id) is None
    assert designs.delete(conn, saved.id) is False


def test_ids_are_random_url_safe_and_at_least_64_bits(conn):
    assert designs.ID_BYTES * 8 >= 64
    ids = {designs.save(conn, name=f"d{i}", kind="k", inputs={})[0].id for i in range(300)}
    assert len(ids) == 300
    for design_id in ids:
        assert len(design_id) == 16 and designs.ID_PATTERN.match(design_id)
    for bad in ("", "short", "A" * 17, "AAAAAAAAAAAAAAA/", "AAAAAAAAAAAAAAA%", "../../etc/passwd"):
        assert not designs.valid_id(bad)
        assert designs.get(conn, bad) is None


def test_only_a_hash_of_the_owner_token_is_stored(tmp_path):
    store = Store(tmp_path)
    with store.connection() as c:
        saved, token = designs.save(c, name="x", kind="k", inputs={})
        row = c.execute("SELECT owner_hash FROM designs WHERE id = ?", (saved.id,)).fetchone()
        assert row[0] == designs.token_hash(token) != token
        assert len(token) >= 32
        assert designs.is_owner(c, saved.id, token)
        for wrong in (None, "", token[:-1], token + "x", designs.token_hash(token)):
            assert not designs.is_owner(c, saved.id, wrong)
        other, other_token = designs.save(c, name="y", kind="k", inputs={})
        assert not designs.is_owner(c, saved.id, other_token)
    raw = b"".join(p.read_bytes() for p in tmp_path.iterdir() if p.is_file())
    assert token.encode() not in raw


def test_list_filters_by_name_newest_first_with_literal_wildcards(conn):
    for name in ("Boiler NTC", "boiler backup", "Dusk LDR", "100% duty", "a_b"):
        designs.save(conn, name=name, kind="k", inputs={})
    names = [d.name for d in designs.list_designs(conn)]
    assert names == ["a_b", "100% duty", "Dusk LDR", "boiler backup", "Boiler NTC"]
    assert [d.name for d in designs.list_designs(conn, "BOILER")] == ["boiler backup", "Boiler NTC"]
    assert [d.name for d in designs.list_designs(conn, "%")] == ["100% duty"]
    assert [d.name for d in designs.list_designs(conn, "_")] == ["a_b"]
    assert designs.list_designs(conn, "nothing like it") == []
    assert designs.count(conn) == 5 and designs.count(conn, "boiler") == 2
    assert [d.name for d in designs.list_designs(conn, limit=2, offset=1)] == ["100% duty", "Dusk LDR"]


def test_user_parts_round_trip_as_library_parts(conn):
    library = Library.load()
    source = library.get("demo-ntc-10k-b3950")
    part_id = user_parts.new_id(conn, "My bead NTC 10 kΩ!")
    assert PART_ID_PATTERN.match(part_id) and part_id.startswith("user-my-bead-ntc-10-k")
    data = {**source.to_dict(), "id": part_id, "name": "My bead NTC"}
    record = user_parts.save(conn, data)
    assert record["origin"] == "user" and record["created"]
    got = user_parts.get(conn, part_id)
    assert got["sensor"] == source.sensor and got["name"] == "My bead NTC"
    part = user_parts.part_of(got)
    assert part.origin == "user" and part.id == part_id and part.sensor == source.sensor
    assert part.tolerances == source.tolerances and part.dissipation_w_per_k == source.dissipation_w_per_k
    with pytest.raises(user_parts.DuplicatePart):
        user_parts.save(conn, data)
    with pytest.raises(ValueError):
        user_parts.save(conn, {**data, "id": "Not A Valid Id"})
    assert [p["id"] for p in user_parts.list_parts(conn)] == [part_id]
    assert user_parts.delete(conn, part_id) and user_parts.get(conn, part_id) is None
    assert not user_parts.delete(conn, part_id)


def test_a_fitted_user_part_keeps_its_range(conn):
    part = Library.load().get("demo-ntc-10k-sh")
    record = user_parts.save(conn, {**part.to_dict(), "id": "user-sh-1"})
    assert user_parts.part_of(record).fitted == part.fitted


def test_concurrent_writers_all_land(tmp_path):
    store = Store(tmp_path)
    errors: list[BaseException] = []

    def writer(n: int) -> None:
        try:
            with store.connection() as c:
                for i in range(25):
                    designs.save(c, name=f"w{n}-{i}", kind="k", inputs={"n": n, "i": i})
        except BaseException as err:  # noqa: BLE001 - reported below
            errors.append(err)

    threads = [threading.Thread(target=writer, args=(n,)) for n in range(8)]
    for t in threads:
        t.start()
    for t in threads:
        t.join()
    assert errors == []
    with store.connection() as c:
        assert designs.count(c) == 200


def test_a_design_saved_before_the_migration_opens_after_it(tmp_path, app_factory):
    """Schema-1 database (frozen DDL) with a design in it; the app migrates it and shows the design."""
    data_dir = tmp_path / "old"
    data_dir.mkdir()
    old = sqlite3.connect(data_dir / db.DB_NAME)
    old.execute("CREATE TABLE schema_version (version INTEGER PRIMARY KEY, applied TEXT NOT NULL)")
    for sql in FROZEN_V1:
        old.execute(sql)
    old.execute("INSERT INTO schema_version VALUES (1, '2024-01-01T00:00:00+00:00')")
    old.execute(
        "INSERT INTO designs (id, name, notes, kind, view, inputs, owner_hash, created, updated)"
        " VALUES (?, ?, ?, ?, 'bench', ?, ?, ?, ?)",
        ("OldDesign_v1-abc", "From schema 1", "kept", "NTC thermistor (beta)", json.dumps(BENCH_INPUTS),
         designs.token_hash("old-token"), "2024-01-01T00:00:00+00:00", "2024-01-01T00:00:00+00:00"),
    )
    old.commit()
    old.close()

    from fastapi.testclient import TestClient

    with TestClient(app_factory(data_dir=data_dir), raise_server_exceptions=False) as client:
        with client.app.state.store.connection() as c:
            assert schema_version(c) == db.LATEST
            columns = {r[1] for r in c.execute("PRAGMA table_info(designs)")}
            assert "parts" in columns
        got = client.get("/api/designs/OldDesign_v1-abc")
        assert got.status_code == 200, got.text
        body = got.json()
        assert body["name"] == "From schema 1" and body["inputs"] == BENCH_INPUTS and body["problem"] is None
        solved = client.post("/api/solve", json=BENCH_INPUTS).json()
        assert body["result"]["fixed_ohm"] == solved["fixed_ohm"]
        assert client.get("/d/OldDesign_v1-abc").status_code == 200
        # the owner token of the old row still works after the migration
        patched = client.patch("/api/designs/OldDesign_v1-abc", json={"notes": "still mine"},
                               headers={"X-Owner-Token": "old-token"})
        assert patched.status_code == 200 and patched.json()["notes"] == "still mine"
