"""The outbox: every message for chat kept in the store until it is sent.

Whatever the bot says goes here first, in one transaction per reply (a message and what
follows it in its thread), and is sent from here in order per channel by whichever
replica holds that channel's lease (:mod:`linktriage.transports.slack_sender`). A message
Slack holds back waits as long as Slack says, across restarts; one still unsent after its
``give_up_at`` is dropped and its asker told. Sending a message that carries an answer or
a list of suspects and remembering where it landed are one transaction, so a reply in its
thread finds it from then on.
"""

from __future__ import annotations

import json
from collections.abc import Sequence
from dataclasses import dataclass, field
from typing import Any

import sqlalchemy as sa

from linktriage.store import Store
from linktriage.store.schema import (
    attach_message,
    diagnoses_table,
    digests_table,
    outbox_table,
)

#: The lease a replica holds while it sends to one channel (see :meth:`Outbox.channel_lease`).
CHANNEL_LEASE_PREFIX = "outbox:"


@dataclass(frozen=True, slots=True)
class Outgoing:
    """A message to send: a Web API ``method`` and its arguments (``body``) in a channel.
    ``in_first_thread``: it goes in the thread of the first message of its batch, once that
    one is sent; ``thread_of``: in the thread of that message kept earlier (its outbox id),
    likewise; ``diagnosis_id``/``digest_id``: that message carries this answer or list."""

    channel: str
    method: str
    body: dict[str, Any] = field(default_factory=dict)
    thread_ts: str | None = None
    in_first_thread: bool = False
    thread_of: int | None = None
    diagnosis_id: int | None = None
    digest_id: int | None = None
    asker: str | None = None


@dataclass(frozen=True, slots=True)
class Queued:
    """A message waiting in the outbox, as stored."""

    id: int
    at: float
    channel: str
    method: str
    body: dict[str, Any]
    thread_ts: str | None
    thread_of: int | None
    asker: str | None
    give_up_at: float
    not_before: float
    tries: int


class Outbox:
    """The outbox of one store."""

    def __init__(self, store: Store) -> None:
        self.store = store

    def put(self, messages: Sequence[Outgoing], *, now: float, give_up_s: float) -> list[int]:
        """Keep messages to send, in this order, in one transaction; their ids."""
        ids: list[int] = []
        with self.store.writing("keep messages to send") as conn:
            for message in messages:
                thread_of = ids[0] if message.in_first_thread and ids else message.thread_of
                result = conn.execute(
                    outbox_table.insert().values(
                        at=now,
                        channel=message.channel,
                        method=message.method,
                        body=json.dumps(message.body),
                        thread_ts=message.thread_ts,
                        thread_of=thread_of,
                        diagnosis_id=message.diagnosis_id,
                        digest_id=message.digest_id,
                        asker=message.asker,
                        give_up_at=now + give_up_s,
                        not_before=now,
                        tries=0,
                        state="waiting",
                    )
                )
                key = result.inserted_primary_key
                assert key is not None
                ids.append(int(key[0]))
        return ids

    def channels_waiting(self) -> list[str]:
        """Channels with messages still to send."""
        with self.store.reading("read the outbox") as conn:
            query = (
                sa.select(outbox_table.c.channel)
                .where(outbox_table.c.state == "waiting")
                .distinct()
            )
            return [str(channel) for channel in conn.execute(query).scalars()]

    def waiting_in(self, channel: str) -> bool:
        """Whether anything is still to be sent to ``channel`` (a reply in a thread that
        is not known yet may belong to a message being sent there right now)."""
        with self.store.reading("read the outbox") as conn:
            found = conn.execute(
                sa.select(outbox_table.c.id)
                .where((outbox_table.c.state == "waiting") & (outbox_table.c.channel == channel))
                .limit(1)
            ).first()
        return found is not None

    def head(self, channel: str) -> Queued | None:
        """The oldest message still to send to ``channel``: the only one that may go next."""
        with self.store.reading("read the outbox") as conn:
            row = conn.execute(
                sa.select(outbox_table)
                .where((outbox_table.c.state == "waiting") & (outbox_table.c.channel == channel))
                .order_by(outbox_table.c.id)
                .limit(1)
            ).first()
            if row is None:
                return None
            thread_ts = row.thread_ts
            if thread_ts is None and row.thread_of is not None:
                thread_ts = conn.execute(
                    sa.select(outbox_table.c.ts).where(outbox_table.c.id == row.thread_of)
                ).scalar()
        return Queued(
            id=row.id,
            at=row.at,
            channel=row.channel,
            method=row.method,
            body=json.loads(row.body),
            thread_ts=thread_ts,
            thread_of=row.thread_of,
            asker=row.asker,
            give_up_at=row.give_up_at,
            not_before=row.not_before,
            tries=row.tries,
        )

    def sent(self, message_id: int, ts: str | None) -> None:
        """A message sent, with Slack's id for it; the answer or list it carries learns
        where it is, in the same transaction."""
        with self.store.writing("note a message sent") as conn:
            row = conn.execute(
                sa.select(outbox_table.c.channel, outbox_table.c.diagnosis_id,
                          outbox_table.c.digest_id).where(outbox_table.c.id == message_id)
            ).one()  # fmt: skip
            conn.execute(
                outbox_table.update()
                .where(outbox_table.c.id == message_id)
                .values(state="sent", ts=ts, outcome=None)
            )
            if ts is None:
                return
            for table, key in ((diagnoses_table, row.diagnosis_id), (digests_table, row.digest_id)):
                if key is not None:
                    attach_message(conn, table, key, row.channel, ts)

    def later(self, message_id: int, not_before: float, why: str) -> None:
        """A message held back (a rate limit, an outage): tried again at ``not_before``."""
        with self.store.writing("hold a message back") as conn:
            conn.execute(
                outbox_table.update()
                .where(outbox_table.c.id == message_id)
                .values(not_before=not_before, tries=outbox_table.c.tries + 1, outcome=why)
            )

    def drop(self, message_id: int, why: str) -> list[int]:
        """A message that will not be sent, and the ones waiting to go in its thread;
        returns every id dropped."""
        dropped = [message_id]
        with self.store.writing("drop a message") as conn:
            dropped += conn.execute(
                sa.select(outbox_table.c.id).where(
                    (outbox_table.c.thread_of == message_id) & (outbox_table.c.state == "waiting")
                )
            ).scalars()
            conn.execute(
                outbox_table.update()
                .where(outbox_table.c.id.in_(dropped))
                .values(state="dropped", outcome=why)
            )
        return dropped
