"""The store's tables, as the latest migration leaves them (:mod:`.migrations` makes them).

Polls are kept packed (:mod:`linktriage.engine.format.packs`), one row per device per poll,
each pack naming its columns; answers, labels, lists of suspects and the audit log as rows;
and what replicas share: the signed requests seen, leases, job runs and the outbox.
"""

from __future__ import annotations

import sqlalchemy as sa
from sqlalchemy.engine import Connection

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
    sa.Column("verdict", sa.Text, nullable=False),  # the verdict it teaches, "" if none
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
    # What the engineer found (since schema version 12); NULL on labels that named a verdict.
    sa.Column("finding", sa.Text),
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


def attach_message(
    conn: Connection, table: sa.Table, row_id: int, channel: str, message_ts: str
) -> None:
    """Note which chat message carries an answer or a list (``table``: diagnoses or
    digests), in the caller's transaction, so replies in its thread find it."""
    conn.execute(
        table.update().where(table.c.id == row_id).values(channel=channel, message_ts=message_ts)
    )
