"""Reading what an engineer found from a thread reply: "crushed patch cord behind the desk".

A reply says what was found in the trade's words ("crushed patch cord", "dirty SFP",
"duplex forced on the printer"), read as one of the findings
(:data:`linktriage.engine.model.findings.FINDINGS`); it may name a verdict instead, by its
id ("cable_fault") or its words ("cable fault"), or by a phrase only a verdict has ("FEC
codewords"). The whole reply is kept as the note. "Confirmed" alone says nothing found and
is asked what was. In a digest's thread a reply first says which link it is about: its
number ("3: duplex ...") or its name ("lark-east-idf2 port14 cable ..."). A reply that
names nothing is talk, not a label; one whose phrases point two ways is asked to pick.
"""

from __future__ import annotations

import re
from dataclasses import dataclass, field
from typing import TypeVar

from linktriage.engine.format.answers import Verdict
from linktriage.engine.model.findings import FINDINGS, Finding
from linktriage.engine.verdicts import TREE, TREE_VERDICTS, VERDICTS

# Phrases of the trade, each with a weight, as each verdict declares them: a specific one
# ("sfp") outweighs a general one ("connector") when a reply has both.
PHRASES: dict[Verdict, tuple[tuple[str, int], ...]] = {k.verdict: k.phrases for k in TREE}
_CONFIRM = re.compile(r"\b(confirmed|confirm|correct|agreed|right call|spot on)\b|\+1")
# Any negation in a reply keeps it from confirming: "can't confirm", "cannot confirm", "not
# confirmed", "don't agree", with or without the apostrophe chat often drops.
_NEGATION = re.compile(
    r"\b(not|no|never|nope|wrong|cannot|unable|incorrect|disagree"
    r"|(is|was|are|were|ca|do|does|did|could|would|wo|have|has|had|should)n'?t)\b"
)
# A verdict is negated by a negation just before it ("not a cable fault", "wasn't duplex",
# "no congestion") or an answer of no just after it ("cable fault? no.").
_NEGATED_BEFORE = re.compile(
    r"\b(not|no|never|nope|isn'?t|wasn'?t|aren'?t|weren'?t|ain'?t|hardly)"
    r"(\s+(a|an|the|really|actually|just|it|it'?s|its|caused\s+by|from|due\s+to|about))*"
    r"\s*[,:]?\s*$"
)
_NEGATED_AFTER = re.compile(r"^\s*[?!.,:\-]*\s*(no|nope|not\s+it|wrong)\b")
_ITEM = re.compile(r"^\s*#?(\d{1,3})\s*[:.)\-]\s*")
# A phrase counts where a word starts with it: "pair" is in "bad pair", not in "repaired".
_PATTERNS = {
    verdict: tuple((re.compile(r"\b" + re.escape(phrase)), weight) for phrase, weight in phrases)
    for verdict, phrases in PHRASES.items()
}
_FOUND_PATTERNS = {
    f.id: tuple((re.compile(r"\b" + re.escape(phrase)), weight) for phrase, weight in f.phrases)
    for f in FINDINGS
}
_FINDING_ORDER = [f.id for f in FINDINGS]
K = TypeVar("K", bound=str)


@dataclass(frozen=True, slots=True)
class LabelIntent:
    """A label read from a reply: what was found and the verdict it names (either may be
    None, not both), and the note."""

    verdict: Verdict | None
    note: str
    item: int | None = None  # which link of a digest, by its number
    device: str | None = None
    port: str | None = None
    finding: str | None = None  # a finding's id
    ruled_out: frozenset[Verdict] = frozenset()  # verdicts the reply says it was not


@dataclass(frozen=True, slots=True)
class Unclear:
    """A reply that reads as a label but points at more than one verdict or finding, only
    says what it was not ("not a cable fault"), or only agrees ("confirmed"): asked back,
    never stored as a verdict it negates."""

    candidates: list[Verdict]
    negated: list[Verdict] = field(default_factory=list)
    findings: list[str] = field(default_factory=list)  # findings' ids it may mean
    item: int | None = None


def _explicit(text: str) -> list[tuple[Verdict, int, int]]:
    """Verdict ids or their words ("cable fault", "cable-fault"), with where they stand."""
    found = []
    for verdict in TREE_VERDICTS:
        words = verdict.replace("_", r"[ _\-]")
        for match in re.finditer(rf"\b{words}\b", text, re.IGNORECASE):
            found.append((verdict, match.start(), match.end()))
    return found


def _negated(text: str, start: int, end: int) -> bool:
    """Whether the mention at ``text[start:end]`` is said not to be so."""
    return bool(
        _NEGATED_BEFORE.search(text[:start].lower()) or _NEGATED_AFTER.match(text[end:].lower())
    )


def _phrases(
    lowered: str, patterns_of: dict[K, tuple[tuple[re.Pattern[str], int], ...]]
) -> tuple[dict[K, int], set[K]]:
    """Each verdict's (or finding's) weight from the phrases a reply uses, and those it
    negates."""
    scores: dict[K, int] = {}
    negated: set[K] = set()
    for key, patterns in patterns_of.items():
        for pattern, weight in patterns:
            for match in pattern.finditer(lowered):
                if _negated(lowered, match.start(), match.end()):
                    negated.add(key)
                else:
                    scores[key] = scores.get(key, 0) + weight
                break  # a phrase counts once
    return scores, negated


def _two_ways(scores: dict[K, int], order: list[K]) -> tuple[K | None, list[K]]:
    """The strongest reading, or none and the two about as strong ("cable or optic?")."""
    ranked = sorted(scores.items(), key=lambda kv: (-kv[1], order.index(kv[0])))
    if not ranked:
        return None, []
    (first, best), runner_up = ranked[0], ranked[1][1] if len(ranked) > 1 else 0
    if runner_up >= 2 and runner_up >= best - 1:
        return None, sorted([first, ranked[1][0]], key=order.index)
    return first, []


def _found(lowered: str, ruled_out: set[Verdict]) -> tuple[Finding | None, list[str]]:
    """The finding a reply describes, or the two it may mean. A finding that bears out only
    verdicts the reply rules out ("not congestion, the backup job is fine") is not it."""
    scores, negated = _phrases(lowered, _FOUND_PATTERNS)
    for key in negated:
        scores.pop(key, None)
    for f in FINDINGS:
        if f.bears_out and set(f.bears_out) <= ruled_out:
            scores.pop(f.id, None)
    first, both = _two_ways(scores, _FINDING_ORDER)
    return (None if first is None else FINDINGS[_FINDING_ORDER.index(first)]), both


def parse_label(
    text: str, *, names: list[tuple[str, str]] | None = None
) -> LabelIntent | Unclear | None:
    """The label in a reply, an :class:`Unclear` one, or None for a reply that is not one.

    ``names`` lists the (device, port) pairs a reply may name first (a digest's links).
    A verdict the reply negates ("not a cable fault", "cable fault? no") is never its
    label: the reply's label is what it says instead, or it is asked back.
    """
    rest = re.sub(r"<[@#!][^>]*>", " ", text).strip()  # mentions are not part of it
    rest = rest.replace("\u2019", "'")  # a typographic apostrophe, as phones write it
    item = None
    device = port = None
    numbered = _ITEM.match(rest)
    if numbered:
        item = int(numbered[1])
        rest = rest[numbered.end() :]
    elif names:
        for d, p in names:
            match = re.match(rf"\s*{re.escape(d)}\s+{re.escape(p)}\b[\s:,\-]*", rest, re.IGNORECASE)
            if match:
                device, port, rest = d, p, rest[match.end() :]
                break
    named = _explicit(rest)
    explicit = [(v, s, e) for v, s, e in named if not _negated(rest, s, e)]
    negated = {v for v, s, e in named if _negated(rest, s, e)}
    # Findings are read from what is left once verdicts named are taken out: the "cable"
    # of "cable fault? no" is not a cable found.
    unnamed = rest
    for _, start, end in named:
        unnamed = unnamed[:start] + " " * (end - start) + unnamed[end:]
    finding, findings = _found(unnamed.lower(), negated)
    found = None if finding is None else finding.id
    if explicit:
        verdicts = {v for v, _, _ in explicit}
        if len(verdicts) > 1:
            return Unclear(sorted(verdicts, key=VERDICTS.index), item=item)
        verdict, start, end = min(explicit, key=lambda e: e[1])
        note = _note(rest[:start] + " " + rest[end:])
        return LabelIntent(verdict, note, item, device, port, found)
    if finding is not None:
        return LabelIntent(None, _note(rest), item, device, port, found, frozenset(negated))
    if findings:
        return Unclear([], findings=findings, item=item)
    lowered = rest.lower()
    scores, negated_phrases = _phrases(lowered, _PATTERNS)
    negated |= negated_phrases
    for verdict in negated:
        scores.pop(verdict, None)
    first, both = _two_ways(scores, list(VERDICTS))
    if first is not None:
        return LabelIntent(first, _note(rest), item, device, port)
    if both:
        return Unclear(both, item=item)
    if negated:
        order = VERDICTS.index
        others = [v for v in TREE_VERDICTS if v not in negated]
        return Unclear(sorted(others, key=order), sorted(negated, key=order), item=item)
    if _CONFIRM.search(lowered) and not _NEGATION.search(lowered):
        return Unclear([], item=item)  # agreeing says nothing found: asked what was
    return None


def _note(text: str) -> str:
    """The free text of a reply, tidied where a verdict was lifted out of it."""
    text = re.sub(r"\s+", " ", text)
    text = re.sub(r"\s+([,.;:])", r"\1", text)
    return text.strip(" ,.;:-")
