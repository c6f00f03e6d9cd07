"""The store: poll history, what was answered where, labels, digests and the audit log.

SQLite by default (one file under the data directory, in WAL mode so the bot's threads
read while one writes); any SQLAlchemy URL, e.g. PostgreSQL, otherwise. The schema grows
by numbered migrations, each applied in the same transaction that records it, so a store
is never left half-migrated. Polls are kept as lines of the snapshot format: the history
of a port reads back through the same parser as any snapshot file.

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
from typing import Any

import sqlalchemy as sa
from sqlalchemy.engine import Connection, Engine

from linktriage.errors import StoreError
from linktriage.model.labels import Label
from linktriage.polls import PollTable
from linktriage.snapshot import iter_snapshots, read_snapshots

metadata = sa.MetaData()

schema_version_table = sa.Table(
    "schema_version",
    metadata,
    sa.Column("version", sa.Integer, primary_key=True),
    sa.Column("description", sa.Text, nullable=False),
    sa.Column("applied_at", sa.Float, nullable=False),
)
polls_table = sa.Table(
    "polls",
    metadata,
    sa.Column("id", sa.Integer, primary_key=True, autoincrement=True),
    sa.Column("device", sa.Text, nullable=False),
    sa.Column("port", sa.Text, nullable=False),
    sa.Column("time", sa.Float, nullable=False),
    sa.Column("line", sa.Text, nullable=False),  # one line of the snapshot format
    sa.Index("polls_by_port", "device", "port", "time"),
    sa.Index("polls_by_time", "time"),
)
diagnoses_table = sa.Table(
    "diagnoses",
    metadata,
    sa.Column("id", sa.Integer, primary_key=True, autoincrement=True),
    sa.Column("at", sa.Float, nullable=False),
    sa.Column("device", sa.Text, nullable=False),
    sa.Column("port", sa.Text, nullable=False),
    sa.Column("verdict", sa.Text, nullable=False),
    sa.Column("confidence", sa.Float, nullable=False),
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
)
labels_table = sa.Table(
    "labels",
    metadata,
    sa.Column("id", sa.Integer, primary_key=True, autoincrement=True),
    sa.Column("at", sa.Float, nullable=False),
    sa.Column("diagnosis_id", sa.Integer, sa.ForeignKey("diagnoses.id"), nullable=False),
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
)
digests_table = sa.Table(
    "digests",
    metadata,
    sa.Column("id", sa.Integer, primary_key=True, autoincrement=True),
    sa.Column("at", sa.Float, nullable=False),
    sa.Column("kind", sa.Text, nullable=False),  # digest (scheduled) or suspects (asked for)
    sa.Column("channel", sa.Text),
    sa.Column("message_ts", sa.Text),
    sa.Column("items", sa.Text, nullable=False),  # JSON: [{device, port, verdict, diagnosis_id}]
    sa.Index("digests_by_message", "channel", "message_ts"),
)
audit_table = sa.Table(
    "audit",
    metadata,
    sa.Column("id", sa.Integer, primary_key=True, autoincrement=True),
    sa.Column("at", sa.Float, nullable=False),
    sa.Column("user_id", sa.Text),
    sa.Column("channel", sa.Text),
    sa.Column("command", sa.Text, nullable=False),
    sa.Column("outcome", sa.Text, nullable=False),
)


@dataclass(frozen=True, slots=True)
class Migration:
    version: int
    description: str
    apply: Callable[[Connection], None]


def _initial_schema(conn: Connection) -> None:
    metadata.create_all(
        conn, tables=[polls_table, diagnoses_table, labels_table, digests_table, audit_table]
    )


def _answer_context(conn: Connection) -> None:
    # Version 1 tables are created from today's metadata, so a new store has the columns.
    have = {column["name"] for column in sa.inspect(conn).get_columns("diagnoses")}
    for name in ("site", "serves"):
        if name not in have:
            conn.exec_driver_sql(f"ALTER TABLE diagnoses ADD COLUMN {name} TEXT")


#: Every schema change, in order. A new change is a new entry; old entries never change.
MIGRATIONS: tuple[Migration, ...] = (
    Migration(1, "polls, diagnoses, labels, digests, audit", _initial_schema),
    Migration(2, "diagnoses keep their site and what the port serves", _answer_context),
)


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


@dataclass(frozen=True, slots=True)
class Digest:
    """A posted list of suspect links (a digest or an answer), in the order it listed them."""

    id: int
    at: float
    kind: str
    channel: str | None
    message_ts: str | None
    items: list[dict[str, Any]]


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


def inspect_store(url: str) -> str:
    """What the store at ``url`` is, read without creating or changing anything: its masked
    URL and schema version, or that it is not created yet. Raises StoreError."""
    engine = _engine(url)
    try:
        if engine.dialect.name == "sqlite":
            database = sa.make_url(url).database
            if database and database != ":memory:" and not Path(database).exists():
                return f"{masked_url(url)}, not created yet (it is created on first use)"
        with engine.connect() as conn:
            if not sa.inspect(conn).has_table(schema_version_table.name):
                return f"{masked_url(url)}, empty (its tables are created on first use)"
            version = conn.execute(sa.select(sa.func.max(schema_version_table.c.version))).scalar()
        return f"{masked_url(url)}, schema version {int(version or 0)}"
    except sa.exc.SQLAlchemyError as exc:
        first = str(exc).splitlines()[0]
        raise StoreError(f"Cannot reach the store at {masked_url(url)}: {first}") from exc
    finally:
        engine.dispose()


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
        """Apply every migration not yet applied; returns the schema version."""
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
        return self.schema_version()

    def schema_version(self) -> int:
        with self.engine.connect() as conn:
            value = conn.execute(sa.select(sa.func.max(schema_version_table.c.version))).scalar()
        return int(value or 0)

    def close(self) -> None:
        self.engine.dispose()

    # --- polls
    def add_polls(self, table: PollTable) -> int:
        """Keep every row of a poll table; returns how many."""
        rows = [
            {
                "device": snap.device,
                "port": snap.port,
                "time": snap.time.timestamp(),
                "line": snap.model_dump_json(exclude_none=True),
            }
            for snap in iter_snapshots(table)
        ]
        if rows:
            with self._writing("keep polls") as conn:
                conn.execute(polls_table.insert(), rows)
        return len(rows)

    def polls_since(
        self, since: float, *, device: str | None = None, port: str | None = None
    ) -> PollTable:
        """Stored polls at or after ``since``, for one port, one device or all."""
        query = (
            sa.select(polls_table.c.line)
            .where(polls_table.c.time >= since)
            .order_by(polls_table.c.id)
        )
        if device is not None:
            query = query.where(polls_table.c.device == device)
        if port is not None:
            query = query.where(polls_table.c.port == port)
        with self.engine.connect() as conn:
            lines = [row.line for row in conn.execute(query)]
        return read_snapshots(lines).polls

    def prune_polls(self, before: float) -> int:
        """Forget polls older than ``before``; returns how many."""
        with self._writing("prune polls") as conn:
            return int(
                conn.execute(polls_table.delete().where(polls_table.c.time < before)).rowcount
            )

    # --- diagnoses
    def add_diagnosis(
        self,
        record: dict[str, Any],
        features: dict[str, float | None],
        *,
        at: float,
        origin: str,
        asked_by: str | None = None,
        channel: str | None = None,
        site: str = "",
        serves: str = "",
    ) -> int:
        """Keep what was answered, and enough to draw it again; returns its id."""
        with self._writing("keep the diagnosis") as conn:
            result = conn.execute(
                diagnoses_table.insert().values(
                    at=at,
                    device=record["device"],
                    port=record["port"],
                    verdict=record["verdict"],
                    confidence=record["confidence"],
                    model_version=record["model_version"],
                    features=json.dumps(features),
                    record=json.dumps(record),
                    origin=origin,
                    asked_by=asked_by,
                    channel=channel,
                    site=site,
                    serves=serves,
                )
            )
            return _new_id(result)

    def attach_message(self, diagnosis_id: int, channel: str, message_ts: str) -> None:
        """Remember which chat message carries a diagnosis, so its thread can label it."""
        self._attach(diagnoses_table, diagnosis_id, channel, message_ts)

    def _attach(self, table: sa.Table, row_id: int, channel: str, message_ts: str) -> None:
        with self._writing("remember the message") as conn:
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
    ) -> bool:
        """Keep a label; False when the same event was already stored (a retry)."""
        try:
            with self._writing("keep the label") as conn:
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
                    )
                )
        except StoreError as exc:
            if isinstance(exc.__cause__, sa.exc.IntegrityError) and self.has_event(event_key):
                return False
            raise
        return True

    def has_event(self, event_key: str) -> bool:
        """Whether a label from this event is stored (a retried delivery is not new)."""
        with self._reading("read the labels") as conn:
            found = conn.execute(
                sa.select(labels_table.c.id).where(labels_table.c.event_key == event_key)
            ).first()
        return found is not None

    def labels(self, diagnosis_id: int | None = None) -> list[Label]:
        """Every label (or those of one answer), oldest first: changed ones included, for
        the audit; :func:`linktriage.model.labels.settle` says which ones count."""
        query = sa.select(labels_table).order_by(labels_table.c.id)
        if diagnosis_id is not None:
            query = query.where(labels_table.c.diagnosis_id == diagnosis_id)
        with self._reading("read the labels") as conn:
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
        with self._writing("keep the digest") as conn:
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
        with self._writing("note the command") as conn:
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
    def _reading(self, what: str) -> AbstractContextManager[Connection]:
        """A read whose database errors become :class:`StoreError`."""
        return self._guarded(what, self.engine.connect)

    def _writing(self, what: str) -> AbstractContextManager[Connection]:
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
