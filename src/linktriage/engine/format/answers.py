"""The answer's format: one record per port, as ``diagnose --json`` writes it a line each
(docs/snapshot-format.md, "diagnose --json output"), and as the drawers and the store read it."""

from __future__ import annotations

from typing import NewType, NotRequired, TypedDict

#: A verdict id of the snapshot format ("cable_fault", "link_down", ...): every diagnosis ends
#: in one (docs/snapshot-format.md, "Verdicts"); each has a module of its own under
#: ``engine/verdicts/``.
Verdict = NewType("Verdict", str)


class EvidenceRecord(TypedDict):
    """One reading a verdict rests on, as ``diagnose --json`` writes it."""

    feature: str
    value: float | str | None
    unit: str
    reference: float | None
    source: str
    said: str


class QuestionRecord(TypedDict):
    """One question as it appears in ``diagnose --json`` output."""

    question: str
    answer: bool
    feature: str
    value: float | None
    threshold: float | None
    said: str
    range: NotRequired[list[float]]  # a merged question: the value lies in (low, high]


class BitErrorRecord(TypedDict):
    """The bit error ratio implied by the receive errors, against the PHY's objective.

    ``exceeds`` is true only when the errors are evidence of a fault: over the objective by
    an exact one-sided test at 99%, ten times it or more, from enough errored frames to be
    more than one burst. ``lower`` is the test's one-sided 99% bound, ``upper`` the one-sided
    95% bound.
    """

    phy: str
    estimate: float
    lower: float
    upper: float
    objective: float
    errors: float
    exceeds: bool


class RuledOutRecord(TypedDict):
    """The tree's first choice, when the physics ruled it out, and the rule that did."""

    verdict: str
    needs: str
    source: str


class NearestOther(TypedDict):
    """The smallest change in one measured value that would lead the tree to another
    verdict, with the port's other readings as they are (:mod:`linktriage.engine.model.nearest`):
    past ``threshold``, ``direction`` "above" or "below" it, the answer is ``verdict``."""

    verdict: str
    feature: str
    value: float
    threshold: float
    direction: str
    said: str


class FarEndRecord(TypedDict):
    """The port at the other end of the link, as diagnosed from the same input."""

    device: str
    port: str
    verdict: str
    evidence: list[EvidenceRecord]


class MemberRecord(TypedDict):
    """One member of a link aggregate, as diagnosed from the same input."""

    port: str
    verdict: str


class AggregateRecord(TypedDict):
    """The link aggregate (IEEE 802.1AX) a port is a member of, where other members are in
    the same input: its name, every member's verdict, and what the members show together (a
    member down, silent or erroring while its siblings carry the load). Since format 1.2."""

    name: str
    members: list[MemberRecord]
    said: str


class LinkRecord(TypedDict):
    """The link judged from both ends (:mod:`linktriage.engine.links`): its verdict, why, and the
    checks, each naming the end it applies to."""

    verdict: str
    title: str
    said: list[str]
    checks: list[str]
    agree: bool  # both ends gave this verdict on their own


class OwnViewRecord(TypedDict):
    """The port's answer from its own counters alone, kept where the link's view (from
    both ends) decided the verdict: what the tree and the guards said of this end."""

    verdict: str
    title: str
    confidence: float | None  # None: a guard answered, not the tree
    evidence: list[EvidenceRecord]
    nearest_other: NearestOther | None


class DiagnosisRecord(TypedDict):
    """One port's diagnosis: one line of ``diagnose --json``."""

    device: str
    port: str
    verdict: str
    title: str
    confidence: float | None  # None: a guard answered (down, no data, too quiet), not the tree
    questions: list[QuestionRecord]
    evidence: list[EvidenceRecord]
    ruled_out: RuledOutRecord | None
    nearest_other: NearestOther | None
    next_checks: list[str]
    cautions: list[str]
    model_version: str
    window_s: float
    polls: int
    bit_errors: BitErrorRecord | None
    note: str | None
    far_end: NotRequired[FarEndRecord]  # only where the far end is in the same input
    link: NotRequired[LinkRecord]
    own_view: NotRequired[OwnViewRecord]  # only where the link's verdict is not this end's own
    aggregate: NotRequired[AggregateRecord]  # only where other members are in the same input
