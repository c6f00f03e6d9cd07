"""Replies as plain data: what the bot answers, before any transport draws it."""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any, Literal

from linktriage.diagnosis import DiagnosisRecord
from linktriage.render.words import coverage_words

Visibility = Literal["channel", "ephemeral"]


@dataclass(frozen=True, slots=True)
class DiagnosisReply:
    """One port diagnosed: the record as answered, and the id that labels refer to."""

    record: DiagnosisRecord
    diagnosis_id: int
    site: str
    serves: str
    visibility: Visibility = "channel"
    labels: tuple[tuple[str, str], ...] = ()  # (person, verdict): each one's latest label
    asked_by: str | None = None  # who asked (a Slack user id or a name)
    at: float | None = None  # when it was answered, seconds since the epoch
    changed: str | None = None  # a check again: what differs from the answer before

    @property
    def disputed(self) -> bool:
        """Whether the people who labelled this answer disagree (so it teaches nothing)."""
        return len({verdict for _, verdict in self.labels}) > 1


@dataclass(frozen=True, slots=True)
class SuspectItem:
    """One suspect link in a list: its rank, verdict and the one-line reason."""

    rank: int
    record: DiagnosisRecord
    diagnosis_id: int
    reason: str
    new: bool = False


@dataclass(frozen=True, slots=True)
class SuspectsReply:
    """Suspect links, ranked by severity, and what was not judged or not read; a digest also
    says what is new and what cleared."""

    title: str
    items: list[SuspectItem]
    ports_judged: int  # ports with a verdict on their health: healthy or a fault
    not_judged: dict[str, int]  # verdict id -> ports without one (too quiet, no data, down)
    failed: dict[str, str]  # device -> why it could not be read
    at: float
    since: float | None = None  # the digest before this one, if any
    cleared: list[str] = field(default_factory=list)  # "device port" no longer suspect
    digest_id: int | None = None
    visibility: Visibility = "channel"
    kind: str = "suspects"  # or "digest": the scheduled one, kept once it is posted

    @property
    def coverage(self) -> str:
        """How much was read and judged, in words: never an all-clear for what was not."""
        return coverage_words(len(self.items), self.ports_judged, self.not_judged, self.failed)


@dataclass(frozen=True, slots=True)
class HelpReply:
    """How to talk to the bot."""

    command: str
    visibility: Visibility = "ephemeral"


@dataclass(frozen=True, slots=True)
class ModelReply:
    """The model's card."""

    card: dict[str, Any]
    visibility: Visibility = "ephemeral"


@dataclass(frozen=True, slots=True)
class ErrorReply:
    """Something could not be done; never a stack trace."""

    message: str
    hint: str | None = None
    visibility: Visibility = "ephemeral"


@dataclass(frozen=True, slots=True)
class LabelReply:
    """A label stored: who found what on which port, and what the model had said."""

    user: str
    device: str
    port: str
    verdict: str
    model_verdict: str
    note: str
    visibility: Visibility = "channel"
    diagnosis_id: int = 0
    replaced: str | None = None  # this person's earlier verdict on the answer, if any
    disputed_with: tuple[str, ...] = ()  # others' differing verdicts on the answer


@dataclass(frozen=True, slots=True)
class LabelRefused:
    """A reply read as a label that was not stored, and why: told to its author only."""

    message: str
    visibility: Visibility = "ephemeral"


Reply = (
    DiagnosisReply | SuspectsReply | HelpReply | ModelReply | ErrorReply | LabelReply | LabelRefused
)
