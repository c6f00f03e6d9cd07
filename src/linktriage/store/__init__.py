"""The store: poll history, what was answered where, labels, digests and the audit log.

SQLite by default (one file under the data directory, in WAL mode so the bot's threads read while
one writes); any SQLAlchemy URL, e.g. PostgreSQL, otherwise. The schema (:mod:`.schema`) grows by
numbered migrations (:mod:`.migrations`), applied under a lock every replica respects. Polls are
kept packed (:mod:`linktriage.engine.format.packs`): one row per device per poll, each pack
naming its columns; found by device and time or by time alone without a sort, and forgotten
after ``[store] keep_polls_h`` in short batches, however far behind.

Labels carry an *event key* (a Slack event id, or a button press's own id) under a unique
constraint: the same event delivered twice is stored once; and each person's labels of an
answer are numbered, each number once, so two presses at once on two replicas are one label.
"""

from __future__ import annotations

import json
import os
import socket
import time
import uuid
from collections.abc import Callable, Iterator, Sequence
from contextlib import AbstractContextManager, contextmanager
from pathlib import Path
from typing import Any

import msgspec
import numpy as np
import sqlalchemy as sa
from sqlalchemy.engine import Connection, Engine

from linktriage.engine.format.packs import unpack, unpack_many
from linktriage.engine.format.poll_table import PollTable
from linktriage.engine.model.labels import Label
from linktriage.errors import StoreError
from linktriage.store.migrations import MIGRATIONS, pack_rows
from linktriage.store.opening import (
    engine_for,
    history_of,
    inspect_store,
    lease_holder_in,
    masked_url,
    sqlite_pragmas,
)
from linktriage.store.records import (
    Digest,
    Forgotten,
    LabelKept,
    NewAnswer,
    PollHistory,
    StoredDiagnosis,
    StoreState,
)
from linktriage.store.schema import (
    JOBS_LEASE,
    attach_message,
    audit_table,
    diagnoses_table,
    digests_table,
    job_runs_table,
    labels_table,
    leases_table,
    outbox_table,
    polls_table,
    schema_version_table,
    seen_requests_table,
)

__all__ = [
    "JOBS_LEASE",
    "Digest",
    "Forgotten",
    "LabelKept",
    "NewAnswer",
    "PollHistory",
    "Store",
    "StoreState",
    "StoredDiagnosis",
    "holder_name",
    "inspect_store",
    "masked_url",
]

#: Answers are kept as JSON text, encoded as ``diagnose --json`` encodes them (msgspec:
#: a digest keeps thousands at once).
_encode_json = msgspec.json.Encoder().encode


def _new_id(result: sa.CursorResult[Any]) -> int:
    key = result.inserted_primary_key
    if key is None:
        raise StoreError("the database returned no id for a new row")
    return int(key[0])


def holder_name() -> str:
    """This replica's name in the store's leases: host, process and a random tail."""
    return f"{socket.gethostname()}:{os.getpid()}:{uuid.uuid4().hex[:6]}"


#: The PostgreSQL advisory lock migrations hold (any fixed 64-bit number the application
#: owns: "lt" "migr" in ASCII).
MIGRATION_LOCK = 0x6C74_6D69_6772


class Store:
    """The store behind one SQLAlchemy URL, migrated to the current schema on opening."""

    def __init__(self, url: str) -> None:
        self.url = url
        self.engine: Engine = engine_for(url)
        try:
            if self.engine.dialect.name == "sqlite":
                sa.event.listen(self.engine, "connect", sqlite_pragmas)
                self._make_parent_dir(url)
            self.migrate()
        except sa.exc.SQLAlchemyError as exc:
            raise StoreError(f"Cannot open the store at {masked_url(url)}: {exc}") from exc
        except OSError as exc:  # its folder or the migrations' lock file cannot be made
            why = f"{exc.strerror}: {exc.filename}" if exc.filename else str(exc)
            raise StoreError(f"Cannot open the store at {masked_url(url)}: {why}") from exc

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
        packs = pack_rows(table)
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

    def last_said(self, within_s: float) -> PollTable:
        """Each device's stored polls from ``within_s`` before its newest one on, oldest
        first: what it last said of each port (which LLDP neighbor it hears, say), where
        its last poll of every port is that recent, however old that is. A question about
        one port stores a poll of that port alone, so the newest poll of a device need
        not hold them all."""
        newest = (
            sa.select(polls_table.c.device, sa.func.max(polls_table.c.time).label("newest"))
            .group_by(polls_table.c.device)
            .subquery()
        )
        query = (
            sa.select(polls_table.c.device, polls_table.c.body)
            .join(newest, polls_table.c.device == newest.c.device)
            .where(polls_table.c.time >= newest.c.newest - within_s)
            .order_by(polls_table.c.time)
        )
        with self.reading("read the last polls") as conn:
            rows = conn.execute(query).all()
        return unpack_many([row.body for row in rows], [row.device for row in rows])

    def prune_polls(self, before: float, *, batch: int = 1000) -> int:
        """Forget polls older than ``before``, ``batch`` packs per transaction so that
        readers and the bot's writes are never held up for long, until none is left however
        far behind (a first run after a long stop, more devices than ever); returns how
        many rows were forgotten."""
        return self._forget(polls_table, polls_table.c.time < before, batch, polls_table.c.ports)

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

    def _forget(
        self,
        table: sa.Table,
        where: sa.ColumnElement[bool],
        batch: int,
        rows_in: sa.Column[Any] | None = None,
    ) -> int:
        """Delete ``table``'s rows matching ``where``, ``batch`` per short transaction, until
        none is left; returns how many were forgotten (the sum of ``rows_in`` where a row
        stands for several, as a poll pack does)."""
        weight = rows_in if rows_in is not None else sa.literal(1)
        forgotten = 0
        while True:
            with self.writing(f"forget old {table.name}") as conn:
                old = conn.execute(sa.select(table.c.id, weight).where(where).limit(batch)).all()
                if not old:
                    return forgotten
                conn.execute(table.delete().where(table.c.id.in_([row[0] for row in old])))
            forgotten += sum(int(row[1]) for row in old)

    def compact(self) -> None:
        """Give back the space a SQLite write-ahead log grew to (its pages are in the
        database by then): the log is bounded by its peak otherwise. Nothing elsewhere."""
        if self.engine.dialect.name == "sqlite":
            with self.engine.connect() as conn:
                conn.exec_driver_sql("PRAGMA wal_checkpoint(TRUNCATE)")

    def poll_history(self) -> PollHistory:
        with self.reading("read the poll history") as conn:
            return history_of(conn)

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
            attach_message(conn, table, row_id, channel, message_ts)

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
        finding: str | None = None,
    ) -> LabelKept:
        """Keep a label as its author's ``turn``-th on the answer (one more than the labels
        of theirs the caller decided on). ``repeat``: the same event was stored already (a
        retry); ``raced``: another label of theirs took that turn since the caller read
        them (a second press, on another replica): read again and decide again."""
        label = labels_table.insert().values(
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
            finding=finding,
        )
        if self._written("keep the label", lambda conn: conn.execute(label)):
            return "stored"
        return "repeat" if self.has_event(event_key) else "raced"

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
                finding=r.finding,
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
            return lease_holder_in(conn, name, now=now)

    def claim_run(self, job: str, due: float, holder: str, *, now: float) -> bool:
        """Whether this run of ``job`` (the one due at ``due``) is ``holder``'s to do:
        False when any replica claimed it before. The primary key decides."""
        run = job_runs_table.insert().values(job=job, due=due, holder=holder, at=now)
        return self._written(f"claim the {job} run", lambda conn: conn.execute(run))

    # --- signed requests
    def first_sight(self, signature: str, expires_at: float, now: float) -> bool:
        """Whether a signed request is seen for the first time by any replica of this store
        (its signature recorded until ``expires_at``); False for a replay. The database's
        key decides, so two replicas that see it at once cannot both let it in."""
        seen = seen_requests_table

        def record(conn: Connection) -> None:
            conn.execute(seen.delete().where(seen.c.expires_at < now))
            conn.execute(seen.insert().values(signature=signature, expires_at=expires_at))

        return self._written("record a signed request", record)

    def writing(self, what: str) -> AbstractContextManager[Connection]:
        """A write transaction whose database errors become :class:`StoreError`."""
        return self._guarded(what, self.engine.begin)

    def _written(self, what: str, write: Callable[[Connection], object]) -> bool:
        """Whether ``write`` went through in one transaction: False when a key of the
        database refused it (a row another replica, or an earlier delivery, put there
        first); any other failure is a :class:`StoreError`."""
        try:
            with self.writing(what) as conn:
                write(conn)
        except StoreError as exc:
            if isinstance(exc.__cause__, sa.exc.IntegrityError):
                return False
            raise
        return True

    @contextmanager
    def _guarded(
        self, what: str, opening: Callable[[], AbstractContextManager[Connection]]
    ) -> Iterator[Connection]:
        try:
            with opening() as conn:
                yield conn
        except sa.exc.SQLAlchemyError as exc:
            raise StoreError(f"Could not {what}: {exc.__class__.__name__}: {exc}") from exc
