"""The store: poll history, what was answered where, labels, digests and the audit log.

SQLite by default (one file under the data directory, in WAL mode so the bot's threads read while
one writes); any SQLAlchemy URL, e.g. PostgreSQL, otherwise. The schema grows by numbered
migrations, each applied in the same transaction that records it, so a store is never left
half-migrated. Polls are kept packed (:mod:`linktriage.engine.format.packs`): one row per device per
poll, about 160 bytes per port, each pack naming its columns; found by device and time or by time
alone without a sort, and forgotten after ``[store] keep_polls_h`` in small batches.

Labels carry an *event key* (a Slack event id, or a button press's own id) under a
unique constraint: the same event delivered twice is stored once.
"""

from __future__ import annotations

import json
import re
import time
from collections.abc import Callable, Iterator, Sequence
from contextlib import AbstractContextManager, contextmanager
from dataclasses import dataclass
from pathlib import Path
from typing import Any, Literal

import msgspec
import numpy as np
import sqlalchemy as sa
from sqlalchemy.engine import Connection, Engine

from linktriage.engine.format.packs import pack, unpack, unpack_many, upgraded
from linktriage.engine.format.poll_table import PollTable
from linktriage.engine.format.snapshot import read_snapshots
from linktriage.engine.model.labels import Label
from linktriage.errors import StoreError

metadata = sa.MetaData()

schema_version_table = sa.Table(
    "schema_version",
    metadata,
    sa.Column("version", sa.Integer, primary_key=True),
    sa.Column("description", sa.Text, nullable=False),
    sa.Column("applied_at", sa.Float, nullable=False),
)
#: 64-bit row ids: a poll every 5 minutes from 100,000 ports overflows 32 bits in weeks.
#: (SQLite's INTEGER PRIMARY KEY is 64-bit already, and only it is the rowid.)
BigId = sa.BigInteger().with_variant(sa.Integer(), "sqlite")
polls_table = sa.Table(
    "poll_packs",
    metadata,
    sa.Column("id", BigId, primary_key=True, autoincrement=True),
    sa.Column("device", sa.Text, nullable=False),
    sa.Column("time", sa.Float, nullable=False),  # the newest poll in the pack
    sa.Column("first", sa.Float, nullable=False),  # the oldest poll in the pack
    sa.Column("ports", sa.Integer, nullable=False),  # rows in the pack
    sa.Column("body", sa.LargeBinary, nullable=False),  # linktriage.engine.format.packs
    sa.Index("poll_packs_by_device", "device", "time"),  # this device (its ports) since T
    sa.Index("poll_packs_by_time", "time"),  # every port since T; what to forget
)
diagnoses_table = sa.Table(
    "diagnoses",
    metadata,
    sa.Column("id", BigId, primary_key=True, autoincrement=True),
    sa.Column("at", sa.Float, nullable=False),
    sa.Column("device", sa.Text, nullable=False),
    sa.Column("port", sa.Text, nullable=False),
    sa.Column("verdict", sa.Text, nullable=False),
    sa.Column("confidence", sa.Float),  # null from version 5: a guard answered, not the tree
    sa.Column("model_version", sa.Text, nullable=False),
    sa.Column("features", sa.Text, nullable=False),  # JSON: feature name -> value or null
    sa.Column("record", sa.Text, nullable=False),  # JSON: the diagnosis as answered
    sa.Column("origin", sa.Text, nullable=False),  # chat, console, digest, cli
    sa.Column("asked_by", sa.Text),
    sa.Column("channel", sa.Text),
    sa.Column("message_ts", sa.Text),
    sa.Column("site", sa.Text),  # from version 2: to redraw the answer as it was
    sa.Column("serves", sa.Text),
    sa.Index("diagnoses_by_message", "channel", "message_ts"),
    sa.Index("diagnoses_by_time", "at"),  # what retention forgets (since schema version 11)
)
labels_table = sa.Table(
    "labels",
    metadata,
    sa.Column("id", BigId, primary_key=True, autoincrement=True),
    sa.Column("at", sa.Float, nullable=False),
    sa.Column("diagnosis_id", sa.BigInteger, sa.ForeignKey("diagnoses.id"), nullable=False),
    sa.Column("device", sa.Text, nullable=False),
    sa.Column("port", sa.Text, nullable=False),
    sa.Column("verdict", sa.Text, nullable=False),  # what the engineer found
    sa.Column("model_verdict", sa.Text, nullable=False),  # what the model had said
    sa.Column("model_version", sa.Text, nullable=False),
    sa.Column("features", sa.Text, nullable=False),
    sa.Column("note", sa.Text, nullable=False),
    sa.Column("user_id", sa.Text, nullable=False),
    sa.Column("channel", sa.Text),
    sa.Column("source", sa.Text, nullable=False),  # thread, button, console
    sa.Column("event_key", sa.Text, nullable=False, unique=True),
    # Each person's labels of one answer numbered 1, 2, ... (since schema version 9): two
    # presses at once on two replicas both take the same number, and the database keeps one.
    sa.Column("turn", sa.Integer),
    sa.Index("labels_one_per_turn", "diagnosis_id", "user_id", "turn", unique=True),
)
digests_table = sa.Table(
    "digests",
    metadata,
    sa.Column("id", BigId, primary_key=True, autoincrement=True),
    sa.Column("at", sa.Float, nullable=False),
    sa.Column("kind", sa.Text, nullable=False),  # digest (scheduled) or suspects (asked for)
    sa.Column("channel", sa.Text),
    sa.Column("message_ts", sa.Text),
    sa.Column("items", sa.Text, nullable=False),  # JSON: [{device, port, verdict, diagnosis_id}]
    sa.Index("digests_by_message", "channel", "message_ts"),
    sa.Index("digests_by_time", "at"),
)
audit_table = sa.Table(
    "audit",
    metadata,
    sa.Column("id", BigId, primary_key=True, autoincrement=True),
    sa.Column("at", sa.Float, nullable=False),
    sa.Column("user_id", sa.Text),
    sa.Column("channel", sa.Text),
    sa.Column("command", sa.Text, nullable=False),
    sa.Column("outcome", sa.Text, nullable=False),
    sa.Index("audit_by_time", "at"),
)

#: The signed requests every replica has let in, until each signature's lifetime ends: a
#: replay refused by one replica is refused by all (since schema version 6).
seen_requests_table = sa.Table(
    "seen_requests",
    metadata,
    sa.Column("signature", sa.Text, primary_key=True),
    sa.Column("expires_at", sa.Float, nullable=False),
    sa.Index("seen_requests_by_expiry", "expires_at"),
)

#: Who runs the jobs (and who sends to each channel) for every replica of the store: a
#: lease held until ``expires_at``, renewed by its holder, taken over once it lapses
#: (since schema version 8).
leases_table = sa.Table(
    "leases",
    metadata,
    sa.Column("name", sa.Text, primary_key=True),
    sa.Column("holder", sa.Text, nullable=False),
    sa.Column("expires_at", sa.Float, nullable=False),
)
#: The lease of the replica that runs the jobs (poll rounds, digests, tidying).
JOBS_LEASE = "jobs"
#: Each run of a job by the time it fell due: a digest due at 07:30 is run (and posted) by
#: one replica once, whatever the others' clocks say (since schema version 8).
job_runs_table = sa.Table(
    "job_runs",
    metadata,
    sa.Column("job", sa.Text, primary_key=True),
    sa.Column("due", sa.Float, primary_key=True),
    sa.Column("holder", sa.Text, nullable=False),
    sa.Column("at", sa.Float, nullable=False),
)
#: Every message to Slack, kept until sent (since schema version 10): sent in order per
#: channel by whichever replica holds that channel's lease, waiting out Slack's
#: Retry-After, across restarts. ``linktriage.outbox`` reads and writes it.
outbox_table = sa.Table(
    "outbox",
    metadata,
    sa.Column("id", BigId, primary_key=True, autoincrement=True),
    sa.Column("at", sa.Float, nullable=False),  # when it was said
    sa.Column("channel", sa.Text, nullable=False),
    sa.Column("method", sa.Text, nullable=False),  # chat.postMessage, chat.update, ...
    sa.Column("body", sa.Text, nullable=False),  # JSON: the method's arguments
    sa.Column("thread_ts", sa.Text),  # in this thread
    sa.Column("thread_of", sa.BigInteger),  # in the thread of this message, once sent
    sa.Column("diagnosis_id", sa.BigInteger),  # this message carries this answer
    sa.Column("digest_id", sa.BigInteger),  # ... or this list of suspects
    sa.Column("asker", sa.Text),  # told if it cannot be sent
    sa.Column("give_up_at", sa.Float, nullable=False),
    sa.Column("not_before", sa.Float, nullable=False),
    sa.Column("tries", sa.Integer, nullable=False),
    sa.Column("state", sa.Text, nullable=False),  # waiting, sent, dropped
    sa.Column("ts", sa.Text),  # Slack's id of the message, once sent
    sa.Column("outcome", sa.Text),  # why it waits or was dropped
    sa.Index("outbox_waiting", "state", "channel", "id"),
    sa.Index("outbox_by_time", "at"),
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
        packs = _packs(read_snapshots(row[1] for row in rows).polls)
        if packs:
            conn.execute(polls_table.insert(), packs)
    conn.exec_driver_sql("DROP TABLE polls")
    if conn.dialect.name == "postgresql":
        for table in ("diagnoses", "labels", "digests", "audit"):
            conn.exec_driver_sql(f"ALTER TABLE {table} ALTER COLUMN id TYPE BIGINT")
        conn.exec_driver_sql("ALTER TABLE labels ALTER COLUMN diagnosis_id TYPE BIGINT")


def _packs(table: PollTable) -> list[dict[str, Any]]:
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


#: Every schema change, in order. A new change is a new entry; old entries never change.
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
)


@dataclass(frozen=True, slots=True)
class PollHistory:
    """How much poll history the store holds."""

    packs: int
    ports: int  # rows: one port's answer to one poll
    oldest: float | None
    newest: float | None


@dataclass(frozen=True, slots=True)
class Forgotten:
    """What one pass of retention forgot, in rows."""

    answers: int
    lists: int
    audit: int
    messages: int


@dataclass(frozen=True, slots=True)
class NewAnswer:
    """An answer to keep: the record as answered and the feature row it rests on."""

    record: dict[str, Any]
    features: dict[str, float | None]
    at: float
    origin: str  # chat, console, digest, suspects, sweep
    asked_by: str | None = None
    channel: str | None = None
    site: str = ""
    serves: str = ""


@dataclass(frozen=True, slots=True)
class StoredDiagnosis:
    """A diagnosis as it was answered, with where it was posted."""

    id: int
    at: float
    device: str
    port: str
    verdict: str
    model_version: str
    features: dict[str, float | None]
    record: dict[str, Any]
    channel: str | None
    message_ts: str | None
    site: str = ""
    serves: str = ""
    asked_by: str | None = None


@dataclass(frozen=True, slots=True)
class Digest:
    """A posted list of suspect links (a digest or an answer), in the order it listed them."""

    id: int
    at: float
    kind: str
    channel: str | None
    message_ts: str | None
    items: list[dict[str, Any]]


#: Answers are kept as JSON text, encoded as ``diagnose --json`` encodes them (msgspec:
#: a digest keeps thousands at once).
_encode_json = msgspec.json.Encoder().encode

#: How keeping a label went (:meth:`Store.add_label`).
LabelKept = Literal["stored", "repeat", "raced"]


def _new_id(result: sa.CursorResult[Any]) -> int:
    key = result.inserted_primary_key
    if key is None:
        raise StoreError("the database returned no id for a new row")
    return int(key[0])


def _sqlite_pragmas(dbapi_connection: Any, _record: Any) -> None:
    cursor = dbapi_connection.cursor()
    cursor.execute("PRAGMA journal_mode=WAL")  # readers do not wait for the writer
    cursor.execute("PRAGMA foreign_keys=ON")
    cursor.execute("PRAGMA busy_timeout=5000")
    # After each checkpoint the log is cut back to this (64 MiB) instead of staying as
    # large as it ever grew.
    cursor.execute("PRAGMA journal_size_limit=67108864")
    cursor.close()


#: The extra that installs each database's driver (pyproject.toml).
_DRIVER_EXTRAS = {"postgresql": "postgresql"}


def masked_url(url: str) -> str:
    """A URL fit to print: any password replaced, even in a URL SQLAlchemy cannot parse."""
    try:
        return sa.make_url(url).render_as_string(hide_password=True)
    except sa.exc.ArgumentError:
        return re.sub(r"(://[^:/@\s]*:)[^@/\s]*@", r"\1***@", url)


def _engine(url: str) -> Engine:
    """An engine for ``url``; a URL that does not parse, or whose driver is missing, is a
    StoreError that says what to do."""
    try:
        return sa.create_engine(url)
    except sa.exc.ArgumentError as exc:
        raise StoreError(
            f"The store URL {masked_url(url)!r} is not a database URL ({exc}).",
            hint='Write it as SQLAlchemy does, e.g. "postgresql://user@host/linktriage", or '
            "leave [store] url out for the SQLite file in the data directory.",
        ) from exc
    except ImportError as exc:
        backend = url.split(":", 1)[0].split("+", 1)[0]
        extra = _DRIVER_EXTRAS.get(backend)
        hint = (
            f"Install it with: pip install 'linktriage[{extra}]'"
            if extra
            else "Install the database driver SQLAlchemy names for this URL."
        )
        raise StoreError(
            f"The store at {masked_url(url)} needs a database driver that is not installed "
            f"({exc}).",
            hint=hint,
        ) from exc


@dataclass(frozen=True, slots=True)
class StoreState:
    """What a store is, read without creating or changing anything."""

    url: str  # with any password hidden
    created: bool
    version: int | None  # None: no tables yet (created on first use)
    history: PollHistory | None
    size_bytes: int | None  # the database on disk, where it can tell
    jobs_held_by: str | None = None  # the replica running the jobs now, if any
    waiting: int = 0  # messages in the outbox not yet sent


def inspect_store(url: str) -> StoreState:
    """The store at ``url`` as it stands, creating nothing. Raises StoreError."""
    engine = _engine(url)
    shown = masked_url(url)
    try:
        database = sa.make_url(url).database if engine.dialect.name == "sqlite" else None
        on_disk = database is not None and database not in ("", ":memory:")
        if on_disk and not Path(str(database)).exists():
            return StoreState(shown, False, None, None, None)
        with engine.connect() as conn:
            tables = sa.inspect(conn)
            if not tables.has_table(schema_version_table.name):
                return StoreState(shown, True, None, None, None)
            version = conn.execute(sa.select(sa.func.max(schema_version_table.c.version))).scalar()
            history = _history(conn) if tables.has_table(polls_table.name) else None
            holder, waiting = None, 0
            if tables.has_table(leases_table.name):
                holder = conn.execute(
                    sa.select(leases_table.c.holder).where(
                        (leases_table.c.name == JOBS_LEASE)
                        & (leases_table.c.expires_at >= time.time())
                    )
                ).scalar()
            if tables.has_table(outbox_table.name):
                waiting = conn.execute(
                    sa.select(sa.func.count()).where(outbox_table.c.state == "waiting")
                ).scalar_one()
            size = None
            if engine.dialect.name == "postgresql":
                size = conn.exec_driver_sql("SELECT pg_database_size(current_database())").scalar()
        if on_disk:
            files = [Path(f"{database}{suffix}") for suffix in ("", "-wal")]
            size = sum(f.stat().st_size for f in files if f.exists())
        return StoreState(shown, True, int(version or 0), history, size, holder, int(waiting))
    except sa.exc.SQLAlchemyError as exc:
        first = str(exc).splitlines()[0]
        raise StoreError(f"Cannot reach the store at {shown}: {first}") from exc
    finally:
        engine.dispose()


def _history(conn: Connection) -> PollHistory:
    row = conn.execute(
        sa.select(
            sa.func.count(),
            sa.func.coalesce(sa.func.sum(polls_table.c.ports), 0),
            sa.func.min(polls_table.c.first),
            sa.func.max(polls_table.c.time),
        )
    ).one()
    return PollHistory(int(row[0]), int(row[1]), row[2], row[3])


#: The PostgreSQL advisory lock migrations hold (any fixed 64-bit number the application
#: owns: "lt" "migr" in ASCII).
MIGRATION_LOCK = 0x6C74_6D69_6772


class Store:
    """The store behind one SQLAlchemy URL, migrated to the current schema on opening."""

    def __init__(self, url: str) -> None:
        self.url = url
        self.engine: Engine = _engine(url)
        try:
            if self.engine.dialect.name == "sqlite":
                sa.event.listen(self.engine, "connect", _sqlite_pragmas)
                self._make_parent_dir(url)
            self.migrate()
        except sa.exc.SQLAlchemyError as exc:
            raise StoreError(f"Cannot open the store at {masked_url(url)}: {exc}") from exc

    def describe(self) -> str:
        """The store's URL with any password hidden, fit to print."""
        return masked_url(self.url)

    @staticmethod
    def _make_parent_dir(url: str) -> None:
        database = sa.make_url(url).database
        if database and database != ":memory:":
            Path(database).parent.mkdir(parents=True, exist_ok=True)

    def migrate(self) -> int:
        """Apply every migration not yet applied; returns the schema version. Replicas
        that open one store at once migrate it one after another (:meth:`_migrating`):
        the second finds the work done."""
        with self._migrating():
            return self._migrate()

    @contextmanager
    def _migrating(self) -> Iterator[None]:
        """Held while migrating, across processes: PostgreSQL's session advisory lock on a
        connection of its own; on SQLite an exclusive lock on a file beside the database
        (one host, as a SQLite file is)."""
        if self.engine.dialect.name == "postgresql":
            # A connection outside the store's pool, which migrations dispose of.
            holder = sa.create_engine(self.url, poolclass=sa.pool.NullPool)
            try:
                with holder.connect() as conn:
                    key = {"key": MIGRATION_LOCK}
                    conn.execute(sa.text("SELECT pg_advisory_lock(:key)"), key)
                    conn.commit()
                    try:
                        yield
                    finally:
                        conn.execute(sa.text("SELECT pg_advisory_unlock(:key)"), key)
                        conn.commit()
            finally:
                holder.dispose()
            return
        database = sa.make_url(self.url).database
        if self.engine.dialect.name != "sqlite" or not database or database == ":memory:":
            yield
            return
        import fcntl  # POSIX: where the store runs

        with open(f"{database}.migrating", "a") as lock:
            fcntl.flock(lock, fcntl.LOCK_EX)
            try:
                yield
            finally:
                fcntl.flock(lock, fcntl.LOCK_UN)

    def _migrate(self) -> int:
        with self.engine.begin() as conn:
            schema_version_table.create(conn, checkfirst=True)
        done = self.schema_version()
        for migration in MIGRATIONS:
            if migration.version <= done:
                continue
            with self.engine.begin() as conn:  # the change and its record, or neither
                migration.apply(conn)
                conn.execute(
                    schema_version_table.insert().values(
                        version=migration.version,
                        description=migration.description,
                        applied_at=time.time(),
                    )
                )
            self.engine.dispose()  # a migration may change a connection's settings
        return self.schema_version()

    def schema_version(self) -> int:
        with self.engine.connect() as conn:
            value = conn.execute(sa.select(sa.func.max(schema_version_table.c.version))).scalar()
        return int(value or 0)

    def close(self) -> None:
        self.engine.dispose()

    # --- polls
    def add_polls(self, table: PollTable) -> int:
        """Keep every row of a poll table, one pack per device, in one transaction;
        returns how many rows."""
        packs = _packs(table)
        if packs:
            with self.writing("keep polls") as conn:
                conn.execute(polls_table.insert(), packs)
        return len(table)

    def polls_since(
        self,
        since: float,
        *,
        devices: Sequence[str] | None = None,
        port: str | None = None,
    ) -> PollTable:
        """Stored polls at or after ``since``, oldest first: of some devices (each found by
        its index; with ``port``, of that port of theirs), or of every device. Every pack
        is read in one go (a digest reads thousands), then cut once to the rows asked for."""
        query = sa.select(polls_table.c.device, polls_table.c.body).where(
            polls_table.c.time >= since
        )
        if devices is not None:
            query = query.where(polls_table.c.device.in_(list(devices)))
        with self.reading("read polls") as conn:
            rows = conn.execute(query.order_by(polls_table.c.time)).all()
        table = unpack_many([row.body for row in rows], [row.device for row in rows])
        keep = table.time >= since
        if port is not None:
            keep &= table.port == port
        return table if keep.all() else table.take(np.flatnonzero(keep))

    def latest_poll(self, device: str) -> PollTable:
        """The newest stored poll of a device, however old (found by its index): what it
        last said, e.g. which far end each port's LLDP named."""
        query = (
            sa.select(polls_table.c.body)
            .where(polls_table.c.device == device)
            .order_by(polls_table.c.time.desc())
            .limit(1)
        )
        with self.reading("read the latest poll") as conn:
            body = conn.execute(query).scalar()
        return PollTable.empty() if body is None else unpack(body, device)

    def prune_polls(self, before: float, *, batch: int = 1000) -> int:
        """Forget polls older than ``before``, ``batch`` packs per transaction so that
        readers and the bot's writes are never held up for long, until none is left however
        far behind (a first run after a long stop, more devices than ever); returns how
        many rows were forgotten."""
        forgotten = 0
        while True:
            with self.writing("forget old polls") as conn:
                old = conn.execute(
                    sa.select(polls_table.c.id, polls_table.c.ports)
                    .where(polls_table.c.time < before)
                    .order_by(polls_table.c.time)
                    .limit(batch)
                ).all()
                if not old:
                    return forgotten
                conn.execute(polls_table.delete().where(polls_table.c.id.in_([r.id for r in old])))
            forgotten += sum(r.ports for r in old)

    def forget_answers(self, before: float, *, batch: int = 1000) -> Forgotten:
        """Forget answers, lists of suspects, audit entries, sent messages and job runs
        older than ``before``, ``batch`` rows per transaction. A labelled answer is kept:
        its label trains the model, and the label needs it."""
        labelled = sa.select(labels_table.c.diagnosis_id)
        counts = {}
        for name, table, where in (
            ("answers", diagnoses_table,
             (diagnoses_table.c.at < before) & diagnoses_table.c.id.not_in(labelled)),
            ("lists", digests_table, digests_table.c.at < before),
            ("audit", audit_table, audit_table.c.at < before),
            ("messages", outbox_table,
             (outbox_table.c.at < before) & (outbox_table.c.state != "waiting")),
        ):  # fmt: skip
            counts[name] = self._forget(table, where, batch)
        with self.writing("forget old job runs") as conn:
            conn.execute(job_runs_table.delete().where(job_runs_table.c.due < before))
        return Forgotten(**counts)

    def _forget(self, table: sa.Table, where: sa.ColumnElement[bool], batch: int) -> int:
        forgotten = 0
        while True:
            with self.writing(f"forget old {table.name}") as conn:
                ids = conn.execute(sa.select(table.c.id).where(where).limit(batch)).scalars().all()
                if not ids:
                    return forgotten
                conn.execute(table.delete().where(table.c.id.in_(ids)))
            forgotten += len(ids)

    def compact(self) -> None:
        """Give back the space a SQLite write-ahead log grew to (its pages are in the
        database by then): the log is bounded by its peak otherwise. Nothing elsewhere."""
        if self.engine.dialect.name == "sqlite":
            with self.engine.connect() as conn:
                conn.exec_driver_sql("PRAGMA wal_checkpoint(TRUNCATE)")

    def poll_history(self) -> PollHistory:
        with self.reading("read the poll history") as conn:
            return _history(conn)

    # --- diagnoses
    def add_diagnoses(self, answers: Sequence[NewAnswer]) -> list[int]:
        """Keep many answers in one transaction (a digest's); returns their ids, in order."""
        if not answers:
            return []
        rows = [
            {
                "at": a.at,
                "device": a.record["device"],
                "port": a.record["port"],
                "verdict": a.record["verdict"],
                "confidence": a.record["confidence"],
                "model_version": a.record["model_version"],
                "features": _encode_json(a.features).decode(),
                "record": _encode_json(a.record).decode(),
                "origin": a.origin,
                "asked_by": a.asked_by,
                "channel": a.channel,
                "site": a.site,
                "serves": a.serves,
            }
            for a in answers
        ]
        insert = diagnoses_table.insert().returning(
            diagnoses_table.c.id, sort_by_parameter_order=True
        )
        with self.writing("keep the diagnoses") as conn:
            return [int(row.id) for row in conn.execute(insert, rows)]

    def attach_message(self, diagnosis_id: int, channel: str, message_ts: str) -> None:
        """Remember which chat message carries a diagnosis, so its thread can label it."""
        self._attach(diagnoses_table, diagnosis_id, channel, message_ts)

    def _attach(self, table: sa.Table, row_id: int, channel: str, message_ts: str) -> None:
        with self.writing("remember the message") as conn:
            conn.execute(
                table.update()
                .where(table.c.id == row_id)
                .values(channel=channel, message_ts=message_ts)
            )

    def diagnosis(self, diagnosis_id: int) -> StoredDiagnosis | None:
        return self._one_diagnosis(diagnoses_table.c.id == diagnosis_id)

    def diagnosis_for_message(self, channel: str, message_ts: str) -> StoredDiagnosis | None:
        return self._one_diagnosis(
            (diagnoses_table.c.channel == channel) & (diagnoses_table.c.message_ts == message_ts)
        )

    def _one_diagnosis(self, where: sa.ColumnElement[bool]) -> StoredDiagnosis | None:
        with self.engine.connect() as conn:
            row = conn.execute(sa.select(diagnoses_table).where(where).limit(1)).first()
        if row is None:
            return None
        return StoredDiagnosis(
            id=row.id,
            at=row.at,
            device=row.device,
            port=row.port,
            verdict=row.verdict,
            model_version=row.model_version,
            features=json.loads(row.features),
            record=json.loads(row.record),
            channel=row.channel,
            message_ts=row.message_ts,
            site=row.site or "",
            serves=row.serves or "",
            asked_by=row.asked_by,
        )

    # --- labels
    def add_label(
        self,
        diagnosis: StoredDiagnosis,
        verdict: str,
        *,
        note: str,
        user_id: str,
        channel: str | None,
        source: str,
        event_key: str,
        at: float,
        turn: int,
    ) -> LabelKept:
        """Keep a label as its author's ``turn``-th on the answer (one more than the labels
        of theirs the caller decided on). ``repeat``: the same event was stored already (a
        retry); ``raced``: another label of theirs took that turn since the caller read
        them (a second press, on another replica): read again and decide again."""
        try:
            with self.writing("keep the label") as conn:
                conn.execute(
                    labels_table.insert().values(
                        at=at,
                        diagnosis_id=diagnosis.id,
                        device=diagnosis.device,
                        port=diagnosis.port,
                        verdict=verdict,
                        model_verdict=diagnosis.verdict,
                        model_version=diagnosis.model_version,
                        features=json.dumps(diagnosis.features),
                        note=note,
                        user_id=user_id,
                        channel=channel,
                        source=source,
                        event_key=event_key,
                        turn=turn,
                    )
                )
        except StoreError as exc:
            if not isinstance(exc.__cause__, sa.exc.IntegrityError):
                raise
            return "repeat" if self.has_event(event_key) else "raced"
        return "stored"

    def has_event(self, event_key: str) -> bool:
        """Whether a label from this event is stored (a retried delivery is not new)."""
        with self.reading("read the labels") as conn:
            found = conn.execute(
                sa.select(labels_table.c.id).where(labels_table.c.event_key == event_key)
            ).first()
        return found is not None

    def labels(self, diagnosis_id: int | None = None) -> list[Label]:
        """Every label (or those of one answer), oldest first: changed ones included, for
        the audit; :func:`linktriage.engine.model.labels.settle` says which ones count."""
        query = sa.select(labels_table).order_by(labels_table.c.id)
        if diagnosis_id is not None:
            query = query.where(labels_table.c.diagnosis_id == diagnosis_id)
        with self.reading("read the labels") as conn:
            rows = conn.execute(query).all()
        return [
            Label(
                id=r.id,
                at=r.at,
                diagnosis_id=r.diagnosis_id,
                device=r.device,
                port=r.port,
                verdict=r.verdict,
                model_verdict=r.model_verdict,
                model_version=r.model_version,
                features=json.loads(r.features),
                note=r.note,
                user_id=r.user_id,
                channel=r.channel,
                source=r.source,
            )
            for r in rows
        ]

    # --- digests
    def add_digest(
        self, items: Sequence[dict[str, Any]], *, at: float, kind: str, channel: str | None
    ) -> int:
        """Keep a posted list of suspects (``kind``: digest or suspects); returns its id."""
        with self.writing("keep the digest") as conn:
            result = conn.execute(
                digests_table.insert().values(
                    at=at, kind=kind, channel=channel, items=json.dumps(list(items))
                )
            )
            return _new_id(result)

    def attach_digest_message(self, digest_id: int, channel: str, message_ts: str) -> None:
        """Remember which chat message carries a list of suspects, for its thread."""
        self._attach(digests_table, digest_id, channel, message_ts)

    def last_digest(self) -> Digest | None:
        """The newest scheduled digest."""
        return self._one_digest(digests_table.c.kind == "digest")

    def digest_for_message(self, channel: str, message_ts: str) -> Digest | None:
        return self._one_digest(
            (digests_table.c.channel == channel) & (digests_table.c.message_ts == message_ts)
        )

    def _one_digest(self, where: sa.ColumnElement[bool]) -> Digest | None:
        with self.engine.connect() as conn:
            query = (
                sa.select(digests_table).where(where).order_by(digests_table.c.id.desc()).limit(1)
            )
            row = conn.execute(query).first()
        if row is None:
            return None
        return Digest(row.id, row.at, row.kind, row.channel, row.message_ts, json.loads(row.items))

    # --- audit
    def audit(
        self, command: str, outcome: str, *, at: float, user_id: str | None, channel: str | None
    ) -> None:
        """Note a command and how it ended."""
        with self.writing("note the command") as conn:
            conn.execute(
                audit_table.insert().values(
                    at=at, user_id=user_id, channel=channel, command=command, outcome=outcome
                )
            )

    def audit_log(self) -> list[dict[str, Any]]:
        with self.engine.connect() as conn:
            return [
                dict(r._mapping)
                for r in conn.execute(sa.select(audit_table).order_by(audit_table.c.id))
            ]

    # --- database errors as StoreError
    def reading(self, what: str) -> AbstractContextManager[Connection]:
        """A read whose database errors become :class:`StoreError`."""
        return self._guarded(what, self.engine.connect)

    # --- leases and job runs, shared by every replica
    def take_lease(self, name: str, holder: str, *, now: float, hold_s: float) -> bool:
        """Take or renew the lease ``name`` for ``holder`` until ``now + hold_s``: True if
        it is theirs, False while another holder's has not lapsed. One statement decides
        (the row's lock orders two replicas trying at once)."""
        leases = leases_table
        until = now + hold_s
        try:
            with self.engine.begin() as conn:
                renewed = conn.execute(
                    leases.update()
                    .where(
                        (leases.c.name == name)
                        & ((leases.c.holder == holder) | (leases.c.expires_at < now))
                    )
                    .values(holder=holder, expires_at=until)
                ).rowcount
                if renewed:
                    return True
                if conn.execute(sa.select(leases.c.name).where(leases.c.name == name)).first():
                    return False
                conn.execute(leases.insert().values(name=name, holder=holder, expires_at=until))
            return True
        except sa.exc.IntegrityError:
            return False  # another replica took it first
        except sa.exc.SQLAlchemyError as exc:
            raise StoreError(f"Could not take the lease {name!r}: {exc}") from exc

    def release_lease(self, name: str, holder: str) -> None:
        """Give a lease up at once (a clean stop), so another replica need not wait."""
        with self.writing("give up a lease") as conn:
            conn.execute(
                leases_table.delete().where(
                    (leases_table.c.name == name) & (leases_table.c.holder == holder)
                )
            )

    def lease_holder(self, name: str, *, now: float) -> str | None:
        """Who holds a lease now, if anyone."""
        with self.reading("read a lease") as conn:
            row = conn.execute(
                sa.select(leases_table.c.holder).where(
                    (leases_table.c.name == name) & (leases_table.c.expires_at >= now)
                )
            ).first()
        return None if row is None else str(row.holder)

    def claim_run(self, job: str, due: float, holder: str, *, now: float) -> bool:
        """Whether this run of ``job`` (the one due at ``due``) is ``holder``'s to do:
        False when any replica claimed it before. The primary key decides."""
        try:
            with self.engine.begin() as conn:
                conn.execute(
                    job_runs_table.insert().values(job=job, due=due, holder=holder, at=now)
                )
        except sa.exc.IntegrityError:
            return False
        except sa.exc.SQLAlchemyError as exc:
            raise StoreError(f"Could not claim the {job} run: {exc}") from exc
        return True

    # --- signed requests
    def first_sight(self, signature: str, expires_at: float, now: float) -> bool:
        """Whether a signed request is seen for the first time by any replica of this store
        (its signature recorded until ``expires_at``); False for a replay. The database's
        key decides, so two replicas that see it at once cannot both let it in."""
        seen = seen_requests_table
        try:
            with self.engine.begin() as conn:
                conn.execute(seen.delete().where(seen.c.expires_at < now))
                conn.execute(seen.insert().values(signature=signature, expires_at=expires_at))
        except sa.exc.IntegrityError:
            return False
        except sa.exc.SQLAlchemyError as exc:
            raise StoreError(f"Could not record a signed request: {exc}") from exc
        return True

    def writing(self, what: str) -> AbstractContextManager[Connection]:
        """A write transaction whose database errors become :class:`StoreError`."""
        return self._guarded(what, self.engine.begin)

    @contextmanager
    def _guarded(
        self, what: str, opening: Callable[[], AbstractContextManager[Connection]]
    ) -> Iterator[Connection]:
        try:
            with opening() as conn:
                yield conn
        except sa.exc.SQLAlchemyError as exc:
            raise StoreError(f"Could not {what}: {exc.__class__.__name__}: {exc}") from exc
