"""Every schema change, numbered, each applied in the same transaction that records it, so
a store is never left half-migrated. A new change is a new entry; old entries never change.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass
from typing import Any

import sqlalchemy as sa
from sqlalchemy.engine import Connection

from linktriage.engine.format.packs import pack, upgraded
from linktriage.engine.format.poll_table import PollTable
from linktriage.engine.format.snapshot import read_snapshots
from linktriage.errors import StoreError
from linktriage.store.schema import (
    audit_table,
    diagnoses_table,
    digests_table,
    job_runs_table,
    labels_table,
    leases_table,
    metadata,
    outbox_table,
    polls_table,
    seen_requests_table,
)


@dataclass(frozen=True, slots=True)
class Migration:
    version: int
    description: str
    apply: Callable[[Connection], None]


def _initial_schema(conn: Connection) -> None:
    metadata.create_all(conn, tables=[diagnoses_table, labels_table, digests_table, audit_table])
    # Version 1 kept polls as JSON lines; version 3 packs them (and converts these).
    conn.exec_driver_sql(
        "CREATE TABLE polls (id INTEGER PRIMARY KEY, device TEXT NOT NULL, "
        "port TEXT NOT NULL, time FLOAT NOT NULL, line TEXT NOT NULL)"
    )


def _answer_context(conn: Connection) -> None:
    # Version 1 tables are created from today's metadata, so a new store has the columns.
    have = {column["name"] for column in sa.inspect(conn).get_columns("diagnoses")}
    for name in ("site", "serves"):
        if name not in have:
            conn.exec_driver_sql(f"ALTER TABLE diagnoses ADD COLUMN {name} TEXT")


#: Old poll lines converted per batch: bounded memory whatever the store's size.
_CONVERT_BATCH = 20_000


def _packed_polls(conn: Connection) -> None:
    """Polls packed, one row per device per batch of old lines; 64-bit ids everywhere."""
    polls_table.create(conn)
    last = 0
    while True:
        rows = conn.execute(
            sa.text("SELECT id, line FROM polls WHERE id > :last ORDER BY id LIMIT :n"),
            {"last": last, "n": _CONVERT_BATCH},
        ).all()
        if not rows:
            break
        last = rows[-1][0]
        packs = pack_rows(read_snapshots(row[1] for row in rows).polls)
        if packs:
            conn.execute(polls_table.insert(), packs)
    conn.exec_driver_sql("DROP TABLE polls")
    if conn.dialect.name == "postgresql":
        for table in ("diagnoses", "labels", "digests", "audit"):
            conn.exec_driver_sql(f"ALTER TABLE {table} ALTER COLUMN id TYPE BIGINT")
        conn.exec_driver_sql("ALTER TABLE labels ALTER COLUMN diagnosis_id TYPE BIGINT")


def pack_rows(table: PollTable) -> list[dict[str, Any]]:
    """Rows of the packed polls table for a poll table: one per device (grouped once, by
    sorting, whatever the number of devices)."""
    packs = []
    for device, rows in table.by_device():
        packs.append(
            {
                "device": device,
                "time": float(rows.time.max()),
                "first": float(rows.time.min()),
                "ports": len(rows),
                "body": pack(rows),
            }
        )
    return packs


#: Packs rewritten per batch by migration 4: bounded memory whatever the store's size.
_REPACK_BATCH = 2_000


def _named_packs(conn: Connection) -> None:
    """Every pack rewritten in the format that names its columns (:func:`upgraded`: the
    same bytes with the names in front), so no stored poll depends on the catalogue's order
    again; batch by batch, in bounded memory."""
    last = -1
    while True:
        rows = conn.execute(
            sa.select(polls_table.c.id, polls_table.c.body)
            .where(polls_table.c.id > last)
            .order_by(polls_table.c.id)
            .limit(_REPACK_BATCH)
        ).all()
        if not rows:
            break
        last = rows[-1].id
        changed = [
            {"pack_id": row.id, "new_body": new}
            for row in rows
            if (new := upgraded(row.body)) is not row.body
        ]
        if changed:
            conn.execute(
                polls_table.update()
                .where(polls_table.c.id == sa.bindparam("pack_id"))
                .values(body=sa.bindparam("new_body")),
                changed,
            )


def _seen_requests(conn: Connection) -> None:
    metadata.create_all(conn, tables=[seen_requests_table])


def _confidence_optional(conn: Connection) -> None:
    """The diagnoses' confidence may be null: an answer a guard gave (down, no data, too
    quiet) is a fact, not the tree's guess. SQLite cannot drop a NOT NULL, so the table is
    rebuilt as SQLite's documentation lays out: foreign keys off (before the migration's
    transaction begins; :meth:`Store.migrate` opens fresh connections after), the rows and
    ids copied into the new table, the old one dropped and the new one renamed, and the
    labels' keys checked before the change is kept."""
    if conn.dialect.name == "postgresql":
        conn.exec_driver_sql("ALTER TABLE diagnoses ALTER COLUMN confidence DROP NOT NULL")
        return
    column = next(c for c in sa.inspect(conn).get_columns("diagnoses") if c["name"] == "confidence")
    if column["nullable"]:
        return  # created from today's schema by migration 1
    conn.exec_driver_sql("PRAGMA foreign_keys=OFF")
    rebuilt = diagnoses_table.to_metadata(sa.MetaData(), name="diagnoses_new")
    conn.execute(sa.schema.CreateTable(rebuilt))
    names = ", ".join(c.name for c in diagnoses_table.columns)
    conn.exec_driver_sql(f"INSERT INTO diagnoses_new ({names}) SELECT {names} FROM diagnoses")
    conn.exec_driver_sql("DROP TABLE diagnoses")
    conn.exec_driver_sql("ALTER TABLE diagnoses_new RENAME TO diagnoses")
    for index in diagnoses_table.indexes:
        index.create(conn)
    broken = conn.exec_driver_sql("PRAGMA foreign_key_check").all()
    if broken:
        raise StoreError(f"rebuilding the diagnoses table broke {len(broken)} foreign keys")


def _long_sequences(conn: Connection) -> None:
    """PostgreSQL: the id sequences of tables first made with 32-bit ids (before schema
    version 3) counted 64-bit. Migration 3 widened the columns but ALTER COLUMN leaves a
    serial's sequence ``AS integer``, whose nextval stops at 2,147,483,647."""
    if conn.dialect.name != "postgresql":
        return
    for table in ("diagnoses", "labels", "digests", "audit", "poll_packs"):
        sequence = conn.execute(
            sa.text("SELECT pg_get_serial_sequence(:table, 'id')"), {"table": table}
        ).scalar()
        if sequence is not None:
            conn.exec_driver_sql(f"ALTER SEQUENCE {sequence} AS bigint")


def _shared_jobs(conn: Connection) -> None:
    metadata.create_all(conn, tables=[leases_table, job_runs_table])


def _label_turns(conn: Connection) -> None:
    """Labels numbered per person per answer, oldest first, under a unique index."""
    if "turn" not in {c["name"] for c in sa.inspect(conn).get_columns("labels")}:
        conn.exec_driver_sql("ALTER TABLE labels ADD COLUMN turn INTEGER")
    conn.exec_driver_sql(
        "UPDATE labels SET turn = (SELECT count(*) FROM labels AS earlier "
        "WHERE earlier.diagnosis_id = labels.diagnosis_id "
        "AND earlier.user_id = labels.user_id AND earlier.id <= labels.id)"
    )
    _create_missing_indexes(conn, labels_table)


def _outbox(conn: Connection) -> None:
    metadata.create_all(conn, tables=[outbox_table])


def _findings(conn: Connection) -> None:
    if "finding" not in {c["name"] for c in sa.inspect(conn).get_columns("labels")}:
        conn.exec_driver_sql("ALTER TABLE labels ADD COLUMN finding TEXT")


def _retention_indexes(conn: Connection) -> None:
    for table in (diagnoses_table, digests_table, audit_table):
        _create_missing_indexes(conn, table)


def _create_missing_indexes(conn: Connection, table: sa.Table) -> None:
    """The table's indexes the database lacks (a store made from today's metadata has
    them all already)."""
    have = {index["name"] for index in sa.inspect(conn).get_indexes(table.name)}
    for index in table.indexes:
        if index.name not in have:
            index.create(conn)


#: Every schema change, in order.
MIGRATIONS: tuple[Migration, ...] = (
    Migration(1, "polls, diagnoses, labels, digests, audit", _initial_schema),
    Migration(2, "diagnoses keep their site and what the port serves", _answer_context),
    Migration(3, "polls packed, one row per device per poll; 64-bit ids", _packed_polls),
    Migration(4, "poll packs name their columns", _named_packs),
    Migration(5, "a diagnosis a guard answered keeps no confidence", _confidence_optional),
    Migration(6, "signed requests seen, shared by every replica", _seen_requests),
    Migration(7, "64-bit id sequences on PostgreSQL after any upgrade", _long_sequences),
    Migration(8, "jobs run once across replicas: leases and runs", _shared_jobs),
    Migration(9, "each person's labels of an answer numbered, each number once", _label_turns),
    Migration(10, "every message to Slack kept in an outbox until sent", _outbox),
    Migration(11, "answers, lists and the audit log found by time, to forget", _retention_indexes),
    Migration(12, "labels keep what the engineer found", _findings),
)
