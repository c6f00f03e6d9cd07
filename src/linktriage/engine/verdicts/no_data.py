"""no_data: fewer than two usable polls of the port (missing, reset or unparseable), so no
window can be measured."""

from __future__ import annotations

import numpy as np

from linktriage.engine.format.answers import QuestionRecord, Verdict
from linktriage.engine.measure.window import WindowStatus
from linktriage.engine.simulate.ports import COPPER_1G
from linktriage.engine.verdict_kit.declaration import (
    BoolArray,
    DemoPlant,
    GuardInputs,
    GuardVerdict,
    check,
    question,
)
from linktriage.engine.verdict_kit.readings import Items, PortFacts, PortGroup, item

NO_DATA = Verdict("no_data")


def _evidence(c: PortGroup) -> list[Items]:
    out: list[Items] = []
    for i in c.rows:
        said = c.facts.note[i] or "fewer than two usable polls"
        polls = float(c.facts.polls[i])
        out.append([item("polls", polls, "polls", 2.0, "common practice", said)])
    return out


def _guard(g: GuardInputs) -> BoolArray:
    """No window: fewer than two usable polls."""
    return np.asarray(g.status == WindowStatus.NO_DATA, np.bool_)


def _question(facts: PortFacts, i: int) -> QuestionRecord:
    said = f"no: {facts.note[i]}"
    text = "Two or more usable polls in the window?"
    return question(text, False, "polls", float(facts.polls[i]), 2.0, said)


KIND = GuardVerdict(
    verdict=NO_DATA,
    listed=19,
    title="no usable data",
    meaning="Fewer than two usable polls of this port.",
    checks=(
        check("A window needs two polls: poll again in a few minutes."),
        check(
            "If the counters were reset (a reboot, counters cleared), the window restarts "
            "at the next poll."
        ),
        check("Check that the poller reads this port's counters at all."),
    ),
    cautions=(),
    evidence=_evidence,
    demo=DemoPlant(
        "annex",
        "lark-annex-sw1",
        "port11",
        "self-service terminal; a script clears its counters at every poll",
        {**COPPER_1G, "cleared": True},
    ),
    precedence=2,
    guard=_guard,
    question=_question,
    not_judged="without two usable polls",
    measured=False,
)
