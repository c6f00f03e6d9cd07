"""Reading what an engineer found from a thread reply: "cable_fault, crushed patch cord".

A reply names a verdict by its id ("cable_fault"), by its words ("cable fault"), or by a
phrase of the trade ("crushed patch cord", "dirty SFP", "forced 100/full on the printer");
"confirmed" or "correct" agrees with the bot. Whatever follows is kept as the note. In a
digest's thread a reply first says which link it is about: its number ("3: duplex ...")
or its name ("lark-east-idf2 port14 cable ..."). A reply that names no verdict is talk,
not a label; one whose phrases point two ways is asked to pick.
"""

from __future__ import annotations

import re
from dataclasses import dataclass, field

from linktriage.engine.format.answers import Verdict
from linktriage.engine.verdicts import TREE, TREE_VERDICTS, VERDICTS
from linktriage.engine.verdicts.healthy import HEALTHY

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


@dataclass(frozen=True, slots=True)
class LabelIntent:
    """A label read from a reply: the verdict (None: agree with the bot) and the note."""

    verdict: Verdict | None
    note: str
    item: int | None = None  # which link of a digest, by its number
    device: str | None = None
    port: str | None = None


@dataclass(frozen=True, slots=True)
class Unclear:
    """A reply that reads as a label but points at more than one verdict, or only says what
    it was not ("not a cable fault"): asked back, never stored as a verdict it negates."""

    candidates: list[Verdict]
    negated: list[Verdict] = field(default_factory=list)


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


def _phrases(lowered: str) -> tuple[dict[Verdict, int], set[Verdict]]:
    """Each verdict's weight from the phrases a reply uses, and the verdicts it negates."""
    scores: dict[Verdict, int] = {}
    negated: set[Verdict] = set()
    for verdict, patterns in _PATTERNS.items():
        for pattern, weight in patterns:
            for match in pattern.finditer(lowered):
                if _negated(lowered, match.start(), match.end()):
                    negated.add(verdict)
                else:
                    scores[verdict] = scores.get(verdict, 0) + weight
                break  # a phrase counts once
    return scores, negated


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
    explicit = [(v, s, e) for v, s, e in _explicit(rest) if not _negated(rest, s, e)]
    negated = {v for v, s, e in _explicit(rest) if _negated(rest, s, e)}
    if explicit:
        verdicts = {v for v, _, _ in explicit}
        if len(verdicts) > 1:
            return Unclear(sorted(verdicts, key=VERDICTS.index))
        verdict, start, end = min(explicit, key=lambda e: e[1])
        return LabelIntent(verdict, _note(rest[:start] + " " + rest[end:]), item, device, port)
    lowered = rest.lower()
    scores, negated_phrases = _phrases(lowered)
    negated |= negated_phrases
    for verdict in negated:
        scores.pop(verdict, None)
    ranked = sorted(scores.items(), key=lambda kv: -kv[1]) + [(HEALTHY, 0)] * 2
    (first, best), (second, runner_up) = ranked[0], ranked[1]
    if best > 0:
        # Two readings about as strong ("cable or optic?"): ask rather than guess.
        if runner_up >= 2 and runner_up >= best - 1:
            return Unclear(sorted([first, second], key=VERDICTS.index))
        return LabelIntent(first, _note(rest), item, device, port)
    if negated:
        order = VERDICTS.index
        others = [v for v in TREE_VERDICTS if v not in negated]
        return Unclear(sorted(others, key=order), sorted(negated, key=order))
    if _CONFIRM.search(lowered) and not _NEGATION.search(lowered):
        return LabelIntent(None, _note(rest), item, device, port)
    return None


def _note(text: str) -> str:
    """The free text of a reply, tidied where a verdict was lifted out of it."""
    text = re.sub(r"\s+", " ", text)
    text = re.sub(r"\s+([,.;:])", r"\1", text)
    return text.strip(" ,.;:-")
