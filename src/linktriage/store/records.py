"""What the store hands out and takes in: plain records, no database in them."""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any, Literal


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
    origin: str  # chat, console, digest, suspects, sweep (the command line's suspects)
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


#: How keeping a label went (:meth:`Store.add_label`).
LabelKept = Literal["stored", "repeat", "raced"]


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
