"""Replies as plain data: what the bot answers, before any transport draws it."""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any, Literal, TypedDict

from linktriage.engine.format.answers import DiagnosisRecord
from linktriage.engine.model.artefact import TreeArtefact
from linktriage.render.words import coverage_words, history_summary

Visibility = Literal["channel", "ephemeral"]


@dataclass(frozen=True, slots=True)
class Labelled:
    """One person's latest label on an answer: what it teaches ("" nothing) and its words."""

    person: str
    verdict: str
    said: str  # the finding's words, or the verdict they named


@dataclass(frozen=True, slots=True)
class DiagnosisReply:
    """One port diagnosed: the record as answered, and the id that labels refer to; with
    the windows its picture draws, where the bot gathered them."""

    record: DiagnosisRecord
    diagnosis_id: int
    site: str
    serves: str
    visibility: Visibility = "channel"
    labels: tuple[Labelled, ...] = ()  # each person's latest label
    asked_by: str | None = None  # who asked (a Slack user id or a name)
    at: float | None = None  # when it was answered, seconds since the epoch
    changed: str | None = None  # a check again: what differs from the answer before
    windows: AnswerWindows | None = None  # what its picture draws; None: no picture

    @property
    def disputed(self) -> bool:
        """Whether the people who labelled this answer disagree (so it teaches nothing)."""
        return len({label.verdict for label in self.labels if label.verdict}) > 1


class HistoryPoint(TypedDict):
    """One window of a port's history: its verdict and what it measured, each way.

    Ratios and utilisation are fractions; None where the counters did not say."""

    start: float
    end: float
    verdict: str
    confidence: float | None  # None where a guard answered
    polls: int
    error_ratio: float | None  # errored frames / received frames
    bit_error_ratio: float | None  # the estimate behind the error ratio, for the PHY
    objective: float | None  # the PHY's bit error ratio objective (IEEE 802.3)
    rx_errors: float | None  # errored frames received (FCS and alignment errors)
    rx_frames: float | None  # frames received, errored and discarded ones included
    #: The errored frames a link just meeting ``objective`` would count on average over the
    #: frames this window received (see linktriage.bot.history.errors_at_objective).
    errors_at_objective: float | None
    link_changes: float | None  # times the link went down or up
    in_discards: float | None
    out_discards: float | None
    rx_util: float | None
    tx_util: float | None
    rx_dbm: float | None  # received light
    rx_low_dbm: float | None  # the least light it should get: low warning, alarm or sensitivity
    fec_bits: float | None  # bits FEC corrected
    fec_high_bits: float | None  # the bits it would correct at its code's high pre-FEC level


class VerdictRun(TypedDict):
    """Consecutive windows with one verdict: from the first one's start to the last one's end."""

    verdict: str
    start: float
    end: float
    windows: int


@dataclass(frozen=True, slots=True)
class AnswerWindows:
    """What an answer's picture draws: the port's windows, oldest first, each diagnosed
    alone, and the runs of one verdict they make. ``stored``: the windows of its stored
    polls over the last ``span_s``; else the polls the answer rests on, cut at every poll."""

    points: list[HistoryPoint]
    runs: list[VerdictRun]
    stored: bool
    span_s: float


class HistoryRecord(TypedDict):
    """A port's history as ``linktriage history --json`` writes it."""

    device: str
    port: str
    site: str
    serves: str
    since: float
    summary: str
    model_version: str
    windows: list[HistoryPoint]
    changes: list[VerdictRun]


@dataclass(frozen=True, slots=True)
class HistoryReply:
    """One port over time: every window of its stored polls diagnosed, and the runs of one
    verdict they make, latest last."""

    device: str
    port: str
    site: str
    serves: str
    since: float  # the history reaches back at most this far: now less ``span_s``
    span_s: float  # how far back was asked for
    points: list[HistoryPoint]
    runs: list[VerdictRun]
    model_version: str
    visibility: Visibility = "channel"

    @property
    def summary(self) -> str:
        """When the verdict last changed: "cable_fault since 02:40 UTC, healthy before"."""
        return history_summary(self.runs)

    def as_record(self) -> HistoryRecord:
        return {
            "device": self.device,
            "port": self.port,
            "site": self.site,
            "serves": self.serves,
            "since": self.since,
            "summary": self.summary,
            "model_version": self.model_version,
            "windows": self.points,
            "changes": self.runs,
        }


@dataclass(frozen=True, slots=True)
class TreeReply:
    """One port's diagnosis with the tree it went through, to draw with its path marked.

    ``node`` is the tree node whose classes decided, -1 where a guard answered and the tree
    was not asked."""

    record: DiagnosisRecord
    node: int
    tree: TreeArtefact
    visibility: Visibility = "channel"


class SuspectRecord(TypedDict):
    """One suspect link of a list: its rank, whether it is new since the last digest, the
    one-line reason, the stored answer's id, and the diagnosis as ``diagnose --json`` writes
    it."""

    rank: int
    new: bool
    reason: str
    diagnosis_id: int
    diagnosis: DiagnosisRecord


class SuspectsRecord(TypedDict):
    """A list of suspects as ``suspects --json`` writes it and the watch sends its digests:
    times in seconds since the epoch, ``since`` and ``cleared`` set in a digest only."""

    kind: str
    title: str
    at: float
    coverage: str
    ports_judged: int
    not_judged: dict[str, int]
    failed: dict[str, str]
    suspects: list[SuspectRecord]
    since: float | None
    cleared: list[str]


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
    not_judged: dict[str, int]  # why, as a list says it -> ports without a verdict on health
    failed: dict[str, str]  # device -> why it could not be read
    at: float
    since: float | None = None  # the digest before this one, if any
    cleared: list[str] = field(default_factory=list)  # "device port" no longer suspect
    digest_id: int | None = None
    visibility: Visibility = "channel"
    kind: str = "suspects"  # or "digest": the scheduled one, kept once it is posted
    down: list[str] = field(default_factory=list)  # the ports down, each named with since

    @property
    def coverage(self) -> str:
        """How much was read and judged, in words: never an all-clear for what was not."""
        return coverage_words(
            len(self.items), self.ports_judged, self.not_judged, self.failed, down=self.down
        )

    def as_record(self) -> SuspectsRecord:
        return {
            "kind": self.kind,
            "title": self.title,
            "at": self.at,
            "coverage": self.coverage,
            "ports_judged": self.ports_judged,
            "not_judged": self.not_judged,
            "failed": self.failed,
            "suspects": [
                {
                    "rank": item.rank,
                    "new": item.new,
                    "reason": item.reason,
                    "diagnosis_id": item.diagnosis_id,
                    "diagnosis": item.record,
                }
                for item in self.items
            ],
            "since": self.since,
            "cleared": self.cleared,
        }


@dataclass(frozen=True, slots=True)
class HelpReply:
    """How to talk to the bot: every command as it is typed and what it does, spelt as
    commands start where help was asked for (``command``; "" at the console)."""

    command: str
    forms: tuple[tuple[str, str], ...]
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
    """A label stored: who found what on which port, what it teaches ("" nothing), and what
    the model had said."""

    user: str
    device: str
    port: str
    verdict: str
    model_verdict: str
    note: str
    visibility: Visibility = "channel"
    diagnosis_id: int = 0
    replaced: str | None = None  # this person's earlier label on the answer, if any
    disputed_with: tuple[str, ...] = ()  # others' differing verdicts on the answer
    finding: str | None = None  # what was found, in words; None: a verdict was named


@dataclass(frozen=True, slots=True)
class LabelRefused:
    """A reply read as a label that was not stored, and why: told to its author only."""

    message: str
    visibility: Visibility = "ephemeral"


Reply = (
    DiagnosisReply
    | HistoryReply
    | TreeReply
    | SuspectsReply
    | HelpReply
    | ModelReply
    | ErrorReply
    | LabelReply
    | LabelRefused
)
